// Ownership of a live session (docs/design.md § The house): one program at a time writes a session, named by
// its lease; a second program is refused with who holds it, never marks a plan another program is running
// "interrupted", and never starts a second runner; a lease whose holder died is taken over, said so; nothing is
// stored in a session after its end; an ended session opens for review only, and a new one can repeat its set-up.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { Service } from '../../main/service';
import { Store } from '../../main/store/store';
import { connectionOf } from '../../main/store/connection';
import { serviceWithSession } from '../helpers/session';
import { tempDir } from '../helpers/tmp';
import { fastLog } from '../helpers/cli';

const bin = (args: string[]) =>
  spawnSync(process.execPath, ['bin/nullbench.js', ...args], { encoding: 'utf8', timeout: 120_000 });

/** Polls a condition every 50 ms up to a generous outer limit; the test waits on states, not on the clock. */
async function until<T>(fn: () => T | null | undefined | false, what: string, ms = 60_000): Promise<T> {
  const end = Date.now() + ms;
  for (;;) {
    const v = fn();
    if (v) return v;
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 50));
  }
}

function started(args: string[]): {
  child: ChildProcess;
  out: () => string;
  err: () => string;
  done: Promise<number | null>;
} {
  const child = spawn(process.execPath, ['bin/nullbench.js', ...args], { stdio: ['ignore', 'pipe', 'pipe'] });
  let out = '';
  let err = '';
  child.stdout!.on('data', (b: Buffer) => (out += b.toString()));
  child.stderr!.on('data', (b: Buffer) => (err += b.toString()));
  const done = new Promise<number | null>((r) => child.on('close', (code) => r(code)));
  return { child, out: () => out, err: () => err, done };
}

describe('one program at a time writes a session', () => {
  it('refuses a second program with the holder named, in the service and in log --session', async () => {
    const tmp = tempDir();
    const db = join(tmp.dir, 'bench.db');
    const log = started(fastLog(db, 50));
    try {
      await until(() => log.out().split('\n').length > 3, 'the first readings');
      const sessionId = (JSON.parse(log.out().split('\n')[0]) as { session_id: string }).session_id;
      const store = new Store(db);
      const svc = new Service({ store, mode: 'web' });
      try {
        const r = await svc.call('openSession', { sessionId });
        assert.equal(r.ok, false);
        if (!r.ok) {
          assert.equal(r.code, 'ECONFLICT');
          assert.match(
            r.message,
            new RegExp(
              `being written live by nullbench on the command line \\(PID ${log.child.pid} on .+\\) since`,
            ),
          );
        }
      } finally {
        await svc.close();
        store.close();
      }
      const second = bin(['log', '--db', db, '--session', sessionId, '--for-s', '1']);
      assert.equal(second.status, 1, second.stderr);
      assert.match(second.stderr, /ECONFLICT.*being written live by nullbench on the command line/);
      log.child.kill('SIGINT');
      assert.equal(await log.done, 0, log.err());
      // Its one writer gone, the session has ended: readings only inside its span.
      const conn = new Database(db, { readonly: true });
      const s = conn.prepare('SELECT started_at, ended_at FROM sessions WHERE id = ?').get(sessionId) as {
        started_at: string;
        ended_at: string;
      };
      const last = conn
        .prepare('SELECT MAX(t_ms) AS t FROM readings_wide WHERE session_id = ?')
        .get(sessionId) as {
        t: number;
      };
      assert.ok(last.t <= Date.parse(s.ended_at), 'a reading lies after the end');
      assert.equal(
        (conn.prepare('SELECT COUNT(*) AS n FROM session_leases').get() as { n: number }).n,
        0,
        'the lease was not given back',
      );
      conn.close();
    } finally {
      log.child.kill('SIGKILL');
      await log.done;
      tmp.cleanup();
    }
  });

  it('never marks a plan another program runs interrupted, and refuses to resume it there', async () => {
    const tmp = tempDir();
    const db = join(tmp.dir, 'bench.db');
    assert.equal(
      bin(['add', '--db', db, '--design', 'Marsh Hen 40', '--revision', 'A', '--unit', 'MH-01']).status,
      0,
    );
    const plan = started([
      'plan',
      'run',
      '--db',
      db,
      '--unit',
      'MH-01',
      '--source',
      'sim',
      '--max-input-dbm',
      '10',
      '--path',
      'pad:50',
      '--pep-w',
      '1',
      '--carrier-hz',
      '7100000',
      '--tone-hz',
      '1000',
      '--points',
      'carrier,upper,lower,imd3u,imd3l,imd5u,imd5l,h2,h3,h4,h5',
      '--average',
      '200',
      '--settle-ms',
      '0',
      '--json',
    ]);
    try {
      const runId = await until(() => {
        const c = new Database(db, { readonly: true, fileMustExist: true });
        try {
          const r = c.prepare("SELECT id FROM plan_runs WHERE state = 'running'").get() as
            { id: string } | undefined;
          return r?.id;
        } catch {
          return undefined; // the schema is still being made
        } finally {
          c.close();
        }
      }, 'the plan to start');
      // Any other command, as before a restart would have: the run stays running.
      assert.equal(bin(['designs', '--db', db]).status, 0);
      assert.equal(bin(['add', '--db', db, '--design', 'Night Heron']).status, 0);
      const show = bin(['plan', 'show', runId, '--db', db, '--json']);
      assert.equal((JSON.parse(show.stdout) as { state: string }).state, 'running', show.stderr);
      const resume = bin(['plan', 'resume', runId, '--db', db]);
      assert.notEqual(resume.status, 0);
      assert.match(resume.stderr, /ECONFLICT.*being written live by nullbench on the command line/);
    } finally {
      plan.child.kill('SIGINT');
      await plan.done;
      tmp.cleanup();
    }
  });

  it('takes over a lease whose holder has died, and says whose it was', async () => {
    const t = await serviceWithSession();
    try {
      const notices: string[] = [];
      t.service.listen('notice', (n) => notices.push(n.message));
      connectionOf(t.store)
        .prepare(
          `INSERT INTO session_leases (session_id, pid, host, program, taken_at, heartbeat_at)
           VALUES (?, 2147483646, ?, 'the web server', '2026-12-01T08:00:00.000Z', '2026-12-01T08:00:00.000Z')`,
        )
        .run(t.session.id, (await import('node:os')).hostname());
      await t.service.invoke('openSession', { sessionId: t.session.id });
      assert.ok(
        notices.some((m) =>
          /took this session over from the web server \(PID 2147483646 on .+\) since 2026-12-01/.test(m),
        ),
        notices.join('\n'),
      );
    } finally {
      await t.cleanup();
    }
  });
});

describe('a session that has ended', () => {
  it('stops a live bench whose session another program ended, storing nothing after the end', async () => {
    const t = await serviceWithSession();
    try {
      await t.service.invoke('openSession', { sessionId: t.session.id });
      await until(() => t.store.readings(t.session.id, { limit: 5 }).length >= 5, 'readings');
      const other = new Store(t.store.file);
      other.endSession(t.session.id);
      other.close();
      await until(() => !t.service.session.bench?.isRunning, 'the bench to stop');
      const st = await t.service.invoke('status', {});
      assert.equal(st.live, false);
      assert.match(st.lastError ?? '', /this session ended at .*: nothing more is stored in it/);
      const end = Date.parse(t.store.getSession(t.session.id).endedAt!);
      const after = t.store.readings(t.session.id, { limit: 1_000_000 }).filter((r) => r.t > end);
      assert.deepEqual(after, [], 'readings stored after the end');
    } finally {
      await t.cleanup();
    }
  });

  it('ends by the endSession call, reopens for review only, and repeatSession starts a like one', async () => {
    const t = await serviceWithSession();
    try {
      await t.service.invoke('openSession', { sessionId: t.session.id });
      await until(() => t.store.readings(t.session.id, { limit: 3 }).length >= 3, 'readings');
      const ended = await t.service.invoke('endSession', {});
      assert.ok(ended.endedAt);
      const n = t.store.readings(t.session.id, { limit: 1_000_000 }).length;
      const review = await t.service.invoke('openSession', { sessionId: t.session.id });
      assert.equal(review.id, t.session.id);
      const st = await t.service.invoke('status', {});
      assert.deepEqual([st.activeSessionId, st.sessionEnded, st.live], [t.session.id, true, false]);
      const kept = await t.service.call('keep', {});
      assert.equal(kept.ok, false, 'a reading was kept in an ended session');
      await new Promise((r) => setTimeout(r, 300));
      assert.equal(
        t.store.readings(t.session.id, { limit: 1_000_000 }).length,
        n,
        'readings added in review',
      );
      const like = await t.service.invoke('repeatSession', { sessionId: t.session.id });
      assert.notEqual(like.id, t.session.id);
      assert.deepEqual(
        [
          like.unitId,
          like.receiver.source,
          like.path,
          like.txPepDbm,
          like.toneHz,
          like.carrierHz,
          like.trims,
        ],
        [
          ended.unitId,
          ended.receiver.source,
          ended.path,
          ended.txPepDbm,
          ended.toneHz,
          ended.carrierHz,
          ended.trims,
        ],
      );
      await until(() => t.store.readings(like.id, { limit: 3 }).length >= 3, 'readings in the new session');
      assert.equal((await t.service.invoke('status', {})).sessionEnded, false);
    } finally {
      await t.cleanup();
    }
  });

  it('continues an ended session only when asked, and its notes record both sittings', async () => {
    const t = await serviceWithSession();
    try {
      await t.service.invoke('openSession', { sessionId: t.session.id });
      await until(() => t.store.readings(t.session.id, { limit: 3 }).length >= 3, 'readings');
      const ended = await t.service.invoke('endSession', {});
      const notYet = await t.service.call('continueSession', {
        sessionId: '00000000-0000-4000-8000-000000000000',
      });
      assert.equal(notYet.ok, false, 'an unknown session cannot be continued');
      const again = await t.service.invoke('continueSession', { sessionId: t.session.id });
      assert.equal(again.endedAt, null);
      assert.match(
        again.notes,
        new RegExp(
          `Continued \\d{4}-\\d\\d-\\d\\d \\d\\d:\\d\\d UTC after it had ended ${ended.endedAt!.slice(0, 16).replace('T', ' ')} UTC\\.$`,
        ),
      );
      const st = await t.service.invoke('status', {});
      assert.deepEqual([st.activeSessionId, st.sessionEnded, st.live], [t.session.id, false, true]);
      const n = t.store.readings(t.session.id, { limit: 1_000_000 }).length;
      await until(() => t.store.readings(t.session.id, { limit: 1_000_000 }).length > n, 'readings join it');
      const twice = await t.service.call('continueSession', { sessionId: t.session.id });
      assert.equal(twice.ok, false, 'a session that has not ended is opened, not continued');
    } finally {
      await t.cleanup();
    }
  });

  it('ends a session by id from outside, but not one another running program reads', async () => {
    const t = await serviceWithSession();
    const other = new Service({ store: t.store, mode: 'cli' });
    try {
      await t.service.invoke('openSession', { sessionId: t.session.id });
      // The same process holds the lease here, so the lease counts as alive: refused.
      const refused = await other.call('endSessionById', { sessionId: t.session.id });
      assert.equal(refused.ok, false);
      assert.match(refused.ok ? '' : refused.message, /is reading this session: end it there/);
      await t.service.invoke('closeSession', {});
      const ended = await other.invoke('endSessionById', { sessionId: t.session.id });
      assert.ok(ended.endedAt);
      const twice = await other.call('endSessionById', { sessionId: t.session.id });
      assert.equal(twice.ok, false);
    } finally {
      await other.close();
      await t.cleanup();
    }
  });
});
