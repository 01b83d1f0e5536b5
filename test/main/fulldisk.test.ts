// A full disk (a small tmpfs, mounted and unmounted here; skipped with the reason where mounting is not
// allowed): log stops cleanly with one closing line naming the file, the count stored and how to continue,
// keeps every acknowledged reading and leaves the session open to continue; a long-running service stops
// reading, says why in its status and keeps answering.
import { after, before, describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, rmdirSync, rmSync, statfsSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { Service } from '../../main/service';
import { createSource } from '../../main/sources';
import { Store } from '../../main/store/store';
import { TRIMS } from '../helpers/session';
import { tempDir } from '../helpers/tmp';
import { fastLog } from '../helpers/cli';

/** Fills the file system with a filler file, leaving about `leave` bytes free. */
function fill(dir: string, leave: number): string {
  const st = statfsSync(dir);
  const free = st.bavail * st.bsize;
  const filler = join(dir, 'filler');
  writeFileSync(filler, Buffer.alloc(Math.max(0, free - leave)));
  return filler;
}

describe('a full disk', () => {
  const tmp = tempDir();
  const disk = join(tmp.dir, 'disk');
  let skip = '';

  before(() => {
    mkdirSync(disk);
    try {
      execFileSync('mount', ['-t', 'tmpfs', '-o', 'size=4m', 'tmpfs', disk], { stdio: 'pipe' });
    } catch (e) {
      skip = `mounting a tmpfs is not allowed here (${(e as Error).message.split('\n')[0]})`;
    }
  });

  after(() => {
    if (!skip) execFileSync('umount', [disk]);
    if (existsSync(disk)) rmdirSync(disk);
    tmp.cleanup();
  });

  it('stops log with its closing line, keeps what it acknowledged, and can be continued after', (t) => {
    if (skip) return t.skip(skip);
    const db = join(disk, 'log.db');
    const made = spawnSync(process.execPath, [
      'bin/nullbench.js',
      'add',
      '--db',
      db,
      '--design',
      'Fen Rail 80',
    ]);
    assert.equal(made.status, 0, String(made.stderr));
    const filler = fill(disk, 600_000);
    const r = spawnSync(process.execPath, ['bin/nullbench.js', ...fastLog(db, 1000, '--for-s', '60')], {
      encoding: 'utf8',
      timeout: 120_000,
      maxBuffer: 64 * 1024 * 1024,
    });
    assert.equal(r.status, 1, `log ended with ${r.status}: ${r.stderr}`);
    assert.doesNotMatch(r.stderr, /^\s+at /m, 'a stack trace was printed');
    const acks = r.stdout
      .split('\n')
      .slice(0, -1)
      .map((l) => JSON.parse(l) as { id: number; session_id: string });
    assert.ok(acks.length > 0, 'nothing was stored before the disk filled');
    const id = acks[0].session_id;
    const last = r.stderr.trim().split('\n').at(-1)!;
    assert.match(
      last,
      new RegExp(
        `^stored ${acks.length} readings in session ${id} of ${db.replace(/[.]/g, '\\.')}; stopped \\(see above\\)\\. ` +
          `The session stays open: continue it with nullbench log --db ${db.replace(/[.]/g, '\\.')} --session ${id}$`,
      ),
    );
    assert.match(r.stderr, /error \(EIO\): cannot store the reading: the disk is full/);
    rmSync(filler);
    const conn = new Database(db, { readonly: true });
    const has = conn.prepare('SELECT 1 FROM readings WHERE id = ?');
    assert.deepEqual(
      acks.filter((a) => !has.get(a.id)).map((a) => a.id),
      [],
      'acknowledged readings missing',
    );
    assert.equal(
      (conn.prepare('SELECT ended_at FROM sessions WHERE id = ?').get(id) as { ended_at: string | null })
        .ended_at,
      null,
    );
    conn.close();
    const more = spawnSync(
      process.execPath,
      ['bin/nullbench.js', 'log', '--db', db, '--session', id, '--for-s', '0.3'],
      { encoding: 'utf8', timeout: 120_000 },
    );
    assert.equal(more.status, 0, more.stderr);
    assert.ok(more.stdout.trim().split('\n').length >= 1);
  });

  it('stops a live bench in a long-running service, which says why and keeps answering', async (t) => {
    if (skip) return t.skip(skip);
    const store = new Store(join(disk, 'web.db'));
    const svc = new Service({ store, mode: 'web', createSource: (spec) => createSource(`${spec},fast`) });
    let filler = '';
    try {
      const s = await svc.invoke('startSession', {
        design: 'Fen Rail 80',
        revision: 'A',
        serial: 'FR-1',
        receiver: {
          name: 'sim rx',
          source: 'sim:seed=2',
          calibration: null,
          bandwidthHz: 500,
          maxInputDbm: 10,
        },
        path: [{ kind: 'pad', db: 50 }],
        carrierHz: 3.6e6,
        toneHz: 1000,
        txPepDbm: 30,
        trims: TRIMS,
        open: true,
      });
      filler = fill(disk, 400_000);
      const end = Date.now() + 60_000;
      while (svc.session.bench?.isRunning) {
        assert.ok(Date.now() < end, 'the bench never stopped on the full disk');
        await new Promise((r) => setTimeout(r, 50));
      }
      const st = await svc.invoke('status', {});
      assert.equal(st.activeSessionId, s.id);
      assert.equal(st.live, false);
      assert.match(st.lastError ?? '', /cannot store the reading: the disk is full/);
      // Still answering: reads work, and a write is refused with the reason rather than a crash.
      assert.ok((await svc.invoke('readings', { sessionId: s.id, limit: 5 })).length > 0);
      const w = await svc.call('createDesign', { name: 'Water Rail 160' });
      if (!w.ok) assert.match(w.message, /full/);
    } finally {
      if (filler) rmSync(filler, { force: true });
      await svc.close();
      store.close();
    }
  });
});
