// Two programs on one database: writers wait their turn instead of failing. A large bundle imported by one
// process while another logs at 1000 readings/s lands whole, and the logger loses nothing it acknowledged.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { spawn, spawnSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { exportBundleText } from '../../main/store/bundles';
import { serviceWithSession } from '../helpers/session';
import { tempDir } from '../helpers/tmp';
import { fastLog } from '../helpers/cli';

const BUNDLE_READINGS = 40_000;

/** A bundle of one design whose session holds BUNDLE_READINGS readings. */
async function largeBundle(file: string): Promise<void> {
  const b = await serviceWithSession();
  try {
    b.store.tx(() => {
      for (let i = 0; i < BUNDLE_READINGS; i++)
        b.store.addReading({
          sessionId: b.session.id,
          t: Date.parse('2026-11-30T10:00:00Z') + i * 40,
          freqHz: 7.1e6,
          role: 'carrier',
          raw: -60 + (i % 50) / 10,
          dbmRx: -60 + (i % 50) / 10,
          dbmDut: -10 + (i % 50) / 10,
          uDb: 1.2,
          settled: true,
          kept: false,
          floorLimited: false,
          overload: false,
          trims: { A: 5, B: 5 },
          calibration: null,
          path: [{ kind: 'pad', db: 50 }],
        });
    });
    writeFileSync(file, exportBundleText(b.store));
  } finally {
    await b.cleanup();
  }
}

describe('two programs writing one database', () => {
  it(`an import of ${BUNDLE_READINGS} readings waits for a logger at 1000 readings/s, and both land whole`, async () => {
    const tmp = tempDir();
    try {
      const db = join(tmp.dir, 'bench.db');
      const bundle = join(tmp.dir, 'big.json');
      await largeBundle(bundle);
      const log = spawn(process.execPath, ['bin/nullbench.js', ...fastLog(db, 1000, '--for-s', '6')], {
        stdio: ['ignore', 'pipe', 'pipe'],
      });
      let out = '';
      let err = '';
      log.stdout.on('data', (b: Buffer) => (out += b.toString()));
      log.stderr.on('data', (b: Buffer) => (err += b.toString()));
      const ended = new Promise<number | null>((r) => log.on('close', (code) => r(code)));
      // Wait (on the logger's own output, with a generous outer limit) until readings flow.
      const flowing = await new Promise<boolean>((resolve) => {
        const outer = setTimeout(() => resolve(false), 60_000);
        const look = () => {
          if (out.split('\n').length > 50) {
            clearTimeout(outer);
            log.stdout.off('data', look);
            resolve(true);
          }
        };
        log.stdout.on('data', look);
        log.on('close', () => resolve(false));
      });
      assert.ok(flowing, `the logger never got going: ${err}`);
      const imp = spawnSync(process.execPath, ['bin/nullbench.js', 'import', '--db', db, bundle], {
        encoding: 'utf8',
        timeout: 120_000,
      });
      const logCode = await ended;
      assert.equal(imp.status, 0, `import: ${imp.stderr}`);
      assert.equal(logCode, 0, `log: ${err}`);
      const acks = out
        .split('\n')
        .slice(0, -1)
        .map((l) => JSON.parse(l) as { id: number });
      const conn = new Database(db, { readonly: true });
      try {
        const has = conn.prepare('SELECT 1 FROM readings WHERE id = ?');
        const missing = acks.filter((a) => !has.get(a.id));
        assert.equal(missing.length, 0, `${missing.length} acknowledged readings are missing`);
        const n = (conn.prepare('SELECT COUNT(*) AS n FROM readings').get() as { n: number }).n;
        assert.equal(n, acks.length + BUNDLE_READINGS, 'readings stored: the logged ones plus the bundle');
      } finally {
        conn.close();
      }
    } finally {
      tmp.cleanup();
    }
  });
});
