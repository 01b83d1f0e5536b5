// Link faults, seen from what is stored: the real rig-control daemon killed and restarted under the `log`
// command, the serial line (a socat pty pair) closed and reopened under a live session, replies cut mid-line,
// and a plan whose daemon stays away. Each time: the fault is a gap, recorded and closed when readings come
// back; every acknowledged reading is stored; nothing that was not a reading is stored; a plan stops cleanly
// and resumes. (The sources' own reconnect logic is tested in rignet.test.ts and serial.test.ts.)
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import type { PlanView } from '../../app/api';
import { main } from '../../main/shells/cli/index';
import { Service } from '../../main/service';
import { RigServer } from '../../main/sim/rigserver';
import { SimSerialDevice } from '../../main/sim/serialdevice';
import { Store } from '../../main/store/store';
import { assertNoBadRows } from '../helpers/fuzz';
import { ptyPair } from '../helpers/pty';
import { startRigctld } from '../helpers/rigctld';
import { tempDir } from '../helpers/tmp';
import { connectionOf } from '../../main/store/connection';

async function until(ok: () => boolean, ms: number, what: string): Promise<void> {
  const end = Date.now() + ms;
  while (!ok()) {
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 25));
  }
}

interface GapRow {
  t_start_ms: number;
  t_end_ms: number | null;
  code: string;
}

/** The gaps of a session are closed, and no stored reading lies inside one. */
function assertGapsClean(db: Database.Database, sessionId: string, codes: RegExp): GapRow[] {
  const gaps = db
    .prepare('SELECT t_start_ms, t_end_ms, code FROM gaps WHERE session_id = ?')
    .all(sessionId) as GapRow[];
  assert.ok(gaps.length >= 1, 'the fault was not recorded as a gap');
  assert.ok(
    gaps.some((g) => codes.test(g.code)),
    `gap codes ${gaps.map((g) => g.code).join(', ')}`,
  );
  const ts = (
    db.prepare('SELECT t_ms FROM readings_wide WHERE session_id = ?').all(sessionId) as { t_ms: number }[]
  ).map((r) => r.t_ms);
  for (const g of gaps) {
    assert.ok(
      g.t_end_ms !== null && g.t_end_ms >= g.t_start_ms,
      'a gap was left open after readings came back',
    );
    assert.ok(!ts.some((t) => t > g.t_start_ms && t < g.t_end_ms!), 'a reading lies inside a gap');
  }
  return gaps;
}

function service(dir: string) {
  const store = new Store(join(dir, 'faults.db'));
  const svc = new Service({ store, mode: 'cli', live: { settleTimeoutMs: 1500 } });
  const notices: string[] = [];
  svc.listen('notice', (n) => notices.push(`${n.code ?? ''}: ${n.message}`));
  return {
    store,
    svc,
    notices,
    async session(source: string) {
      const d = await svc.invoke('createDesign', { name: `Faults ${source}` });
      const r = await svc.invoke('createRevision', { designId: d.id, name: 'A' });
      const u = await svc.invoke('createUnit', {
        revisionId: r.id,
        serial: `F-${Math.random().toString(36).slice(2, 8)}`,
      });
      return svc.invoke('createSession', {
        unitId: u.id,
        receiver: { name: 'bench rx', source, calibration: null, bandwidthHz: 500, maxInputDbm: 10 },
        path: [{ kind: 'pad', db: 50 }],
        carrierHz: 7.1e6,
        toneHz: 1000,
        txPepDbm: 30,
        trims: [{ key: 'A', label: 'Balance R', unit: 'turns', min: 0, max: 10 }],
      });
    },
    async close() {
      await svc.close();
      store.close();
    },
  };
}

describe('link faults, end to end', { timeout: 120_000 }, () => {
  it('log over the real daemon killed and restarted: every acknowledged reading stored, the outage a closed gap', async () => {
    const d = await startRigctld();
    const tmp = tempDir();
    const db = join(tmp.dir, 'log.db');
    const acks: { id: number; raw: number; dbm_rx: number; t: number; session_id: string }[] = [];
    let err = '';
    try {
      const run = main(
        [
          'log',
          '--db',
          db,
          '--source',
          `net:127.0.0.1:${d.port},timeout=300`,
          '--rate-hz',
          '20',
          '--for-s',
          '7',
          '--tx-pep-dbm',
          '30',
          '--max-input-dbm',
          '10',
          '--path',
          'pad:50',
        ],
        { out: (s) => acks.push(JSON.parse(s)), err: (s) => (err += s) },
      );
      await until(() => acks.length >= 10, 10_000, 'the first readings');
      await d.kill();
      const before = acks.length;
      await new Promise((r) => setTimeout(r, 1500));
      // Nothing acknowledged while the daemon was gone, beyond what was already on its way.
      assert.ok(acks.length <= before + 1, `${acks.length - before} readings acknowledged with no daemon`);
      await d.restart();
      const code = await run;
      assert.equal(code, 0, err);
      assert.ok(
        acks.length > before + 10,
        `only ${acks.length - before} readings after the daemon came back`,
      );
      assert.match(err, /EIO.*rig-control daemon at 127\.0\.0\.1:\d+/);
      // The same fault is reported once, not once per retry.
      assert.ok(
        err.split('\n').filter((l) => /closed the connection|connection refused/.test(l)).length <= 4,
        err,
      );
      const conn = new Database(db, { readonly: true });
      try {
        const get = conn.prepare('SELECT raw, dbm_rx, t_ms FROM readings WHERE id = ?');
        for (const a of acks) {
          const row = get.get(a.id) as { raw: number; dbm_rx: number; t_ms: number } | undefined;
          assert.ok(row, `acknowledged reading ${a.id} is missing`);
          assert.deepEqual([row.raw, row.dbm_rx, row.t_ms], [a.raw, a.dbm_rx, a.t]);
          // A STRENGTH the daemon gave: a whole number of dB re S9, and R.1 of it (IARU R.1: S9 = -73 dBm).
          assert.ok(Number.isInteger(row.raw));
          assert.equal(row.dbm_rx, -73 + row.raw);
        }
        assertGapsClean(conn, acks[0].session_id, /EIO/);
        assertNoBadRows(conn, 'after the outage');
      } finally {
        conn.close();
      }
    } finally {
      await d.kill();
      tmp.cleanup();
    }
  });

  it("live session over a serial line closed and reopened: the gap recorded and closed, only the device's values stored", async () => {
    const tmp = tempDir();
    const pty = await ptyPair(tmp.dir);
    // Every value the device will ever send, each different: a stored reading must be one of them.
    const script = Array.from({ length: 4000 }, (_, i) => Math.round((-40 + (i % 800) / 10) * 10) / 10);
    let dev = new SimSerialDevice({ path: pty.b, commandSet: 'db-over-s9', script });
    await dev.start();
    const b = service(tmp.dir);
    try {
      const s = await b.session(`serial:${pty.a}@38400,template=db-over-s9`);
      await b.svc.invoke('openSession', { sessionId: s.id });
      const count = () =>
        (connectionOf(b.store).prepare('SELECT COUNT(*) AS n FROM readings').get() as { n: number }).n;
      await until(() => count() >= 10, 10_000, 'readings over the pty');
      await dev.stop();
      await pty.kill();
      await until(() => b.notices.some((n) => /^EIO/.test(n)), 10_000, 'the fault notice');
      const during = count();
      await new Promise((r) => setTimeout(r, 1000));
      assert.equal(count(), during, 'readings were stored while the line was gone');
      assert.ok(b.svc.status().lastError, 'the status shows the fault');
      await pty.restart();
      dev = new SimSerialDevice({ path: pty.b, commandSet: 'db-over-s9', script: script.slice(2000) });
      await dev.start();
      await until(() => count() >= during + 10, 20_000, 'readings after the line came back');
      await until(() => b.svc.status().lastError === null, 5000, 'the status to clear');
      await b.svc.invoke('closeSession', {});
      const raws = b.store.readings(s.id, { limit: 100_000 }).map((r) => r.raw);
      const sent = new Set(script);
      assert.ok(
        raws.every((v) => sent.has(v)),
        'a stored value is not one the device sent',
      );
      assertGapsClean(connectionOf(b.store), s.id, /EIO/);
      assertNoBadRows(connectionOf(b.store), 'after the pty came back');
    } finally {
      await b.close();
      await dev.stop();
      await pty.kill();
      tmp.cleanup();
    }
  });

  it('replies cut mid-line: each a gap closed by the next reading; only whole replies stored, none twice', async () => {
    const tmp = tempDir();
    // Every value different and rising: stored readings must rise too (none twice, none out of turn).
    const script = Array.from({ length: 3000 }, (_, i) => Math.round((-50 + i / 100) * 100) / 100);
    const srv = new RigServer({ script });
    const port = await srv.listen();
    const b = service(tmp.dir);
    try {
      const s = await b.session(`net:127.0.0.1:${port},timeout=200`);
      await b.svc.invoke('openSession', { sessionId: s.id });
      const count = () => b.store.readings(s.id, { limit: 100_000 }).length;
      for (let k = 0; k < 3; k++) {
        const n = count();
        await until(() => count() >= n + 5, 10_000, 'readings');
        srv.inject('cut');
      }
      await until(
        () => b.notices.filter((x) => /^ETIMEOUT: .*cut reply/.test(x)).length >= 3,
        10_000,
        'three cut replies',
      );
      const n = count();
      await until(() => count() >= n + 5, 10_000, 'readings after the last cut');
      await b.svc.invoke('closeSession', {});
      const stored = b.store.readings(s.id, { limit: 100_000 });
      // The server answers the script in turn: stored readings follow it, skipping only the cut ones.
      const raws = stored.map((r) => r.raw);
      const sent = new Set(script);
      assert.ok(
        raws.every((v) => sent.has(v)),
        'a stored value is not one the server sent',
      );
      assert.ok(
        raws.every((v, k) => k === 0 || v > raws[k - 1]),
        'a value was stored twice or out of turn',
      );
      for (const r of stored) assert.ok(Math.abs(r.dbmRx - (-73 + r.raw)) < 1e-9); // IARU R.1: S9 = -73 dBm
      const gaps = assertGapsClean(connectionOf(b.store), s.id, /ETIMEOUT/);
      assert.ok(gaps.filter((g) => g.code === 'ETIMEOUT').length >= 3);
      assertNoBadRows(connectionOf(b.store), 'after cut replies');
    } finally {
      await b.close();
      await srv.close();
      tmp.cleanup();
    }
  });

  it('a plan whose daemon stays away waits without storing anything, stops cleanly when cancelled, and resumes to the end', async () => {
    const d = await startRigctld();
    const tmp = tempDir();
    const b = service(tmp.dir);
    try {
      const s = await b.session(`net:127.0.0.1:${d.port},timeout=300`);
      await b.svc.invoke('openSession', { sessionId: s.id });
      const progress: string[] = [];
      b.svc.listen('progress', (p) => progress.push(p.message));
      const v0 = await b.svc.invoke('planStart', {
        plan: { points: ['carrier', 'upper', 'lower'], average: 3, settleMs: 100, settleTimeoutMs: 600 },
      });
      const plan = () => b.svc.invoke('getPlan', { planId: v0.id });
      await until(() => progress.some((m) => /dBm/.test(m)), 20_000, 'the first point');
      await d.kill();
      await until(
        () => progress.some((m) => /waiting for the receiver link|link fault/.test(m)),
        20_000,
        'the plan to wait',
      );
      const readingsDuring = b.store.readings(s.id, { limit: 100_000 }).length;
      await new Promise((r) => setTimeout(r, 1200));
      assert.equal(
        b.store.readings(s.id, { limit: 100_000 }).length,
        readingsDuring,
        'stored with no daemon',
      );
      const mid = await plan();
      assert.ok(mid.active && mid.state === 'running', `state ${mid.state}`);
      const stopped = await b.svc.invoke('planCancel', { planId: v0.id });
      await until(() => !b.svc.plans.get(v0.id).active, 10_000, 'the plan to stop');
      const cancelled: PlanView = await plan();
      assert.equal(cancelled.state, 'cancelled', stopped.message);
      const doneBefore = cancelled.points.filter((p) => p.state === 'done').length;
      assert.ok(doneBefore >= 1 && doneBefore < 3, `${doneBefore} points done before the cancel`);
      await d.restart();
      await b.svc.invoke('planResume', { planId: v0.id });
      const end = await b.svc.plans.wait(v0.id);
      assert.equal(end.state, 'done', end.message);
      assert.ok(end.points.every((p) => p.state === 'done'));
      await b.svc.invoke('closeSession', {});
      for (const r of b.store.readings(s.id, { limit: 100_000 })) {
        assert.ok(Number.isInteger(r.raw));
        assert.equal(r.dbmRx, -73 + r.raw); // IARU R.1: S9 = -73 dBm, 1 dB per dB of STRENGTH
      }
      assertGapsClean(connectionOf(b.store), s.id, /EIO/);
      assertNoBadRows(connectionOf(b.store), 'after the plan');
    } finally {
      await b.close();
      await d.kill();
      tmp.cleanup();
    }
  });
});
