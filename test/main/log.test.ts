import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { readdirSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { main } from '../../main/shells/cli/index';
import { pacedSource } from '../../main/live/pace';
import { createSource } from '../../main/sources';
import { tempDir } from '../helpers/tmp';
import { runCli } from '../helpers/cli';

const SETUP = ['--tx-pep-dbm', '30', '--max-input-dbm', '10', '--path', 'coupler:30,pad:20'];

describe('nullbench log', () => {
  it('prints each reading only once another connection can already read it from the database', async () => {
    const tmp = tempDir();
    const db = join(tmp.dir, 'log.db');
    try {
      let reader: Database.Database | null = null;
      const seen: number[] = [];
      const code = await main(
        ['log', '--db', db, '--source', 'sim:seed=2,fast', '--rate-hz', '200', '--for-s', '0.6', ...SETUP],
        {
          out: (s) => {
            const r = JSON.parse(s) as { id: number; dbm_dut: number };
            // A second connection sees committed rows only: the line must come after the commit.
            reader ??= new Database(db, { readonly: true });
            const row = reader.prepare('SELECT dbm_dut FROM readings WHERE id = ?').get(r.id) as
              { dbm_dut: number } | undefined;
            assert.ok(row, `reading ${r.id} was printed before it was committed`);
            assert.equal(row.dbm_dut, r.dbm_dut);
            seen.push(r.id);
          },
          err: () => undefined,
        },
      );
      (reader as Database.Database | null)?.close();
      assert.equal(code, 0);
      assert.ok(seen.length >= 20, `only ${seen.length} readings in 0.6 s at 200/s`);
      const conn = new Database(db, { readonly: true });
      const s = conn.prepare('SELECT ended_at FROM sessions').all() as { ended_at: string | null }[];
      assert.equal(s.length, 1);
      assert.notEqual(s[0].ended_at, null, 'a normal stop closes the session');
      assert.equal(
        (conn.prepare('SELECT COUNT(*) AS n FROM readings').get() as { n: number }).n,
        seen.length,
      );
      conn.close();
    } finally {
      tmp.cleanup();
    }
  });

  it('creates the default "log" unit once and reuses it; --unit/--design/--revision name a new one', async () => {
    const tmp = tempDir();
    const db = join(tmp.dir, 'log.db');
    try {
      for (let i = 0; i < 2; i++) {
        const r = await runCli(['log', '--db', db, '--source', 'sim:fast', '--for-s', '0.1', ...SETUP]);
        assert.equal(r.code, 0, r.err);
      }
      const r = await runCli([
        'log',
        '--db',
        db,
        '--source',
        'sim:fast',
        '--for-s',
        '0.1',
        '--unit',
        'KX-7',
        '--design',
        'Wren',
        '--revision',
        'B',
        ...SETUP,
      ]);
      assert.equal(r.code, 0, r.err);
      const conn = new Database(db, { readonly: true });
      const rows = conn
        .prepare(
          `SELECT d.name AS design, r.name AS revision, u.serial, COUNT(s.id) AS sessions FROM units u
           JOIN revisions r ON r.id = u.revision_id JOIN designs d ON d.id = r.design_id
           JOIN sessions s ON s.unit_id = u.id GROUP BY u.id ORDER BY u.serial`,
        )
        .all();
      conn.close();
      assert.deepEqual(rows, [
        { design: 'Wren', revision: 'B', serial: 'KX-7', sessions: 1 },
        { design: 'Bench log', revision: 'log', serial: 'log', sessions: 2 },
      ]);
    } finally {
      tmp.cleanup();
    }
  });

  it('refuses an unsafe set-up with EUNSAFE before writing anything', async () => {
    const tmp = tempDir();
    const db = join(tmp.dir, 'log.db');
    // 50 dBm PEP straight into a receiver rated -10 dBm.
    const unsafe = [
      'log',
      '--db',
      db,
      '--source',
      'sim:fast',
      '--tx-pep-dbm',
      '50',
      '--max-input-dbm',
      '-10',
      '--for-s',
      '1',
    ];
    try {
      const r = await runCli(unsafe);
      assert.equal(r.code, 1);
      assert.match(r.err, /EUNSAFE.*--path: refused: .*rated maximum of -10 dBm/);
      // The caution once, in the one wording of app/caution.ts.
      assert.equal(r.err.split('dummy load').length - 1, 1, r.err);
      // Not even an empty database is left behind: the file this command made is gone again.
      assert.deepEqual(readdirSync(tmp.dir), []);
      // Into an existing database, the refusal writes no row.
      assert.equal((await runCli(['add', '--db', db, '--design', 'Reed Warbler'])).code, 0);
      const again = await runCli(unsafe);
      assert.equal(again.code, 1);
      const conn = new Database(db, { readonly: true });
      for (const [t, n] of Object.entries({ designs: 1, revisions: 0, units: 0, sessions: 0, readings: 0 }))
        assert.equal((conn.prepare(`SELECT COUNT(*) AS n FROM ${t}`).get() as { n: number }).n, n, t);
      conn.close();
    } finally {
      tmp.cleanup();
    }
  });

  it('continues an open session with --session (after a crash), and refuses a closed one or set-up options', async () => {
    const tmp = tempDir();
    const db = join(tmp.dir, 'log.db');
    try {
      const first = await runCli(['log', '--db', db, '--source', 'sim:fast', '--for-s', '0.2', ...SETUP]);
      const id = (JSON.parse(first.out.split('\n')[0]) as { session_id: string }).session_id;
      // What a crash leaves behind: the session still open.
      const conn = new Database(db);
      conn.prepare('UPDATE sessions SET ended_at = NULL').run();
      conn.close();
      const more = await runCli(['log', '--db', db, '--session', id, '--for-s', '0.2', '--rate-hz', '50']);
      assert.equal(more.code, 0, more.err);
      const lines = more.out.trim().split('\n');
      assert.ok(lines.length >= 2);
      for (const l of lines) assert.equal((JSON.parse(l) as { session_id: string }).session_id, id);

      const closed = await runCli(['log', '--db', db, '--session', id, '--for-s', '0.2']);
      assert.equal(closed.code, 1);
      assert.match(
        closed.err,
        /ECONFLICT.*--session: session .* ended at .*; .*add --continue to take this one up again/,
      );
      // Taken up again only when asked: the same session, and its notes record both sittings.
      const taken = await runCli([
        'log',
        '--db',
        db,
        '--session',
        id,
        '--continue',
        '--for-s',
        '0.2',
        '--rate-hz',
        '50',
      ]);
      assert.equal(taken.code, 0, taken.err);
      for (const l of taken.out.trim().split('\n'))
        assert.equal((JSON.parse(l) as { session_id: string }).session_id, id);
      const notes = new Database(db, { readonly: true });
      assert.match(
        (notes.prepare('SELECT notes FROM sessions WHERE id = ?').get(id) as { notes: string }).notes,
        /Continued .* UTC after it had ended .* UTC\./,
      );
      notes.close();
      const stray = await runCli(['log', '--db', db, '--continue']);
      assert.equal(stray.code, 2);
      assert.match(stray.err, /--continue: only with --session/);
      // Ended from the command line, as the bench's End session does (here after a crash left it open); a
      // second end is a conflict.
      const reopen = new Database(db);
      reopen.prepare('UPDATE sessions SET ended_at = NULL').run();
      reopen.close();
      const end = await runCli(['edit', '--db', db, '--session', id, '--end']);
      assert.equal(end.code, 0, end.err);
      assert.match(end.out, new RegExp(`session ${id} ended \\d{4}-`));
      const again = await runCli(['edit', '--db', db, '--session', id, '--end']);
      assert.equal(again.code, 1);
      assert.match(again.err, /ECONFLICT.*already ended/);
      const mixed = await runCli(['log', '--db', db, '--session', id, '--path', 'pad:20']);
      assert.equal(mixed.code, 2);
      assert.match(mixed.err, /--path: --session continues a stored session/);
      const unknown = await runCli(['log', '--db', db, '--session', 'nope']);
      assert.equal(unknown.code, 1);
      assert.match(unknown.err, /ENOTFOUND.*--session: no session with id "nope"/);
    } finally {
      tmp.cleanup();
    }
  });

  it('names each bad option', async () => {
    const cases: [string[], RegExp][] = [
      [['--rate-hz', '0', ...SETUP], /--rate-hz: must be above 0/],
      [['--rate-hz', 'fast', ...SETUP], /--rate-hz: must be a number/],
      [['--for-s', '-1', ...SETUP], /--for-s: must be above 0 s/],
      [['--role', 'carier', ...SETUP], /--role: unknown point "carier"/],
      [['--max-input-dbm', '10'], /--tx-pep-dbm: is required/],
      [['--tx-pep-dbm', '30', '--max-input-dbm', '10', '--carrier-hz', '-5'], /--carrier-hz: /],
      [['--source', 'radio', ...SETUP], /source: unknown source "radio"/],
      [
        ['--pep-w', '1', ...SETUP],
        /--pep-w: give the PEP once: --tx-pep-dbm \(dBm\) or --pep-w \(W\), not both/,
      ],
      [['--pep-w', '0', '--max-input-dbm', '10'], /--pep-w: must be above 0 W/],
    ];
    for (const [args, want] of cases) {
      const r = await runCli(['log', '--db', ':memory:', ...args]);
      assert.equal(r.code, 2, args.join(' '));
      assert.match(r.err, want);
    }
  });
});

describe('the PEP in watts or dBm', () => {
  it('takes --pep-w as well as --tx-pep-dbm, as plan run does: 1 W is 30 dBm (P = 10 log10(P / 1 mW))', async () => {
    const tmp = tempDir();
    try {
      const db = join(tmp.dir, 'log.db');
      const r = await runCli([
        'log',
        '--db',
        db,
        '--source',
        'sim:fast',
        '--for-s',
        '0.1',
        '--pep-w',
        '1',
        '--max-input-dbm',
        '10',
        '--path',
        'pad:50',
      ]);
      assert.equal(r.code, 0, r.err);
      const conn = new Database(db, { readonly: true });
      const s = conn.prepare('SELECT tx_pep_dbm FROM sessions').get() as { tx_pep_dbm: number };
      conn.close();
      assert.ok(Math.abs(s.tx_pep_dbm - 30) < 1e-12, String(s.tx_pep_dbm));
    } finally {
      tmp.cleanup();
    }
  });
});

describe('pacedSource()', () => {
  it('spaces readings 1/rate apart, waiting only for what is left of each period, never making up a stall', async () => {
    // A clock of our own: the test decides how long each read takes, so nothing here depends on the machine.
    let t = 1000;
    const waits: number[] = [];
    const clock = { now: () => t, wait: async (ms: number) => void waits.push(ms, (t += ms)) };
    const inner = createSource('sim:fast');
    const s = pacedSource(inner, 50, clock);
    await s.read(); // the first read is not held back
    await s.read(); // straight after: waits the whole 20 ms period
    t += 5;
    await s.read(); // 5 ms of the next period already gone: waits 15
    t += 100;
    await s.read(); // a 100 ms stall: no wait, and no burst afterwards
    await s.read();
    assert.deepEqual(
      waits.filter((_, i) => i % 2 === 0),
      [20, 15, 20],
    );
  });

  it('waits on the wall clock by default, even on a virtual-clock source', async () => {
    const s = pacedSource(createSource('sim:fast'), 50);
    const t0 = Date.now();
    for (let i = 0; i < 11; i++) await s.read();
    // 10 intervals of 20 ms. Only the lower bound is checked: timers never fire early, and how late a loaded
    // machine is says nothing about this code.
    assert.ok(Date.now() - t0 >= 195, `11 readings at 50/s took ${Date.now() - t0} ms`);
  });

  it('passes everything else straight through: kind, spec, caps, quantity, floor, clock, trims', async () => {
    const inner = createSource('sim:seed=3,fast');
    const s = pacedSource(inner, 100);
    assert.deepEqual(
      [s.kind, s.spec, s.caps, s.quantity, s.noiseFloorDbm],
      [inner.kind, inner.spec, inner.caps, inner.quantity, inner.noiseFloorDbm],
    );
    assert.equal(typeof s.setTrims, 'function');
    await s.setTrims!({ A: 1 });
    assert.equal(s.now(), inner.now());
  });

  it('refuses a rate that is not positive and finite', () => {
    assert.throws(() => pacedSource(createSource('sim:fast'), 0), /rateHz: must be between/);
    assert.throws(() => pacedSource(createSource('sim:fast'), Number.NaN), /rateHz: must be a finite number/);
  });
});
