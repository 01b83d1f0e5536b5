// The record-keeping commands as a user types them: units, designs, add, edit, compare, limits, export,
// import.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { runBin, runCli } from '../helpers/cli';
import { demoDb } from '../helpers/demo';
import { tempDir } from '../helpers/tmp';

const count = (file: string, table: string) => {
  const db = new Database(file, { readonly: true });
  const n = (db.prepare(`SELECT COUNT(*) AS n FROM ${table}`).get() as { n: number }).n;
  db.close();
  return n;
};

describe('nullbench records commands', () => {
  it('lists every new command in --help, each with its own --help', async () => {
    const r = await runCli(['--help']);
    for (const c of ['designs', 'units', 'add', 'edit', 'compare', 'limits', 'sheet', 'export', 'import']) {
      assert.match(r.out, new RegExp(`\\n  ${c}\\s`), c);
      const h = await runCli([c, '--help']);
      assert.equal(h.code, 0, c);
      assert.match(h.out, new RegExp(`nullbench ${c}`));
    }
  });

  it('units --json prints a JSON array of units with their serials', async () => {
    const d = await demoDb();
    try {
      const r = await runCli(['units', '--db', d.file, '--json']);
      assert.equal(r.code, 0, r.err);
      const units = JSON.parse(r.out) as {
        serial: string;
        design: string;
        revision: string;
        sessions: number;
      }[];
      assert.ok(Array.isArray(units));
      assert.deepEqual(
        units.map((u) => u.serial),
        ['HD40-0101', 'HD40-0102', 'HD40-0103', 'HD40-0201', 'HD40-0202', 'HD40-0203'],
      );
      assert.equal(units[3].revision, 'R2');
      assert.equal(units[0].sessions, 1);
      const text = await runCli(['units', '--db', d.file, '--design', 'Heron DSB-40']);
      assert.match(text.out, /HD40-0203\s+Heron DSB-40 R2\s+2026-08-09/);
      const bad = await runCli(['units', '--db', d.file, '--design', 'Kestrel']);
      assert.equal(bad.code, 1);
      assert.match(bad.err, /--design: no design "Kestrel" \(there is "Heron DSB-40"\)/);
    } finally {
      d.cleanup();
    }
  });

  it('add refuses an impossible build date by its option, before writing anything (not even the file)', async () => {
    const t = tempDir();
    try {
      const db = join(t.dir, 'dates.db');
      const add = (date: string) =>
        runCli([
          'add',
          '--db',
          db,
          '--design',
          'Kite',
          '--revision',
          'A',
          '--unit',
          'K-1',
          '--build-date',
          date,
        ]);
      for (const bad of ['2026-13-45', '2026-02-30', '14.03.2026']) {
        const r = await add(bad);
        assert.equal(r.code, 2, bad);
        assert.match(r.err, /--build-date: must be a date written YYYY-MM-DD/, bad);
        assert.equal(existsSync(db), false, `${bad}: the database was created`);
      }
      // 2028 is a leap year (Gregorian calendar): its 29 February is a real day.
      const ok = await add('2028-02-29');
      assert.equal(ok.code, 0, ok.err);
      assert.match(ok.out, /added design "Kite"; added revision A; added unit K-1/);
    } finally {
      t.cleanup();
    }
  });

  it('add creates what is missing; edit renames, notes what changed and corrects a unit', async () => {
    const d = await demoDb();
    try {
      const a = await runCli([
        'add',
        '--db',
        d.file,
        '--design',
        'Heron DSB-40',
        '--revision',
        'R3',
        '--changes',
        'SMD ring modulator',
        '--unit',
        'HD40-0301',
        '--builder',
        'Workshop',
        '--build-date',
        '2026-10-02',
      ]);
      assert.equal(a.code, 0, a.err);
      assert.match(a.out, /design "Heron DSB-40" is there; added revision R3; added unit HD40-0301/);
      const again = await runCli([
        'add',
        '--db',
        d.file,
        '--design',
        'Heron DSB-40',
        '--revision',
        'R3',
        '--unit',
        'HD40-0301',
      ]);
      assert.match(again.out, /unit HD40-0301 is there/);
      const clash = await runCli([
        'add',
        '--db',
        d.file,
        '--design',
        'Heron DSB-40',
        '--revision',
        'R1',
        '--unit',
        'HD40-0301',
      ]);
      assert.equal(clash.code, 1);
      assert.match(clash.err, /already exists under another revision/);
      const e1 = await runCli([
        'edit',
        '--db',
        d.file,
        '--design',
        'Heron DSB-40',
        '--revision',
        'R3',
        '--rename',
        'R3a',
        '--changes',
        'SMD ring modulator, new crystal',
      ]);
      assert.equal(e1.code, 0, e1.err);
      const e2 = await runCli([
        'edit',
        '--db',
        d.file,
        '--unit',
        'HD40-0301',
        '--notes',
        'first of the batch',
        '--move-to',
        'R2',
      ]);
      assert.equal(e2.code, 0, e2.err);
      const tree = JSON.parse((await runCli(['designs', '--db', d.file, '--json'])).out);
      const r3 = tree[0].revisions.find((r: { name: string }) => r.name === 'R3a');
      assert.equal(r3.changes, 'SMD ring modulator, new crystal');
      const r2 = tree[0].revisions.find((r: { name: string }) => r.name === 'R2');
      assert.ok(
        r2.units.some(
          (u: { serial: string; notes: string }) =>
            u.serial === 'HD40-0301' && u.notes === 'first of the batch',
        ),
      );
      const wrong = await runCli(['edit', '--db', d.file, '--unit', 'HD40-0301', '--changes', 'x']);
      assert.equal(wrong.code, 2);
      assert.match(wrong.err, /--changes: does not apply to a unit/);
      const none = await runCli(['edit', '--db', d.file, '--design', 'Heron DSB-40']);
      assert.equal(none.code, 2);
      assert.match(none.err, /nothing to change/);
      const conn = new Database(d.file, { readonly: true });
      const sessions = conn.prepare('SELECT id FROM sessions LIMIT 1').get() as { id: string };
      conn.close();
      const em = await runCli(['edit', '--db', d.file, '--session', sessions.id, '--emission', 'LSB']);
      assert.equal(em.code, 0, em.err);
      assert.match(em.out, /is LSB/);
    } finally {
      d.cleanup();
    }
  });

  it('compare shows R2 better than R1 on carrier suppression', async () => {
    const d = await demoDb();
    try {
      const r = await runCli(['compare', '--db', d.file, '--design', 'Heron DSB-40']);
      assert.equal(r.code, 0, r.err);
      assert.match(r.out, /Carrier suppression \(dB\)[\s\S]*R1 -> R2: BETTER/);
      assert.match(r.out, /Opposite sideband suppression[\s\S]*not measured/);
      const j = JSON.parse(
        (
          await runCli([
            'compare',
            '--db',
            d.file,
            '--design',
            'Heron DSB-40',
            '--reference',
            'tone',
            '--json',
          ])
        ).out,
      );
      assert.equal(j.reference, 'tone');
      assert.equal(j.changes.find((c: { metric: string }) => c.metric === 'carrier').kind, 'better');
      const bad = await runCli([
        'compare',
        '--db',
        d.file,
        '--design',
        'Heron DSB-40',
        '--reference',
        'moon',
      ]);
      assert.equal(bad.code, 2);
      assert.match(bad.err, /--reference: must be one of tone, pep, unbalanced/);
    } finally {
      d.cleanup();
    }
  });

  it('limits lists presets with sources, saves a user set from a file and deletes it', async () => {
    const d = await demoDb();
    try {
      const l = await runCli(['limits', '--db', d.file]);
      assert.match(l.out, /preset:us-97\.307d\n.*\[regulation\]\n\s+source: 47 CFR 97\.307\(d\)/);
      assert.match(l.out, /from a secondary source: confirm/);
      assert.match(l.out, /optional: another radio service/);
      assert.match(l.out, /Verify against your local rules/);
      const f = join(d.dir, 'mine.json');
      writeFileSync(
        f,
        JSON.stringify({
          name: 'Kit target',
          rules: [
            { metric: 'carrier', reference: 'pep', minDb: 50 },
            { metric: 'imd3', reference: 'pep', minDb: 30 },
          ],
        }),
      );
      const s = await runCli(['limits', '--db', d.file, '--save', f]);
      assert.equal(s.code, 0, s.err);
      assert.match(s.out, /saved limit set "Kit target"/);
      writeFileSync(f, '{"name": "Broken", "rules": [{"metric": "balance", "maxDb": 90}]}');
      const b = await runCli(['limits', '--db', d.file, '--save', f]);
      assert.equal(b.code, 2);
      assert.match(b.err, /rules\[0\]\.maxDb: must be <= 40 dB/);
      const del = await runCli(['limits', '--db', d.file, '--delete', 'Kit target']);
      assert.equal(del.code, 0, del.err);
      assert.equal(count(d.file, 'limit_sets'), 0);
    } finally {
      d.cleanup();
    }
  });

  it('export and import move a design between databases without duplicates (as the installed command)', async () => {
    const d = await demoDb();
    try {
      const bundle = join(d.dir, 'heron.json');
      const e = runBin(['export', '--db', d.file, '--out', bundle, '--design', 'Heron DSB-40']);
      assert.equal(e.code, 0, e.err);
      assert.match(
        e.out,
        /Bundle written to .*heron\.json: 1 designs, 2 revisions, 6 units, 6 sessions, \d+ readings/,
      );
      // --out - writes the same bytes to standard output (the summary to stderr), and no file named "-".
      const piped = runBin(['export', '--db', d.file, '--out', '-', '--design', 'Heron DSB-40']);
      assert.equal(piped.code, 0, piped.err);
      assert.equal(piped.out, readFileSync(bundle, 'utf8'));
      assert.match(piped.err, /Bundle written to standard output: 1 designs/);
      assert.equal(existsSync('-'), false);
      const other = join(d.dir, 'other.db');
      const i1 = runBin(['import', '--db', other, bundle]);
      assert.equal(i1.code, 0, i1.err);
      assert.match(i1.out, /added 1 designs, 2 revisions, 6 units, 6 sessions, \d+ readings/);
      const n = count(other, 'readings');
      const i2 = runBin(['import', '--db', other, bundle]);
      assert.equal(i2.code, 0, i2.err);
      assert.match(i2.out, /added nothing/);
      assert.equal(count(other, 'readings'), n);
      const again = join(d.dir, 'again.json');
      assert.equal(runBin(['export', '--db', other, '--out', again]).code, 0);
      assert.equal(
        readFileSync(again, 'utf8'),
        readFileSync(bundle, 'utf8').replace(
          '"scope": {"design":"Heron DSB-40"}',
          '"scope": {"design":null}',
        ),
      );
      const csv = join(d.dir, 'r.csv');
      const c = await runCli(['export', '--db', other, '--csv', '--unit', 'HD40-0201', '--out', csv]);
      assert.equal(c.code, 0, c.err);
      assert.match(c.out, /^\d+ readings written to/);
      // The same readings to standard output, and in the semicolon dialect with decimal commas for a
      // spreadsheet set to a decimal-comma locale: the same cells, the marks swapped.
      const out = runBin(['export', '--db', other, '--csv', '--unit', 'HD40-0201', '--out', '-']);
      assert.equal(out.code, 0, out.err);
      assert.equal(out.out, readFileSync(csv, 'utf8'));
      assert.match(out.err, /^\d+ readings written to standard output/);
      const semi = runBin([
        'export',
        '--db',
        other,
        '--csv',
        '--unit',
        'HD40-0201',
        '--separator',
        'semicolon',
        '--out',
        '-',
      ]);
      assert.equal(semi.code, 0, semi.err);
      const [h1] = out.out.replace(/^\uFEFF/, '').split('\r\n');
      const [h2, r2] = semi.out.replace(/^\uFEFF/, '').split('\r\n');
      assert.match(h1, /^design,revision,unit serial,.*,"standard uncertainty \(dB, k=1\)",/);
      assert.match(h2, /^design;revision;unit serial;.*;standard uncertainty \(dB, k=1\);/);
      assert.match(r2, /;-?\d+,\d+;/, 'a decimal comma between semicolons');
      const wrong = runBin(['export', '--db', other, '--csv', '--separator', 'tab', '--out', '-']);
      assert.equal(wrong.code, 2);
      assert.match(wrong.err, /--separator.*"tab" is not a separator; give comma or semicolon/);
    } finally {
      d.cleanup();
    }
  });

  it('import refuses a corrupt bundle naming the field, exits 2 and writes nothing', async () => {
    const d = await demoDb();
    try {
      const bundle = join(d.dir, 'all.json');
      assert.equal((await runCli(['export', '--db', d.file, '--out', bundle])).code, 0);
      const other = join(d.dir, 'other.db');
      await runCli(['add', '--db', other, '--design', 'Local']);
      const b = JSON.parse(readFileSync(bundle, 'utf8'));
      b.readings[5].uDb = -1;
      const bad = join(d.dir, 'bad.json');
      writeFileSync(bad, JSON.stringify(b));
      const r = await runCli(['import', '--db', other, bad]);
      assert.equal(r.code, 2);
      assert.match(r.err, /bad\.json: readings\[5\]\.uDb: .*\(nothing was imported\)/);
      writeFileSync(bad, readFileSync(bundle, 'utf8').slice(0, 5000));
      const cut = await runCli(['import', '--db', other, bad]);
      assert.equal(cut.code, 2);
      assert.match(cut.err, /bad\.json: line \d+, column \d+: not valid JSON: the file ends early/);
      assert.equal(count(other, 'readings'), 0);
      assert.equal(count(other, 'designs'), 1);
      const missing = await runCli(['import', '--db', other, join(d.dir, 'nope.json')]);
      assert.equal(missing.code, 1);
      assert.match(missing.err, /nope\.json: cannot read: ENOENT/);
    } finally {
      d.cleanup();
    }
  });
});
