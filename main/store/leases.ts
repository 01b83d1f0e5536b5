// Runs in Node. Session leases (schema 005): one program at a time writes a session live. The holder is named
// by process id, host and program, and renews a heartbeat while it reads; a lease whose holder has died (its
// process is gone on this host, or its heartbeat is stale) is taken over, and the taker is told whose it was.
import { hostname } from 'node:os';
import { BenchError } from '../../app/errors';
import type { Store } from './store';
import { connectionOf } from './connection';

/** How often a holder renews its heartbeat, ms. */
export const HEARTBEAT_MS = 5_000;
/** A heartbeat older than this means the holder is gone (or its process id was reused), ms. */
export const STALE_MS = 60_000;

export interface LeaseHolder {
  sessionId: string;
  pid: number;
  host: string;
  program: string;
  takenAt: string;
  heartbeatAt: string;
}

interface LeaseRow {
  session_id: string;
  pid: number;
  host: string;
  program: string;
  taken_at: string;
  heartbeat_at: string;
}

const toHolder = (r: LeaseRow): LeaseHolder => ({
  sessionId: r.session_id,
  pid: r.pid,
  host: r.host,
  program: r.program,
  takenAt: r.taken_at,
  heartbeatAt: r.heartbeat_at,
});

/** Whether a process with this id runs on this machine (a process we may not signal still runs). */
function processRuns(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === 'EPERM';
  }
}

/** "log (PID 4242 on bench-pc) since 2026-12-03T10:00:00Z": who holds a lease, for messages. */
export function describeHolder(h: LeaseHolder): string {
  return `${h.program} (PID ${h.pid} on ${h.host}) since ${h.takenAt}`;
}

export class LeaseRepo {
  private readonly db;
  private readonly host = hostname();

  constructor(private readonly store: Store) {
    this.db = connectionOf(store);
  }

  /** Whether a lease's holder is alive: this process, or a running process with a fresh heartbeat. */
  alive(h: LeaseHolder, at = Date.now()): boolean {
    if (this.mine(h)) return true;
    const fresh = at - Date.parse(h.heartbeatAt) < STALE_MS;
    return h.host === this.host ? fresh && processRuns(h.pid) : fresh;
  }

  private mine(h: LeaseHolder): boolean {
    return h.pid === process.pid && h.host === this.host;
  }

  holder(sessionId: string): LeaseHolder | null {
    const r = this.db.prepare('SELECT * FROM session_leases WHERE session_id = ?').get(sessionId) as
      LeaseRow | undefined;
    return r ? toHolder(r) : null;
  }

  /**
   * Takes the session's lease for this process, or refuses (ECONFLICT) with the living holder's name.
   * @returns the dead holder it took over from, if any
   */
  take(sessionId: string, program: string): LeaseHolder | null {
    return this.store.tx(() => {
      const held = this.holder(sessionId);
      if (held && !this.mine(held) && this.alive(held))
        throw new BenchError(
          'ECONFLICT',
          `this session is being written live by ${describeHolder(held)}: close it there first, or start a ` +
            'new session; another program may read it meanwhile',
          'sessionId',
        );
      const at = new Date().toISOString();
      this.db
        .prepare(
          `INSERT INTO session_leases (session_id, pid, host, program, taken_at, heartbeat_at)
           VALUES (?, ?, ?, ?, ?, ?)
           ON CONFLICT (session_id) DO UPDATE SET pid = excluded.pid, host = excluded.host,
             program = excluded.program, taken_at = excluded.taken_at, heartbeat_at = excluded.heartbeat_at`,
        )
        .run(sessionId, process.pid, this.host, program, at, at);
      return held && !this.mine(held) ? held : null;
    });
  }

  /** Renews this process's heartbeat on the lease; false when the lease is no longer ours. */
  beat(sessionId: string): boolean {
    return (
      this.db
        .prepare('UPDATE session_leases SET heartbeat_at = ? WHERE session_id = ? AND pid = ? AND host = ?')
        .run(new Date().toISOString(), sessionId, process.pid, this.host).changes === 1
    );
  }

  /** Gives the lease back, if this process holds it. */
  release(sessionId: string): void {
    this.db
      .prepare('DELETE FROM session_leases WHERE session_id = ? AND pid = ? AND host = ?')
      .run(sessionId, process.pid, this.host);
  }
}
