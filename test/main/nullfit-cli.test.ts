// `nullbench fit FILE.csv`: the null fit from the command line, on temporary CSV files.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fitCommand } from '../../main/shells/cli/fit';
import { fitNull1D } from '../../app/nullfit';
import { readingsCsv } from '../../main/store/csv';
import { Store } from '../../main/store/store';
import { demoDb } from '../helpers/demo';
import { polar, reading2D, rng, sample1D } from '../app/nullfit-helpers';

let dir = '';
const file = (name: string, text: string): string => {
  const p = join(dir, name);
  writeFileSync(p, text);
  return p;
};

async function run(argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await fitCommand.run(argv, { out: (s) => (out += s), err: (s) => (err += s) });
  return { code, out, err };
}

const range = (from: number, to: number, n: number): number[] =>
  Array.from({ length: n }, (_, i) => from + ((to - from) * i) / (n - 1));
const ONE = { a: 0.02, x0: 3.412, cDbm: -74, floorDbm: -95 };
const readings1 = sample1D(ONE, [...range(2.8, 4.0, 13), 3.4, 3.42], 0.2, 1);
const csv1 =
  'position,dbm\n' + readings1.map((r) => `${r.position.toFixed(4)},${r.dbm.toFixed(2)}`).join('\n') + '\n';

const TWO = { a0: 4.62, b0: 131, gA: polar(0.012, 0), gB: polar(0.0004, 60), cDbm: -80, floorDbm: -100 };
const g = rng(2);
const settings: [number, number][] = [
  ...Array.from({ length: 24 }, (): [number, number] => [3.6 + 2 * g.uniform(), 70 + 120 * g.uniform()]),
  ...[-1, 0, 1].flatMap((i) => [-1, 0, 1].map((j): [number, number] => [4.62 + i * 0.004, 131 + j * 0.15])),
];
const csv2 =
  '# two trimmers: balance R in turns, balance C in degrees\r\npos_a,pos_b,dbm\r\n' +
  settings
    .map(([a, b]) => `${a.toFixed(4)},${b.toFixed(3)},${(reading2D(TWO, a, b) + 0.2 * g.gauss()).toFixed(2)}`)
    .join('\r\n');

describe('nullbench fit', () => {
  before(() => {
    dir = mkdtempSync(join(tmpdir(), 'nullbench-fit-'));
  });
  after(() => rmSync(dir, { recursive: true, force: true }));

  it('prints best_position, best_dbm, ci_low, ci_high for a one-trimmer file (--json)', async () => {
    const r = await run([file('one.csv', csv1), '--json', '--floor-dbm', '-95']);
    assert.equal(r.code, 0, r.err);
    const j = JSON.parse(r.out);
    // The same numbers as the library call on the same (rounded) readings.
    const f = fitNull1D(
      csv1
        .trim()
        .split('\n')
        .slice(1)
        .map((l) => l.split(',').map(Number))
        .map(([position, dbm]) => ({ position, dbm })),
      { floorDbm: -95 },
    );
    assert.equal(j.kind, '1d');
    assert.ok(Math.abs(j.best_position - f.bestPosition) < 1e-6, `best_position ${j.best_position}`);
    assert.ok(j.ci_low < ONE.x0 && ONE.x0 < j.ci_high, `[${j.ci_low}, ${j.ci_high}]`);
    assert.ok(Math.abs(j.best_dbm - -74) < 1.5, `best_dbm ${j.best_dbm}`);
    for (const k of ['a', 'floor_dbm', 'n', 'residual_db', 'best_reading_dbm', 'measurement_floor_dbm'])
      assert.ok(k in j, `missing ${k}`);
    assert.equal(j.n, readings1.length);
    assert.equal(j.measurement_floor_dbm, -95);
  });

  it('prints best_a, best_b, best_dbm for a two-trimmer file, CRLF and comments allowed', async () => {
    const r = await run([file('two.csv', csv2), '--json']);
    assert.equal(r.code, 0, r.err);
    const j = JSON.parse(r.out);
    assert.equal(j.kind, '2d');
    assert.ok(Math.abs(j.best_a - 4.62) < 0.01 && Math.abs(j.best_b - 131) < 1, `${j.best_a}, ${j.best_b}`);
    assert.ok(Math.abs(j.best_dbm - -80) < 1.5, `best_dbm ${j.best_dbm}`);
    assert.equal(j.collinear, false);
    assert.ok(Math.abs(j.angle_deg - 60) < 5, `angle ${j.angle_deg}`);
    assert.ok(j.ci_a_low < 4.62 && 4.62 < j.ci_a_high);
  });

  it('prints a readable summary without --json', async () => {
    const r = await run([file('one.csv', csv1)]);
    assert.equal(r.code, 0, r.err);
    assert.match(r.out, /^one trimmer, 15 readings\n/);
    assert.match(r.out, /best position 3\.4\d+ +\(95 % interval: 3\.\d+ to 3\.\d+\)/);
    assert.match(r.out, /depth +−7\d\.\d dBm of carrier the trimmer cannot cancel/);
    const r2 = await run([file('two.csv', csv2), '--floor-dbm=-100']);
    assert.match(r2.out, /^two trimmers, 33 readings, \d+ at or near the measurement floor −100\.0 dBm\n/);
    assert.match(r2.out, /directions +the trimmers' directions are \d+° apart/);
  });

  it('takes a censored column and counts those readings as bounds', async () => {
    const rows = readings1.map(
      (r) => `${r.position.toFixed(4)},${Math.max(r.dbm, -70).toFixed(2)},${r.dbm < -70 ? 1 : 0}`,
    );
    const r = await run([file('cens.csv', 'position,dbm,censored\n' + rows.join('\n')), '--json']);
    assert.equal(r.code, 0, r.err);
    const j = JSON.parse(r.out);
    assert.ok(j.n_censored >= 2, `${j.n_censored} censored`);
    assert.ok(j.best_dbm <= -70 + 1e-6, `best_dbm ${j.best_dbm} must respect the −70 dBm bound`);
  });

  it('names line and column of a bad cell, and exits with 2', async () => {
    const r = await run([file('bad.csv', 'position,dbm\n1,-30\n2,-4O\n3,-30\n')]);
    assert.equal(r.code, 2);
    assert.match(r.err, /^error \(EINVAL\): .*bad\.csv line 3, column 2 \(dbm\): "-4O" is not a number\n$/);
  });

  it('names an unknown header and a short row', async () => {
    const h = await run([file('hdr.csv', 'pos,level\n1,-30\n')]);
    assert.equal(h.code, 2);
    assert.match(
      h.err,
      /hdr\.csv line 1: unknown header "pos,level": expected position,dbm .* or pos_a,pos_b,dbm/,
    );
    const s = await run([file('short.csv', '\n# note\npos_a,pos_b,dbm\n1,2,-30\n1,2\n')]);
    assert.equal(s.code, 2);
    assert.match(s.err, /short\.csv line 5: expected 3 cells \(pos_a,pos_b,dbm\), got 2/);
  });

  it('refuses too few readings, an empty file, a missing file and no file, with exit code 2', async () => {
    const few = await run([file('few.csv', 'position,dbm\n1,-30\n2,-40\n')]);
    assert.equal(few.code, 2);
    assert.match(few.err, /few\.csv: a one-trimmer fit needs readings at 3 or more different positions/);
    const empty = await run([file('empty.csv', '')]);
    assert.equal(empty.code, 2);
    assert.match(empty.err, /the file is empty/);
    const missing = await run([join(dir, 'nope.csv')]);
    assert.equal(missing.code, 2);
    assert.match(missing.err, /nope\.csv: cannot read: no such file/);
    const none = await run([]);
    assert.equal(none.code, 2);
    assert.match(none.err, /expected one CSV file, got none/);
    const badFloor = await run([file('one.csv', csv1), '--floor-dbm', 'loud']);
    assert.equal(badFloor.code, 2);
    assert.match(badFloor.err, /--floor-dbm: must be a number, got "loud"/);
  });

  it('prints its usage with --help', async () => {
    const r = await run(['--help']);
    assert.equal(r.code, 0);
    assert.match(
      r.out,
      /^nullbench fit FILE\.csv \[--json\] \[--floor-dbm F\] \[--session ID\] \[--trims A\[,B\]\]/,
    );
  });

  it('refuses a level no bench reads (5,1e300), naming line and column, instead of letting it move the fit', async () => {
    const r = await run([file('absurd.csv', `${csv1}5,1e300\n`)]);
    assert.equal(r.code, 2);
    assert.match(
      r.err,
      new RegExp(
        `absurd\\.csv line ${readings1.length + 2}, column 2 \\(dbm\\): 1e300 dBm is no level a bench reads`,
      ),
    );
    const far = await run([file('far.csv', 'position,dbm\n1,-40\n2e9,-41\n')]);
    assert.match(far.err, /line 3, column 1 \(position\): 2e9 is no trimmer position/);
  });

  it('fits 150,000 readings without overflowing the call stack', async () => {
    const g2 = rng(5);
    const many = sample1D(
      ONE,
      Array.from({ length: 150_000 }, () => 2.8 + 1.2 * g2.uniform()),
      0.2,
      7,
    );
    const rows = many.map((x) => `${x.position.toFixed(5)},${x.dbm.toFixed(3)}`);
    const r = await run([file('many.csv', `position,dbm\n${rows.join('\n')}\n`), '--json']);
    assert.equal(r.code, 0, r.err);
    const j = JSON.parse(r.out) as { n: number; best_position: number };
    assert.equal(j.n, 150_000);
    assert.ok(Math.abs(j.best_position - 3.412) < 0.01, String(j.best_position));
  });

  it('reads RFC 4180 quoting and the semicolon dialect with decimal commas', async () => {
    const quoted = `"position","dbm"\r\n${readings1.map((x) => `"${x.position.toFixed(4)}",${x.dbm.toFixed(2)}`).join('\r\n')}\r\n`;
    const semi = `position;dbm\n${readings1.map((x) => `${x.position.toFixed(4).replace('.', ',')};${x.dbm.toFixed(2).replace('.', ',')}`).join('\n')}\n`;
    const tab = semi.replace(/;/g, '\t');
    const plain = JSON.parse((await run([file('p.csv', csv1), '--json'])).out);
    assert.equal(plain.read, 'comma-separated; columns position, dbm; every reading line');
    for (const [name, text, sep] of [
      ['q.csv', quoted, 'comma'],
      ['s.csv', semi, 'semicolon'],
      ['t.tsv', tab, 'tab'],
    ] as const) {
      const r = await run([file(name, text), '--json']);
      assert.equal(r.code, 0, r.err);
      const j = JSON.parse(r.out);
      assert.equal(j.read, `${sep}-separated; columns position, dbm; every reading line`);
      assert.deepEqual({ ...j, read: null }, { ...plain, read: null }, name);
    }
    // A comma-separated file has no decimal comma: "3,4" there is two cells.
    const mixed = await run([file('m.csv', 'position,dbm\n3,4,-40\n')]);
    assert.match(mixed.err, /line 2: expected 2 cells/);
  });

  it("reads the tool's own readings export: the kept carrier readings of one session, as the same fit", async () => {
    const demo = await demoDb();
    const store = new Store(demo.file);
    try {
      const unit = store.tree()[0].revisions[0].units[0];
      const one = readingsCsv(store, { unitId: unit.id });
      const r = await run([file('export.csv', one.csv), '--json']);
      assert.equal(r.code, 0, r.err);
      // The same readings written in the fit's own layout by hand give the same fit.
      const kept = store
        .listSessions(unit.id)
        .flatMap((x) => store.readings(x.id, { limit: 1_000_000 }))
        .filter((x) => x.kept && x.role === 'carrier');
      const own =
        'pos_a,pos_b,dbm,censored\n' +
        kept.map((x) => `${x.trims.A},${x.trims.B},${x.dbmDut},${x.floorLimited ? 1 : 0}`).join('\n');
      const mine = await run([file('own.csv', own), '--json']);
      const a = JSON.parse(r.out) as Record<string, unknown>;
      const b = JSON.parse(mine.out) as Record<string, unknown>;
      assert.deepEqual({ ...a, outlier_lines: null, read: null }, { ...b, outlier_lines: null, read: null });
      assert.match(
        String(a.read),
        /^readings export, session [0-9a-f-]+: the \d+ kept carrier readings of \d+ rows; A from "trim A \(turns\)", B from "trim B \(turns\)", level from "level at transmitter \(dBm\)", censored from "at receiver floor \(1\/0\)"$/,
      );
      assert.equal(a.n, kept.length);
      // Semicolon dialect, one trimmer chosen, several sessions refused unless one is named.
      const semi = readingsCsv(store, { unitId: unit.id }, 'semicolon');
      assert.deepEqual(JSON.parse((await run([file('semi.csv', semi.csv), '--json'])).out), a);
      const oneTrim = JSON.parse((await run([file('export.csv', one.csv), '--json', '--trims', 'A'])).out);
      assert.equal(oneTrim.kind, '1d');
      const all = readingsCsv(store, {});
      const many = await run([file('all.csv', all.csv)]);
      assert.equal(many.code, 2);
      assert.match(many.err, /kept carrier readings of 6 sessions .*give --session ID/);
      const sid = store.listSessions(unit.id)[0].id;
      const picked = await run([file('all.csv', all.csv), '--json', '--session', sid]);
      assert.equal(picked.code, 0, picked.err);
      assert.equal(JSON.parse(picked.out).best_a, a.best_a);
    } finally {
      store.close();
      demo.cleanup();
    }
  });
});
