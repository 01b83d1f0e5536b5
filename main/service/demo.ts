// Runs in Node. Seeds an invented scenario (our own design, boards and serials) so a new user sees
// real-looking history at once: one design, two revisions, a few units, a session with sweeps on each.
import type { PointRole, TrimDef } from '../../app/api';
import { BenchError } from '../../app/errors';
import type { Invoke, ServiceOptions } from './handlers';
import { createSource } from '../sources';
import { Store } from '../store/store';
import { exportBundleText, importBundle } from '../store/bundles';

export const DEMO_DESIGN = 'Heron DSB-40';

const TRIMS: TrimDef[] = [
  { key: 'A', label: 'Balance R', unit: 'turns', min: 0, max: 10 },
  { key: 'B', label: 'Balance C', unit: 'turns', min: 0, max: 10 },
];

interface DemoUnit {
  serial: string;
  seed: number;
  builder: string;
  buildDate: string;
}

/** Alignment passes: two coarse sweeps over the trimmers' travel, then narrower ones around the best so far. */
const PASSES: { trim: 'A' | 'B'; from?: number; to?: number; span?: number; steps: number }[] = [
  { trim: 'A', from: 1, to: 8, steps: 15 },
  { trim: 'B', from: 2, to: 9, steps: 15 },
  { trim: 'A', span: 0.5, steps: 11 },
  { trim: 'B', span: 0.5, steps: 11 },
  { trim: 'A', span: 0.1, steps: 11 },
  { trim: 'B', span: 0.1, steps: 11 },
  { trim: 'A', span: 0.02, steps: 9 },
];

/** What is kept after the null: the test sheet and the revision comparison are computed from these. */
const FINAL_POINTS: PointRole[] = [
  'carrier',
  'upper',
  'lower',
  'imd3u',
  'imd3l',
  'reference',
  'floor',
  'h2',
  'h3',
];

/**
 * The bench receiver's calibration: checked against a signal generator on the date given (invented). The
 * simulated receiver follows IARU R.1 exactly, so the table is R.1's, with the table's own uncertainty.
 */
const DEMO_CALIBRATION = {
  name: 'Bench receiver, generator check',
  quantity: 'strength-db',
  bands: [
    {
      fromHz: 0,
      toHz: 30e6,
      points: [
        { raw: -54, dbm: -127 },
        { raw: 0, dbm: -73 },
        { raw: 60, dbm: -13 },
      ],
    },
  ],
  uDb: 0.5,
  madeAt: '2026-03-01',
};

const REVISIONS: { name: string; changes: string; leakageDbc: number; units: DemoUnit[] }[] = [
  {
    name: 'R1',
    changes: 'First layout: ring modulator next to the carrier oscillator, single-sided board.',
    leakageDbc: -52,
    units: [
      { serial: 'HD40-0101', seed: 11, builder: 'Bench night group', buildDate: '2026-03-14' },
      { serial: 'HD40-0102', seed: 12, builder: 'Bench night group', buildDate: '2026-03-14' },
      { serial: 'HD40-0103', seed: 13, builder: 'Workshop', buildDate: '2026-04-02' },
    ],
  },
  {
    name: 'R2',
    changes:
      'Ground plane under the modulator, carrier oscillator moved and shielded, balance trimmers on short leads.',
    leakageDbc: -67,
    units: [
      { serial: 'HD40-0201', seed: 21, builder: 'Workshop', buildDate: '2026-07-20' },
      { serial: 'HD40-0202', seed: 22, builder: 'Workshop', buildDate: '2026-07-21' },
      { serial: 'HD40-0203', seed: 23, builder: 'Bench night group', buildDate: '2026-08-09' },
    ],
  },
];

export interface DemoSummary {
  designId: string;
  units: number;
  sessions: number;
  keptReadings: number;
}

/** Makes the service the demo runs on; the Service passes its own constructor (no import back to it). */
export type DemoServiceFactory = (opts: ServiceOptions) => { invoke: Invoke; close(): Promise<void> };

/**
 * Seeds the demo scenario into the store, all or nothing; refuses if it is already there (nothing is changed
 * then). The sessions are run on a scratch database in memory through the service, then merged into the
 * store in one transaction: the store's connection keeps its durability (a live session may be writing on
 * it), and a demo killed half-way leaves nothing behind.
 */
export async function seedDemo(store: Store, makeService: DemoServiceFactory): Promise<DemoSummary> {
  const refuseIfThere = () => {
    if (store.tree().some((d) => d.name === DEMO_DESIGN))
      throw new BenchError(
        'ECONFLICT',
        `the demo design "${DEMO_DESIGN}" is already in this database`,
        '--db',
      );
  };
  refuseIfThere();
  const scratch = new Store(':memory:');
  try {
    const summary = await runDemo(scratch, makeService);
    const text = exportBundleText(scratch, summary.designId);
    // Another program may have seeded it meanwhile: check again inside the merge's transaction.
    store.tx(() => {
      refuseIfThere();
      importBundle(store, text);
    });
    return summary;
  } finally {
    scratch.close();
  }
}

async function runDemo(store: Store, makeService: DemoServiceFactory): Promise<DemoSummary> {
  let t0 = 0;
  let leak = -60;
  // Demo sessions run on a virtual clock so seeding takes seconds, and are dated on the day of the session.
  const service = makeService({
    store,
    mode: 'cli',
    createSource: (spec) => createSource(`${spec},fast,t0=${t0},leak=${leak}`),
  });
  try {
    const design = await service.invoke('createDesign', {
      name: DEMO_DESIGN,
      notes: 'A 40 m DSB transceiver kit with a diode ring balanced modulator (demo scenario, invented).',
    });
    let sessions = 0;
    let kept = 0;
    let units = 0;
    for (const rev of REVISIONS) {
      const r = await service.invoke('createRevision', {
        designId: design.id,
        name: rev.name,
        changes: rev.changes,
      });
      for (const u of rev.units) {
        const unit = await service.invoke('createUnit', {
          revisionId: r.id,
          serial: u.serial,
          buildDate: u.buildDate,
          builder: u.builder,
        });
        units++;
        const day = Date.parse(`${u.buildDate}T19:30:00Z`) + 3 * 86400_000;
        t0 = day;
        leak = rev.leakageDbc;
        const s = await service.invoke('createSession', {
          unitId: unit.id,
          receiver: {
            name: 'Bench receiver (simulated)',
            source: `sim:seed=${u.seed}`,
            calibration: DEMO_CALIBRATION,
            bandwidthHz: 500,
            maxInputDbm: 10,
          },
          path: [
            { kind: 'coupler', couplingDb: 30, tolDb: 0.5, label: 'sampler' },
            { kind: 'pad', db: 20, tolDb: 0.3 },
          ],
          carrierHz: 7_100_000,
          toneHz: 1000,
          txPepDbm: 30,
          operator: u.builder,
          notes:
            'Carrier null by trimmer A, then B, coarse then fine; tones, products, reference and floor afterwards.',
          trims: TRIMS,
        });
        store.redateSession(s.id, new Date(day).toISOString());
        await service.invoke('openSession', { sessionId: s.id });
        // A coarse sweep of A with B where it came from the factory, then of B with A at its best, then finer
        // passes around the best of each, as a builder closes in on the null until the layout's leakage stops it.
        const pos: Record<string, number> = { A: 2, B: 5 };
        for (const p of PASSES) {
          const from = p.span === undefined ? p.from! : pos[p.trim] - p.span;
          const to = p.span === undefined ? p.to! : pos[p.trim] + p.span;
          const r = await service.invoke('sweep', { trim: p.trim, from, to, steps: p.steps });
          pos[p.trim] = r.readings.reduce((m, x) => (x.dbmDut < m.dbmDut ? x : m)).trims[p.trim];
          await service.invoke('setTrims', { trims: { [p.trim]: pos[p.trim] } });
          kept += r.readings.length;
        }
        for (const role of FINAL_POINTS) {
          await service.invoke('tune', { role });
          await service.invoke('keep', { note: role === 'carrier' ? 'final null' : '', waitSettled: true });
          kept++;
        }
        await service.invoke('closeSession', {});
        store.endSession(s.id, new Date(day + 40 * 60_000).toISOString());
        sessions++;
      }
    }
    return { designId: design.id, units, sessions, keptReadings: kept };
  } finally {
    await service.close();
  }
}
