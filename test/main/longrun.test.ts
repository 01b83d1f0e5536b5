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

/** Readings straight into the store at the given times and levels. */
function store(ctx: Awaited<ReturnType<typeof serviceWithSession>>, rows: [number, number][]): void {
  ctx.store.addReadings(
    rows.map(([t, y]) => ({
      sessionId: ctx.session.id,
      t,
      freqHz: 7.1e6,
      role: 'carrier' as const,
      raw: y + 23,
      dbmRx: y - 50,
      dbmDut: y,
      uDb: 1,
      settled: true,
      kept: false,
      floorLimited: y < -90,
      overload: false,
      trims: { A: 5 },
      calibration: null,
      path: [],
    })),
  );
}

describe('series grid', () => {
  it('stays exact while the session outgrows its cells (they coarsen) and when older readings arrive late', async () => {
    const ctx = await serviceWithSession();
    try {
      const all: [number, number][] = [];
      const add = (rows: [number, number][]) => {
        store(ctx, rows);
        all.push(...rows);
      };
      const check = async (buckets: number) => {
        const s = await ctx.service.invoke('series', { sessionId: ctx.session.id, buckets });
        const pts = all.map(([t, y]) => ({ t, y, floorLimited: y < -90 }));
        const want = minMaxBuckets(pts, s.fromT, s.toT, Math.round((s.toT - s.fromT) / s.bucketMs)).map(
          (b) => [b.n, b.min, b.max, b.floor],
        );
        assert.equal(s.total, all.length);
        assert.deepEqual(
          s.buckets.map((b) => [b.n, b.min, b.max, b.floor]),
          want,
        );
      };
      const t0 = 1.8e12;
      // Levels scattered so each cell's extremes fall anywhere in it (a merge that picks one side shows).
      add(Array.from({ length: 50 }, (_, i): [number, number] => [t0 + i, -60 + ((i * 37 + 5) % 23) - 11]));
      await check(10);
      // Far later: the grid's cells must double many times to reach it.
      add(Array.from({ length: 400 }, (_, i): [number, number] => [t0 + 5e6 + i * 997, -40 - (i % 60)]));
      add([[t0 + 3e6, -99]]);
      await check(100);
      await check(7);
      // Older than anything so far (a bundle merged into the session): the grid is rebuilt.
      add([[t0 - 1e6, -120]]);
      await check(50);
    } finally {
      await ctx.cleanup();
    }
  });
});

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
      const points = all.map((r) => ({ t: r.t, y: r.dbmDut, floorLimited: r.floorLimited }));
      /** The same buckets computed from every reading in memory: counts, minima and maxima must agree exactly. */
      const expected = (x: { fromT: number; toT: number; bucketMs: number }, from = all) =>
        minMaxBuckets(
          from === all ? points : from.map((r) => ({ t: r.t, y: r.dbmDut, floorLimited: r.floorLimited })),
          x.fromT,
          x.toT,
          Math.round((x.toT - x.fromT) / x.bucketMs),
        ).map((b) => [b.n, b.min, b.max, b.floor]);
      const s = await ctx.service.invoke('series', { sessionId: ctx.session.id, buckets: 300 });
      assert.equal(s.total, all.length);
      assert.ok(s.buckets.length <= 300 && s.buckets.length >= 150, `${s.buckets.length} buckets`);
      assert.deepEqual(
        s.buckets.map((b) => [b.n, b.min, b.max, b.floor]),
        expected(s),
      );
      for (const b of s.buckets)
        assert.ok(b.tMin >= b.t0 && b.tMin < b.t1 && b.tMax >= b.t0 && b.tMax < b.t1);
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
      const carrier = all.filter((r) => r.role === 'carrier');
      assert.equal(w.total, carrier.filter((r) => r.t >= w.fromT && r.t < w.toT).length);
      assert.ok(w.fromT <= mid && w.toT >= s.toT - w.bucketMs, 'the window covers what was asked');
      assert.deepEqual(
        w.buckets.map((b) => [b.n, b.min, b.max, b.floor]),
        expected(w, carrier),
      );
      // A window narrower than the session's grid cells is read straight from the table, exact to the reading.
      const narrow = await ctx.service.invoke('series', {
        sessionId: ctx.session.id,
        fromT: all[100].t,
        toT: all[140].t,
        buckets: 1000,
      });
      assert.equal(narrow.total, 41);
      assert.deepEqual(
        narrow.buckets.map((b) => [b.n, b.min, b.max]),
        minMaxBuckets(points, all[100].t, all[140].t, 1000).map((b) => [b.n, b.min, b.max]),
      );
      // More readings later: the grid takes in just the new ones and still agrees exactly.
      await ctx.service.invoke('openSession', { sessionId: ctx.session.id });
      await readings(ctx.service, 4000);
      await ctx.service.invoke('closeSession', {});
      const more = ctx.store.readings(ctx.session.id, { limit: 1_000_000 });
      const s2 = await ctx.service.invoke('series', { sessionId: ctx.session.id, buckets: 300 });
      assert.equal(s2.total, more.length);
      assert.deepEqual(
        s2.buckets.map((b) => [b.n, b.min, b.max, b.floor]),
        expected(s2, more),
      );
      const bad = await ctx.service.call('series', { sessionId: ctx.session.id, fromT: 10, toT: 5 });
      assert.deepEqual([bad.ok, !bad.ok && bad.field], [false, 'toT']);
    } finally {
      await ctx.cleanup();
    }
  });
});
