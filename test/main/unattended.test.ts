// The web mode's unattended-stop rule (main/shells/web.ts, main/service/session.ts): with no window on the
// event stream for the stated time, reading stops and nothing more is stored; the session is not ended, and
// the next call from a window resumes it. A window that stays connected keeps it reading.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { request } from 'node:http';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { startWeb, type Served } from '../../main/shells/cli/serve';
import { tempDir } from '../helpers/tmp';

/** Waits for `cond`, polling, up to a generous limit (a loaded 2-core machine is slow, never wrong). */
async function until(cond: () => Promise<boolean> | boolean, what: string, ms = 30_000): Promise<void> {
  const end = Date.now() + ms;
  while (Date.now() < end) {
    if (await cond()) return;
    await new Promise((r) => setTimeout(r, 100));
  }
  throw new Error(`timed out waiting for ${what}`);
}

describe('web mode: reading stops when nobody is watching', { timeout: 120_000 }, () => {
  let served: Served;
  let dir: ReturnType<typeof tempDir>;
  let dbFile: string;

  const call = async <T>(name: string, args: object = {}): Promise<T> => {
    const res = await fetch(`${served.url}api/call/${name}`, {
      method: 'POST',
      headers: {
        'Content-Type': 'application/json',
        Origin: served.url.slice(0, -1),
        'Sec-Fetch-Site': 'same-origin',
      },
      body: JSON.stringify(args),
    });
    const body = (await res.json()) as { ok: boolean; value?: T; message?: string };
    if (!body.ok) throw new Error(body.message);
    return body.value as T;
  };
  const readings = () => {
    const db = new Database(dbFile, { readonly: true, fileMustExist: true });
    try {
      return (db.prepare('SELECT COUNT(*) AS n FROM readings').get() as { n: number }).n;
    } finally {
      db.close();
    }
  };
  /** A window: the event stream held open until `close()`. */
  const window = () =>
    new Promise<{ close(): void }>((ok, bad) => {
      const req = request(`${served.url}api/events`, { headers: { Accept: 'text/event-stream' } }, (res) => {
        res.once('data', () => ok({ close: () => req.destroy() }));
      });
      req.on('error', (e) => (e.message.includes('socket hang up') ? undefined : bad(e)));
      req.end();
    });

  before(async () => {
    dir = tempDir();
    dbFile = join(dir.dir, 'u.db');
    served = await startWeb({ dbPath: dbFile, port: 0, unattendedStopS: 1 });
  });
  after(async () => {
    await served?.stop();
    dir?.cleanup();
  });

  it('states the rule in the status', async () => {
    const s = await call<{ unattendedStopS: number | null; pausedSessionId: string | null }>('status');
    assert.equal(s.unattendedStopS, 1);
    assert.equal(s.pausedSessionId, null);
  });

  it('keeps reading while a window is open', async () => {
    const w = await window();
    try {
      await call('startSession', {
        design: 'Wren SSB-20',
        revision: 'A',
        serial: 'WR20-0100',
        receiver: { name: 'rx', source: 'sim', calibration: null, bandwidthHz: 500, maxInputDbm: 10 },
        path: [{ kind: 'pad', db: 40 }],
        carrierHz: 14.2e6,
        toneHz: 1000,
        txPepDbm: 30,
        trims: [{ key: 'A', label: 'R', unit: 'turns', min: 0, max: 10 }],
        open: true,
      });
      const n0 = readings();
      // Three times the stated second with the window open: still reading, and storing.
      await new Promise((r) => setTimeout(r, 3000));
      const s = await call<{ live: boolean }>('status');
      assert.equal(s.live, true, JSON.stringify(s));
      await until(() => readings() > n0, 'readings to be stored');
    } finally {
      w.close();
    }
  });

  it('stops reading once no window has been open for the stated time, and stores nothing more', async () => {
    // No call in between (a call from a window would resume): watch the database only.
    await new Promise((r) => setTimeout(r, 2500));
    const a = readings();
    await new Promise((r) => setTimeout(r, 1500));
    assert.equal(readings(), a, 'nothing stored while nobody watches');
    const db = new Database(dbFile, { readonly: true });
    try {
      const ended = db.prepare('SELECT ended_at FROM sessions').get() as { ended_at: string | null };
      assert.equal(ended.ended_at, null, 'the session is stopped, not ended');
    } finally {
      db.close();
    }
  });

  it('resumes the same session at the next call from a window', async () => {
    const s = await call<{ live: boolean; activeSessionId: string | null; pausedSessionId: string | null }>(
      'status',
    );
    assert.equal(s.live, true);
    assert.equal(s.pausedSessionId, null);
    assert.ok(s.activeSessionId);
    const n = readings();
    await until(() => readings() > n, 'readings again after the resume');
  });
});
