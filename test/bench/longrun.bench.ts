// Benchmark: a 24-hour bench session on the simulated bench in compressed time (its virtual clock: one reading
// per 40 ms of bench time, as fast as the store commits them). Prints the peak memory while it runs, the memory
// at each bench hour, the database size per million readings, and how fast a chart gets the whole session:
// decimated by the "series" call, side by side with fetching every reading.
// LONGRUN_HOURS=2 npm run bench -- longrun   for a shorter run (whole hours).
import { statSync } from 'node:fs';
import { join } from 'node:path';
import { Service } from '../../main/service';
import { createSource } from '../../main/sources';
import { Store } from '../../main/store/store';
import { tempDir } from '../helpers/tmp';
import Database from 'better-sqlite3';
import { connectionOf } from '../../main/store/connection';

const HOURS = Number(process.env.LONGRUN_HOURS ?? 24);
const MB = 1024 * 1024;

async function main(): Promise<void> {
  const tmp = tempDir('nullbench-longrun-');
  const file = join(tmp.dir, 'longrun.db');
  const store = new Store(file);
  const service = new Service({
    store,
    mode: 'cli',
    createSource: (spec) => createSource(`${spec},fast`),
  });
  const d = await service.invoke('createDesign', { name: 'Long run' });
  const r = await service.invoke('createRevision', { designId: d.id, name: 'A' });
  const u = await service.invoke('createUnit', { revisionId: r.id, serial: 'LR-1' });
  const s = await service.invoke('createSession', {
    unitId: u.id,
    receiver: { name: 'sim rx', source: 'sim:seed=11', calibration: null, bandwidthHz: 500, maxInputDbm: 10 },
    path: [
      { kind: 'coupler', couplingDb: 30 },
      { kind: 'pad', db: 20 },
    ],
    carrierHz: 7.1e6,
    toneHz: 1000,
    txPepDbm: 30,
    trims: [
      { key: 'A', label: 'Balance R', unit: 'turns', min: 0, max: 10 },
      { key: 'B', label: 'Balance C', unit: 'turns', min: 0, max: 10 },
    ],
  });

  let count = 0;
  let t0 = 0;
  let lastT = 0;
  let peakRss = 0;
  let peakHeap = 0;
  const hourly: string[] = [];
  let nextHour = 1;
  const wall0 = Date.now();
  const sample = () => {
    const m = process.memoryUsage();
    peakRss = Math.max(peakRss, m.rss);
    peakHeap = Math.max(peakHeap, m.heapUsed);
    return m;
  };
  const timer = setInterval(sample, 200);
  let finish: () => void = () => undefined;
  const done = new Promise<void>((ok) => (finish = ok));
  service.listen('reading', (x) => {
    if (!t0) t0 = x.t;
    lastT = x.t;
    count++;
    if (count % 5000 === 0) sample();
    if (x.t - t0 >= nextHour * 3_600_000) {
      const m = sample();
      hourly.push(
        `  bench hour ${String(nextHour).padStart(2)}: ${String(count).padStart(9)} readings, ` +
          `rss ${(m.rss / MB).toFixed(0)} MB, heap ${(m.heapUsed / MB).toFixed(1)} MB, ` +
          `${((Date.now() - wall0) / 1000).toFixed(0)} s of wall time`,
      );
      nextHour++;
      if (nextHour > HOURS) finish();
    }
  });
  await service.invoke('openSession', { sessionId: s.id });
  // The builder turns a trimmer now and then and keeps a reading: every 10 minutes of bench time.
  let turns = 0;
  const turner = setInterval(() => {
    if (lastT - t0 >= (turns + 1) * 600_000) {
      turns++;
      void service
        .invoke('setTrims', { trims: { A: 3 + ((turns * 0.37) % 4), B: 4 + ((turns * 0.21) % 3) } })
        .then(() => service.invoke('keep', { note: `turn ${turns}`, waitSettled: false }))
        .catch(() => undefined);
    }
  }, 5);
  await done;
  clearInterval(turner);
  await service.invoke('closeSession', {});
  clearInterval(timer);
  sample();
  const wallS = (Date.now() - wall0) / 1000;

  // What a chart of the whole session costs: decimated (the first call builds the session's grid, later
  // ones read it), or every reading.
  const t1 = performance.now();
  const series = await service.invoke('series', { sessionId: s.id, buckets: 1000 });
  const firstMs = performance.now() - t1;
  const t1b = performance.now();
  await service.invoke('series', { sessionId: s.id, buckets: 1000 });
  const seriesMs = performance.now() - t1b;
  const t1c = performance.now();
  const hour = await service.invoke('series', {
    sessionId: s.id,
    fromT: t0 + 3_600_000,
    toT: t0 + 7_200_000,
    buckets: 1000,
  });
  const hourMs = performance.now() - t1c;
  const seriesBytes = JSON.stringify(series).length;
  const heapBefore = process.memoryUsage().heapUsed;
  const t2 = performance.now();
  const every = await service.invoke('readings', { sessionId: s.id, limit: 1_000_000 });
  const everyMs = performance.now() - t2;
  const everyBytes = JSON.stringify(every).length;
  const everyHeap = process.memoryUsage().heapUsed - heapBefore;

  // The same readings in schema 5's layout (text UUIDs, the session's id in every row and its index), in a
  // database of their own: its size and its first overview, measured here beside today's.
  const legacyFile = join(tmp.dir, 'schema5.db');
  const conn = connectionOf(store);
  conn.exec(`ATTACH DATABASE '${legacyFile}' AS old`);
  conn.exec(`CREATE TABLE old.readings (
    id INTEGER PRIMARY KEY, uid TEXT NOT NULL UNIQUE, session_id TEXT NOT NULL, t_ms REAL NOT NULL,
    freq_hz REAL NOT NULL, role TEXT NOT NULL, raw REAL NOT NULL, dbm_rx REAL NOT NULL, dbm_dut REAL NOT NULL,
    u_db REAL NOT NULL, settled INTEGER NOT NULL, kept INTEGER NOT NULL DEFAULT 0,
    floor_limited INTEGER NOT NULL DEFAULT 0, overload INTEGER NOT NULL DEFAULT 0, trims_json TEXT NOT NULL,
    correction_id INTEGER NOT NULL, note TEXT NOT NULL DEFAULT '')`);
  conn.exec('CREATE INDEX old.readings_session ON readings(session_id, t_ms)');
  conn.exec('CREATE INDEX old.readings_kept ON readings(session_id, kept) WHERE kept = 1');
  // Random UUIDs, as schema 5's store made them (today's are kept as 16 bytes and carry no index).
  conn.exec(`INSERT INTO old.readings SELECT id, lower(hex(randomblob(4)) || '-' || hex(randomblob(2)) || '-4' ||
      substr(hex(randomblob(2)), 2) || '-a' || substr(hex(randomblob(2)), 2) || '-' || hex(randomblob(6))),
      session_id, t_ms, freq_hz, role, raw, dbm_rx, dbm_dut, u_db, settled, kept, floor_limited, overload,
      trims_json, correction_id, note FROM main.readings_wide ORDER BY id`);
  conn.exec('DETACH DATABASE old');
  const legacy = new Database(legacyFile);
  const tl = performance.now();
  const span = legacy
    .prepare('SELECT MIN(t_ms) AS lo, MAX(t_ms) AS hi FROM readings WHERE session_id = ?')
    .get(s.id) as { lo: number; hi: number };
  const w = 2 ** Math.max(0, Math.ceil(Math.log2((span.hi - span.lo + 1) / 65536)));
  legacy
    .prepare(
      `SELECT CAST((t_ms - ?) / ? AS INTEGER) AS i, COUNT(*), MIN(dbm_dut), MAX(dbm_dut), SUM(floor_limited)
       FROM readings WHERE session_id = ? GROUP BY i`,
    )
    .raw(true)
    .all(span.lo, w, s.id);
  const legacyFirstMs = performance.now() - tl;
  legacy.close();
  const legacyBytes = statSync(legacyFile).size;

  await service.close();
  store.close(); // checkpoints the WAL into the database file
  const dbBytes = statSync(file).size;
  const stored = count + turns;

  console.log(
    `24-hour session in compressed time (${HOURS} h of bench time, simulated bench, virtual clock)`,
  );
  console.log(hourly.join('\n'));
  console.log(
    `readings stored          ${stored} (${(stored / wallS).toFixed(0)} per second of wall time, ${wallS.toFixed(0)} s)`,
  );
  console.log(
    `bench time covered       ${((lastT - t0) / 3_600_000).toFixed(2)} h, ${turns} trimmer turns kept`,
  );
  console.log(
    `peak memory              rss ${(peakRss / MB).toFixed(0)} MB, heap ${(peakHeap / MB).toFixed(1)} MB`,
  );
  console.log(
    `database size            ${(dbBytes / MB).toFixed(1)} MB, ${(((dbBytes / stored) * 1e6) / MB).toFixed(0)} MB per million readings ` +
      `(${(dbBytes / stored).toFixed(0)} bytes per reading, with its indexes, cells and the uid that keeps bundles mergeable)`,
  );
  const perNew = dbBytes / stored;
  const perOld = legacyBytes / stored;
  console.log(
    `schema 5's layout        ${(legacyBytes / MB).toFixed(1)} MB, ${perOld.toFixed(0)} bytes per reading (the same readings, measured in this run)`,
  );
  console.log(
    `  ratio                  ${(perOld / perNew).toFixed(1)}x smaller; target ≤ 120 bytes per reading: ${perNew <= 120 ? 'met' : 'NOT met'}`,
  );
  console.log('whole-session chart data, side by side:');
  console.log(
    `  series, first call     ${firstMs.toFixed(0).padStart(6)} ms (one pass over the session builds its grid)`,
  );
  console.log(
    `  series (1000 buckets)  ${seriesMs.toFixed(1).padStart(6)} ms, ${(seriesBytes / 1024).toFixed(0).padStart(7)} KB, ` +
      `${series.buckets.length} buckets, min ${Math.min(...series.buckets.map((b) => b.min)).toFixed(1)} dBm kept`,
  );
  console.log(
    `  first call, schema 5   ${legacyFirstMs.toFixed(0).padStart(6)} ms (one pass over every reading, as before cells were kept); ` +
      `target under 500 ms for the first overview: ${firstMs < 500 ? 'met' : 'NOT met'} (${(legacyFirstMs / firstMs).toFixed(1)}x faster)`,
  );
  console.log(
    `  series, bench hour 2   ${hourMs.toFixed(1).padStart(6)} ms, ${hour.total} readings in ${hour.buckets.length} buckets`,
  );
  console.log(
    `  readings (limit 1e6)   ${everyMs.toFixed(0).padStart(6)} ms, ${(everyBytes / 1024).toFixed(0).padStart(7)} KB, ` +
      `${every.length} readings${every.length === 1_000_000 ? ' (capped: the call returns at most 1e6)' : ''}, ` +
      `+${(everyHeap / MB).toFixed(0)} MB heap`,
  );
  console.log(
    `  ratio                  ${(everyMs / seriesMs).toFixed(0)}x faster (${(everyMs / firstMs).toFixed(1)}x on the first call), ` +
      `${(everyBytes / seriesBytes).toFixed(0)}x smaller ` +
      `(and the series covers all ${series.total} readings, the list only ${every.length})`,
  );
  tmp.cleanup();
}

main().catch((e: unknown) => {
  console.error(e);
  process.exit(1);
});
