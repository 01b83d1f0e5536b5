import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { existsSync, readFileSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import Database from 'better-sqlite3';
import { runBin, runCli } from '../helpers/cli';
import { tempDir } from '../helpers/tmp';

describe('nullbench CLI', () => {
  it('leaves no database behind when a command fails before storing anything, and keeps one that was there', async () => {
    const tmp = tempDir();
    try {
      const db = join(tmp.dir, 'never.db');
      const failing = [
        ['plan', 'run', '--unit', 'NO-SUCH', '--db', db],
        ['receivers', 'add', '--name', 'R', '--source', 'bogus', '--db', db],
        ['templates', 'show', 'nothing', '--db', db],
        ['plan', 'show', 'no-such-plan', `--db=${db}`],
      ];
      for (const args of failing) {
        const r = await runCli(args);
        assert.notEqual(r.code, 0, args.join(' '));
        assert.ok(!existsSync(db), `${args.join(' ')} left ${db}`);
      }
      // A database that existed before the command is never removed, empty or not.
      assert.equal((await runCli(['plan', 'list', '--db', db])).code, 0);
      assert.ok(existsSync(db));
      assert.notEqual((await runCli(['plan', 'show', 'no-such-plan', '--db', db])).code, 0);
      assert.ok(existsSync(db), 'an existing database was removed');
    } finally {
      tmp.cleanup();
    }
  });

  it('lists its commands on --help', async () => {
    const r = await runCli(['--help']);
    assert.equal(r.code, 0);
    for (const c of ['read', 'serve', 'demo']) assert.match(r.out, new RegExp(`\\n  ${c}\\s`));
  });

  it('states its version from package.json on -V and --version; no command is a usage error on stderr', async () => {
    const { version } = JSON.parse(readFileSync('package.json', 'utf8')) as { version: string };
    for (const flag of ['-V', '--version']) {
      const r = await runCli([flag]);
      assert.deepEqual([r.code, r.out, r.err], [0, `nullbench ${version}\n`, ''], flag);
    }
    const none = await runCli([]);
    assert.deepEqual([none.code, none.out], [2, '']);
    assert.match(none.err, /Usage: nullbench COMMAND/);
  });

  it('ends quietly when the reader of its output goes away (read | head -1), and log ends its session', () => {
    const sh = (cmd: string) =>
      spawnSync('bash', ['-o', 'pipefail', '-c', cmd], { encoding: 'utf8', timeout: 120_000 });
    const read = sh(`"${process.execPath}" bin/nullbench.js read --count 5000 | head -1`);
    assert.equal(read.status, 0, read.stderr);
    assert.doesNotMatch(read.stderr, /EPIPE|Error|at /);
    assert.match(read.stdout, /dBm at rx/);
    const t = tempDir();
    try {
      const db = join(t.dir, 'pipe.db');
      const log = sh(
        `"${process.execPath}" bin/nullbench.js log --db "${db}" --tx-pep-dbm 30 --max-input-dbm 10 --path coupler:30,pad:20 --for-s 60 | head -2`,
      );
      assert.equal(log.status, 0, log.stderr);
      assert.doesNotMatch(log.stderr, /EPIPE|Error/);
      assert.equal(log.stdout.trim().split('\n').length, 2);
      const d = new Database(db, { readonly: true });
      try {
        const s = d.prepare('SELECT ended_at FROM sessions').all() as { ended_at: string | null }[];
        assert.equal(s.length, 1);
        assert.ok(s[0].ended_at, 'the session was ended when the pipe closed');
        const n = (d.prepare('SELECT COUNT(*) AS n FROM readings').get() as { n: number }).n;
        assert.ok(n >= 2, `every printed reading is stored (${n})`);
      } finally {
        d.close();
      }
    } finally {
      t.cleanup();
    }
  });

  it('prints --help for every command', async () => {
    for (const c of ['read', 'serve', 'demo']) {
      const r = await runCli([c, '--help']);
      assert.equal(r.code, 0, c);
      assert.match(r.out, new RegExp(`nullbench ${c}`));
    }
  });

  it('read --json prints one JSON object per reading with raw, dbm_rx, dbm_dut, freq_hz', async () => {
    const r = await runCli([
      'read',
      '--source',
      'sim:fast',
      '--count',
      '4',
      '--json',
      '--path',
      'pad:20,cable:0.4',
    ]);
    assert.equal(r.code, 0, r.err);
    const lines = r.out
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l));
    assert.equal(lines.length, 4);
    for (const l of lines) {
      // IARU R.1: S9 = -73 dBm below 30 MHz, strength is dB relative to S9.
      assert.equal(l.dbm_rx, -73 + l.raw);
      assert.ok(Math.abs(l.dbm_dut - (l.dbm_rx + 20.4)) < 1e-9);
      assert.equal(l.freq_hz, 7_100_000);
    }
  });

  it('read tunes to --freq-hz', async () => {
    const r = await runCli([
      'read',
      '--source',
      'sim:fast',
      '--count',
      '1',
      '--json',
      '--freq-hz',
      '7101000',
    ]);
    assert.equal(JSON.parse(r.out).freq_hz, 7_101_000);
  });

  it('names the bad part of a malformed --path and exits 2', async () => {
    const r = await runCli(['read', '--source', 'sim:fast', '--count', '1', '--path', 'pad:20,cabel:0.4']);
    assert.equal(r.code, 2);
    assert.match(r.err, /--path/);
    assert.match(r.err, /cabel/);
    assert.equal(r.out, '');
  });

  it('refuses a negative pad, an unknown option and an unknown source, each named', async () => {
    const a = await runCli(['read', '--source', 'sim:fast', '--path', 'pad:-20']);
    assert.equal(a.code, 2);
    assert.match(a.err, /pad/);
    const b = await runCli(['read', '--sauce', 'sim']);
    assert.equal(b.code, 2);
    assert.match(b.err, /sauce/);
    const c = await runCli(['read', '--source', 'telepathy:1']);
    assert.equal(c.code, 2);
    assert.match(c.err, /unknown source "telepathy:1"/);
  });

  it('demo seeds an invented scenario into the given database, and refuses to seed it twice', async () => {
    const t = tempDir();
    try {
      const db = join(t.dir, 'demo.db');
      const r = await runCli(['demo', '--db', db, '--json']);
      assert.equal(r.code, 0, r.err);
      const s = JSON.parse(r.out);
      assert.equal(s.units, 6);
      assert.equal(s.sessions, 6);
      const conn = new Database(db, { readonly: true });
      const revs = conn.prepare('SELECT COUNT(*) AS n FROM revisions').get() as { n: number };
      const kept = conn.prepare('SELECT COUNT(*) AS n FROM readings WHERE kept = 1').get() as { n: number };
      // Revision R2's better layout shows as a deeper carrier null than R1's, in the stored readings.
      const best = conn
        .prepare(
          `SELECT r.name AS rev, MIN(x.dbm_dut) AS best FROM readings_wide x JOIN sessions s ON s.id = x.session_id
           JOIN units u ON u.id = s.unit_id JOIN revisions r ON r.id = u.revision_id
           WHERE x.kept = 1 AND x.role = 'carrier' GROUP BY r.name ORDER BY r.name`,
        )
        .all() as { rev: string; best: number }[];
      conn.close();
      assert.equal(revs.n, 2);
      assert.equal(kept.n, s.keptReadings);
      assert.equal(best.length, 2);
      assert.ok(best[1].best < best[0].best - 5, `R2 deeper than R1: ${JSON.stringify(best)}`);
      const again = await runCli(['demo', '--db', db]);
      assert.equal(again.code, 1);
      assert.match(again.err, /already/);
    } finally {
      t.cleanup();
    }
  });

  it('runs as the installed command (npx nullbench) with a real exit code', () => {
    assert.ok(existsSync('dist/cli.js'), 'npm test builds dist/ first');
    const r = runBin(['read', '--source', 'sim:fast', '--count', '2', '--json']);
    assert.equal(r.code, 0, r.err);
    assert.equal(r.out.trim().split('\n').length, 2);
    const bad = runBin(['frobnicate']);
    assert.equal(bad.code, 2);
  });
});

describe('the command list', () => {
  it('loads each command on demand, under the name the list gives it', async () => {
    const { COMMANDS } = await import('../../main/shells/cli/index');
    assert.ok(COMMANDS.length >= 18);
    for (const entry of COMMANDS) {
      const cmd = await entry.load();
      assert.equal(cmd.name, entry.name);
      assert.ok(entry.summary.length > 20, `${entry.name} has a summary`);
    }
  });

  it('names the default database the same way in every help text: its path', async () => {
    const { COMMANDS } = await import('../../main/shells/cli/index');
    const { defaultDbPath } = await import('../../main/paths');
    for (const entry of COMMANDS) {
      const { usage } = await entry.load();
      if (!usage.includes('--db')) continue;
      assert.ok(usage.includes(`(default: ${defaultDbPath()})`), `${entry.name} --help`);
      assert.ok(!usage.includes("the user's)"), `${entry.name} --help`);
    }
  });
});
