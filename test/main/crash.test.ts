// Crash safety: `nullbench log` killed with SIGKILL at random moments. Every reading it acknowledged (a JSON
// line on stdout, printed after the commit) must be in the database, exactly as acknowledged, and the
// database must pass SQLite's own integrity check.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { spawn } from 'node:child_process';
import { existsSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { build } from 'esbuild';
import { ARTIFACTS } from '../helpers/browser';
import { tempDir } from '../helpers/tmp';

const TRIALS = 20;

/** A small seeded generator, so a failing trial can be replayed (the seed is in the failure message). */
function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

interface Ack {
  id: number;
  session_id: string;
  t: number;
  raw: number;
  dbm_dut: number;
  dbm_rx: number;
  u_db: number;
}

interface Trial {
  acks: Ack[];
  signal: NodeJS.Signals | null;
  stderr: string;
}

/**
 * The CLI bundled for this test alone: dist/ is rebuilt by every `npm test` run, and a concurrent rebuild
 * must not pull the program out from under a trial. It sits inside the repository so that node_modules
 * and migrations/ are found as they are for the installed command.
 */
async function bundleCli(): Promise<string> {
  const outfile = join(ARTIFACTS, `crash-cli-${process.pid}`, 'cli.js');
  await build({
    entryPoints: ['main/shells/cli/run.ts'],
    outfile,
    bundle: true,
    platform: 'node',
    format: 'esm',
    packages: 'external',
    logLevel: 'warning',
  });
  return outfile;
}

/** Starts the CLI, kills it with SIGKILL after killAfterMs, and returns what it acknowledged. */
function logAndKill(
  cli: string,
  db: string,
  seed: number,
  rateHz: number,
  killAfterMs: number,
  fromSpawn: boolean,
): Promise<Trial> {
  return new Promise((resolve, reject) => {
    const child = spawn(
      process.execPath,
      [
        cli,
        'log',
        '--db',
        db,
        '--source',
        `sim:seed=${seed},fast`,
        '--rate-hz',
        String(rateHz),
        '--tx-pep-dbm',
        '30',
        '--max-input-dbm',
        '10',
        '--path',
        'coupler:30,pad:20',
      ],
      { stdio: ['ignore', 'pipe', 'pipe'] },
    );
    let out = '';
    let err = '';
    // The kill clock starts when readings begin to flow (or at spawn, for the start-up trials), so a
    // slow start on a loaded machine cannot turn every trial into a kill before the first reading.
    let timer = fromSpawn
      ? setTimeout(() => child.kill('SIGKILL'), killAfterMs)
      : setTimeout(() => child.kill('SIGKILL'), 30_000);
    let flowing = fromSpawn;
    child.stdout.on('data', (b: Buffer) => {
      out += b.toString();
      if (!flowing) {
        flowing = true;
        clearTimeout(timer);
        timer = setTimeout(() => child.kill('SIGKILL'), killAfterMs);
      }
    });
    child.stderr.on('data', (b: Buffer) => (err += b.toString()));
    child.on('error', reject);
    child.on('close', (_code, signal) => {
      clearTimeout(timer);
      // Only whole lines are acknowledgements; a line cut by the kill promised nothing.
      const lines = out.split('\n').slice(0, -1);
      resolve({ acks: lines.map((l) => JSON.parse(l) as Ack), signal, stderr: err });
    });
  });
}

describe('nullbench log under SIGKILL', () => {
  it(`keeps every acknowledged reading through ${TRIALS} kills at random moments, with an intact database`, async (t) => {
    // CRASH_CLI runs the trials against another build (how the test's own sensitivity was checked).
    const cli = process.env.CRASH_CLI ?? (await bundleCli());
    // The suite's one seed (FUZZ_SEED, printed by npm test) unless CRASH_SEED picks another; otherwise the clock.
    const seed = Number(process.env.CRASH_SEED ?? process.env.FUZZ_SEED ?? Date.now() % 1e9);
    const rnd = mulberry32(seed);
    const tmp = tempDir();
    let acked = 0;
    let killedMidRun = 0;
    try {
      for (let trial = 0; trial < TRIALS; trial++) {
        const where = `trial ${trial + 1} (CRASH_SEED=${seed})`;
        // Half the trials log into a database that earlier trials already filled (and were killed over).
        const db = join(tmp.dir, `log-${trial % 2 === 0 ? trial : trial - 1}.db`);
        const rateHz = 20 + Math.round(30 * rnd());
        // One trial in four is killed on the clock from spawn (perhaps during start-up or a migration);
        // the others at a random moment after the first acknowledged reading.
        const fromSpawn = trial % 4 === 3;
        const killAfterMs = (fromSpawn ? 150 : 0) + Math.round(1600 * rnd());
        const r = await logAndKill(cli, db, trial + 1, rateHz, killAfterMs, fromSpawn);
        assert.equal(r.signal, 'SIGKILL', `${where}: the logger ended by itself: ${r.stderr}`);
        if (r.acks.length) killedMidRun++;
        acked += r.acks.length;
        if (!existsSync(db)) {
          assert.equal(r.acks.length, 0, `${where}: readings acknowledged but no database file`);
          continue;
        }
        const conn = new Database(db);
        try {
          assert.equal(conn.pragma('integrity_check', { simple: true }), 'ok', where);
          assert.deepEqual(conn.pragma('foreign_key_check'), [], where);
          const get = conn.prepare(
            'SELECT id, session_id, t_ms, raw, dbm_rx, dbm_dut, u_db FROM readings_wide WHERE id = ?',
          );
          for (const a of r.acks) {
            const row = get.get(a.id) as
              | {
                  id: number;
                  session_id: string;
                  t_ms: number;
                  raw: number;
                  dbm_rx: number;
                  dbm_dut: number;
                  u_db: number;
                }
              | undefined;
            assert.ok(row, `${where}: acknowledged reading ${a.id} is not in the database`);
            assert.deepEqual(
              [row.session_id, row.t_ms, row.raw, row.dbm_rx, row.dbm_dut, row.u_db],
              [a.session_id, a.t, a.raw, a.dbm_rx, a.dbm_dut, a.u_db],
              `${where}: reading ${a.id} differs from what was acknowledged`,
            );
          }
          // Acknowledged in the order stored, none twice.
          const ids = r.acks.map((a) => a.id);
          assert.deepEqual(
            ids,
            [...ids].sort((a, b) => a - b),
            where,
          );
          assert.equal(new Set(ids).size, ids.length, where);
        } finally {
          conn.close();
        }
      }
      t.diagnostic(
        `${TRIALS} SIGKILL trials survived (CRASH_SEED=${seed}): ${acked} acknowledged readings, all present; ` +
          `${killedMidRun} trials killed while readings flowed`,
      );
      // The test means something only if most kills landed while readings were being stored.
      assert.ok(killedMidRun >= TRIALS / 2, `only ${killedMidRun} trials were killed mid-run`);
      assert.ok(acked >= 100, `only ${acked} readings acknowledged across all trials`);
    } finally {
      tmp.cleanup();
      if (!process.env.CRASH_CLI) rmSync(join(cli, '..'), { recursive: true, force: true });
    }
  });
});
