// Long sessions: the live bench in compressed time (the simulated bench on its virtual clock) keeps memory
// flat however many readings it stores, and a session's record comes back decimated for a chart with every
// null kept. The 24-hour run with its figures is test/bench/longrun.bench.ts; this is its quick guard.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { connect } from 'node:net';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { minMaxBuckets } from '../../app/decimate';
import { WebShell } from '../../main/shells/web';
import { serviceWithSession } from '../helpers/session';

setFlagsFromString('--expose-gc');
const gc = runInNewContext('gc') as () => void;

function heapAfterGc(): number {
  gc();
  gc();
  return process.memoryUsage().heapUsed;
}

/** Resolves once the service has stored `n` more readings. */
function readings(
  service: { listen: (e: 'reading', cb: () => void) => () => void },
  n: number,
): Promise<void> {
  return new Promise((resolve) => {
    let seen = 0;
    const off = service.listen('reading', () => {
      if (++seen === n) {
        off();
        resolve();
      }
    });
  });
}

describe('long sessions', { timeout: 240_000 }, () => {
  it('keep the heap flat while readings pile up (live bench, store and a web client on the stream)', async (t) => {
    const ctx = await serviceWithSession();
    // A browser on the live stream, reading and discarding, as during a long evening in web mode.
    const web = new WebShell({ service: ctx.service, port: 0 });
    await web.listen();
    const sock = connect(web.port, '127.0.0.1');
    sock.on('data', () => undefined);
    sock.write(`GET /api/events HTTP/1.1\r\nHost: 127.0.0.1:${web.port}\r\n\r\n`);
    try {
      await ctx.service.invoke('openSession', { sessionId: ctx.session.id });
      await readings(ctx.service, 4000); // warm up: caches, JIT, statement cache
      const h1 = heapAfterGc();
      const n1 = ctx.store.readings(ctx.session.id, { limit: 1 })[0].id;
      await readings(ctx.service, 24_000);
      const h2 = heapAfterGc();
      const n2 = ctx.store.readings(ctx.session.id, { limit: 1 })[0].id;
      await ctx.service.invoke('closeSession', {});
      const perReading = (h2 - h1) / (n2 - n1);
      t.diagnostic(
        `heap ${(h1 / 1e6).toFixed(1)} MB after ${n1} readings, ${(h2 / 1e6).toFixed(1)} MB after ${n2}: ` +
          `${perReading.toFixed(1)} bytes per reading`,
      );
      // Anything that kept a reference per reading (a list of readings, a listener per reading) costs far
      // more than 100 bytes each; garbage-collector noise over 24 000 readings stays well under it.
      assert.ok(perReading < 100, `the heap grows by ${perReading.toFixed(0)} bytes per stored reading`);
    } finally {
      sock.destroy();
      await web.close();
      await ctx.cleanup();
    }
  });

  it('series: a whole session in at most one min/max pair per bucket, the same as decimating every reading', async () => {
    const ctx = await serviceWithSession();
    try {
      await ctx.service.invoke('openSession', { sessionId: ctx.session.id });
      await readings(ctx.service, 3000);
      // Turn trimmer A through the null and back: a short, deep dip in the record.
      for (const a of [2, 3, 4, 4.5, 5, 5.5, 6, 8]) {
        await ctx.service.invoke('setTrims', { trims: { A: a } });
        await readings(ctx.service, 30);
      }
      await readings(ctx.service, 2000);
      await ctx.service.invoke('closeSession', {});
      const all = ctx.store.readings(ctx.session.id, { limit: 1_000_000 });
      const s = await ctx.service.invoke('series', { sessionId: ctx.session.id, buckets: 300 });
      assert.equal(s.total, all.length);
      assert.ok(s.buckets.length <= 300);
      const js = minMaxBuckets(
        all.map((r) => ({ t: r.t, y: r.dbmDut, floorLimited: r.floorLimited })),
        s.fromT,
        s.toT,
        300,
      );
      assert.deepEqual(
        s.buckets.map((b) => [b.n, b.min, b.max, b.floor]),
        js.map((b) => [b.n, b.min, b.max, b.floor]),
      );
      // The deepest reading of the session is in the decimated series, at its own time.
      const deepest = all.reduce((m, r) => (r.dbmDut < m.dbmDut ? r : m));
      const hit = s.buckets.find((b) => b.min === deepest.dbmDut);
      assert.ok(hit, 'the null was lost in decimation');
      assert.ok(hit.tMin >= hit.t0 && hit.tMin <= hit.t1);
      // A window and a point.
      const mid = (s.fromT + s.toT) / 2;
      const w = await ctx.service.invoke('series', {
        sessionId: ctx.session.id,
        fromT: mid,
        toT: s.toT,
        buckets: 50,
        role: 'carrier',
      });
      assert.equal(w.total, all.filter((r) => r.t >= mid && r.role === 'carrier').length);
      const bad = await ctx.service.call('series', { sessionId: ctx.session.id, fromT: 10, toT: 5 });
      assert.deepEqual([bad.ok, !bad.ok && bad.field], [false, 'toT']);
    } finally {
      await ctx.cleanup();
    }
  });
});
