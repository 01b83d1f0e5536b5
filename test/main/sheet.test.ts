// The printed test sheet: `nullbench sheet` writes a PDF through headless Chromium; pdftotext shows the
// identity, the figures (recomputed here straight from the database) and the verdicts; pdftoppm renders
// each page to PNG for a person to look at (test-artifacts/sheet-*.png).
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { renderSheet } from '../../main/sheet';
import { esc, niceTicks } from '../../main/sheet/svg';
import { Records } from '../../main/store/records';
import { Store } from '../../main/store/store';
import { runCli } from '../helpers/cli';
import { demoDb } from '../helpers/demo';
import { ARTIFACTS } from '../helpers/browser';

const f1 = (x: number) => `${x < 0 ? '−' : ''}${Math.abs(x).toFixed(1)}`;
const mw = (dbm: number) => 10 ** (dbm / 10);

/** The last kept reading of each point of the unit's session, read with plain SQL. */
function lastKept(file: string, serial: string): Record<string, number> {
  const db = new Database(file, { readonly: true });
  const rows = db
    .prepare(
      `SELECT x.role, x.dbm_dut FROM readings_wide x JOIN sessions s ON s.id = x.session_id JOIN units u ON u.id = s.unit_id
       WHERE u.serial = ? AND x.kept = 1 ORDER BY x.t_ms, x.id`,
    )
    .all(serial) as { role: string; dbm_dut: number }[];
  db.close();
  const out: Record<string, number> = {};
  for (const r of rows) out[r.role] = r.dbm_dut;
  return out;
}

function pdftotext(pdf: string): string {
  const r = spawnSync('pdftotext', ['-layout', pdf, '-'], { encoding: 'utf8' });
  assert.equal(r.status, 0, r.stderr);
  return r.stdout;
}

describe('nullbench sheet', () => {
  let demo: Awaited<ReturnType<typeof demoDb>>;
  before(async () => {
    demo = await demoDb();
  });
  after(() => demo?.cleanup());

  it('prints a PDF whose identity, figures and verdicts match the database', async () => {
    const out = join(demo.dir, 'HD40-0101.pdf');
    const r = await runCli(['sheet', '--db', demo.file, '--unit', 'HD40-0101', '--out', out]);
    assert.equal(r.code, 0, r.err);
    assert.match(r.out, /written to .*HD40-0101\.pdf/);
    assert.equal(readFileSync(out).subarray(0, 5).toString(), '%PDF-');
    const text = pdftotext(out);
    for (const s of [
      'HD40-0101',
      'Heron DSB-40',
      'revision R1',
      'Bench night group',
      'Bench receiver, generator check',
      '2026-03-01',
      '30 dB coupler "sampler"',
      '20 dB pad',
      '7.100 MHz',
    ])
      assert.ok(text.includes(s), `sheet shows "${s}"`);
    // Figures recomputed from the stored readings. PEP of two lines: (√P_upper + √P_lower)² (docs/references.md,
    // "Modulation and power": DSB with one tone, PEP = 4 x one tone's power).
    const k = lastKept(demo.file, 'HD40-0101');
    const pep = 10 * Math.log10((Math.sqrt(mw(k.upper)) + Math.sqrt(mw(k.lower))) ** 2);
    const tone = 10 * Math.log10((mw(k.upper) + mw(k.lower)) / 2);
    const mean = 10 * Math.log10(mw(k.upper) + mw(k.lower) + mw(k.carrier));
    assert.ok(
      text.includes(`${f1(pep - k.carrier)} dB below PEP`),
      `carrier below PEP ${f1(pep - k.carrier)}`,
    );
    assert.ok(text.includes(`${f1(tone - k.carrier)} dB below one tone`), 'carrier below one tone');
    assert.ok(
      text.includes(`${f1(k.reference - k.carrier)} dB below unbalanced carrier`),
      'against the unbalanced carrier',
    );
    assert.ok(
      text.includes(`${f1(tone - Math.max(k.imd3u, k.imd3l))} dB below one tone`),
      'IMD3 below one tone',
    );
    assert.ok(text.includes(`${f1(pep - Math.max(k.imd3u, k.imd3l))} dB below PEP`), 'IMD3 below PEP');
    assert.ok(
      text.includes(`${f1(mean - k.h2)} dB below the mean power`),
      '2nd harmonic below the mean power',
    );
    // 47 CFR 97.307(d): 43 dB below the mean power (docs/references.md § Emission limits).
    assert.ok(
      text.includes(`≤ ${f1(mean - 43)} dBm`),
      `the 97.307(d) limit for this mean power, ${f1(mean - 43)} dBm`,
    );
    assert.match(text, /PASS/);
    assert.match(text, /47 CFR 97\.307\(d\)/);
    assert.match(text, /common practice/);
    assert.match(text, /[Vv]erify against your local rules/);
    assert.match(text, /dummy load/);
    assert.match(text, /k = 2/);
    assert.match(text, /page 1 of \d/);

    // Look at it: every page as PNG, kept with the other screenshots.
    const prefix = join(ARTIFACTS, 'sheet-HD40-0101');
    const png = spawnSync('pdftoppm', ['-r', '80', '-png', out, prefix], { encoding: 'utf8' });
    assert.equal(png.status, 0, png.stderr);
    const page1 = `${prefix}-1.png`;
    assert.ok(existsSync(page1), 'page 1 rendered');
    assert.ok(statSync(page1).size > 20_000, 'page 1 is not blank');
    const info = spawnSync('pdfinfo', [out], { encoding: 'utf8' }).stdout;
    assert.match(info, /Page size:\s+59[45]\.\d+ x 84[12]\.\d+ pts \(A4\)/);
  });

  it('states a unit that fails, and an indeterminate check, as such', async () => {
    const out = join(demo.dir, 'HD40-0102-careful.pdf');
    // R1's leakage (-52 dBc to one tone, about 58 dB below PEP) misses the 60 dB "careful layout" target.
    const r = await runCli([
      'sheet',
      '--db',
      demo.file,
      '--unit',
      'HD40-0102',
      '--out',
      out,
      '--limits',
      'preset:common-practice-careful',
      '--json',
    ]);
    assert.equal(r.code, 0, r.err);
    const summary = JSON.parse(r.out) as {
      overall: string;
      figures: {
        figure: string;
        db: number | null;
        expandedDb: number | null;
        k: number;
        bound: string;
        text: string;
      }[];
    };
    assert.ok(['fail', 'indeterminate'].includes(summary.overall), summary.overall);
    // Figures as numbers for scripts, the text beside them: dB, expanded uncertainty with its k, the kind.
    const pep = summary.figures.find((f) => f.figure === 'Carrier suppression, against PEP')!;
    assert.equal(typeof pep.db, 'number');
    assert.equal(typeof pep.expandedDb, 'number');
    assert.equal(pep.k, 2);
    assert.equal(pep.bound, 'value');
    assert.match(
      pep.text,
      new RegExp(`^${pep.db!.toFixed(1)} dB below PEP ± ${pep.expandedDb!.toFixed(1)} dB$`),
    );
    // Machine output uses the ASCII minus; the sheet for people keeps the typographic one.
    assert.ok(!r.out.includes('\u2212'), 'a typographic minus in --json');
    const balance = summary.figures.find((f) => f.figure.startsWith('Sideband balance'));
    if (balance && balance.db !== null && balance.db < 0) assert.match(balance.text, /^-\d/);
    const text = pdftotext(out);
    assert.match(text, summary.overall === 'fail' ? /FAIL/ : /INDETERMINATE/);
    assert.match(text, /Carefully laid-out board \(common practice\)/);
  });

  it('writes the same sheet as HTML, with no inline style attributes (the app shows it under its CSP)', async () => {
    const out = join(demo.dir, 'HD40-0201.html');
    const r = await runCli(['sheet', '--db', demo.file, '--unit', 'HD40-0201', '--out', out]);
    assert.equal(r.code, 0, r.err);
    const html = readFileSync(out, 'utf8');
    assert.match(html, /^<!doctype html>/);
    const store = new Store(demo.file);
    try {
      const s = renderSheet(store, new Records(store).unitBySerial('HD40-0201').id, {
        issuedAt: '2026-09-01T10:00:00Z',
      });
      assert.doesNotMatch(s.fragment, /\sstyle=/);
      assert.doesNotMatch(s.fragment, /<script/i);
      assert.match(s.fragment, /^<article class="sheet">/);
      assert.match(s.fragment, /<svg [^>]*aria-label="Carrier against Balance R"/);
      assert.equal(s.overall, 'pass');
    } finally {
      store.close();
    }
  });

  it('refuses clearly: unknown unit, a unit never measured, a bad output name, no Chromium', async () => {
    const a = await runCli([
      'sheet',
      '--db',
      demo.file,
      '--unit',
      'NOPE-1',
      '--out',
      join(demo.dir, 'x.pdf'),
    ]);
    assert.equal(a.code, 1);
    assert.match(a.err, /--unit: no unit with serial "NOPE-1"/);
    await runCli([
      'add',
      '--db',
      demo.file,
      '--design',
      'Heron DSB-40',
      '--revision',
      'R2',
      '--unit',
      'HD40-0299',
    ]);
    const b = await runCli([
      'sheet',
      '--db',
      demo.file,
      '--unit',
      'HD40-0299',
      '--out',
      join(demo.dir, 'y.pdf'),
    ]);
    assert.equal(b.code, 1);
    assert.match(b.err, /no session with kept readings yet/);
    const c = await runCli([
      'sheet',
      '--db',
      demo.file,
      '--unit',
      'HD40-0101',
      '--out',
      join(demo.dir, 'y.docx'),
    ]);
    assert.equal(c.code, 2);
    assert.match(c.err, /--out: must end in \.pdf or \.html/);
    const saved = process.env.CHROMIUM_PATH;
    process.env.CHROMIUM_PATH = '/nonexistent/chromium';
    try {
      const d = await runCli([
        'sheet',
        '--db',
        demo.file,
        '--unit',
        'HD40-0101',
        '--out',
        join(demo.dir, 'z.pdf'),
      ]);
      assert.equal(d.code, 1);
      assert.match(d.err, /error \(ENAVAIL\): chromium: headless Chromium was not found/);
      assert.equal(existsSync(join(demo.dir, 'z.pdf')), false, 'no file is left behind');
    } finally {
      if (saved === undefined) delete process.env.CHROMIUM_PATH;
      else process.env.CHROMIUM_PATH = saved;
    }
  });
});

describe('sheet/svg', () => {
  it('niceTicks() covers the range with 1, 2, 2.5 or 5 × 10^n steps', () => {
    for (const [lo, hi] of [
      [-31.3, 9.2],
      [0.02, 0.07],
      [57, 71],
      [3.5, 3.5],
      [-127, -13],
    ]) {
      const { ticks, step } = niceTicks(lo, hi, 6);
      assert.ok(ticks[0] <= lo && ticks[ticks.length - 1] >= hi, `${lo}..${hi}: ${ticks.join(' ')}`);
      const m = step / 10 ** Math.floor(Math.log10(step));
      assert.ok(
        [1, 2, 2.5, 5].some((x) => Math.abs(x - m) < 1e-9),
        `step ${step}`,
      );
      assert.ok(ticks.length <= 10, `${ticks.length} ticks`);
    }
  });

  it('esc() leaves no markup in text', () => {
    assert.equal(esc(`<b a="1">&'`), '&lt;b a=&quot;1&quot;&gt;&amp;&#39;');
  });
});
