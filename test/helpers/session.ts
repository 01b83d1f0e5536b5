// Test helpers: a service on a temporary database with one design/revision/unit and a session on a fast sim.
import { Service } from '../../main/service';
import { createSource } from '../../main/sources';
import { Store } from '../../main/store/store';
import { tempDb } from './tmp';

export const TRIMS = [
  { key: 'A', label: 'Balance R', unit: 'turns', min: 0, max: 10 },
  { key: 'B', label: 'Balance C', unit: 'turns', min: 0, max: 10 },
];

export async function serviceWithSession(
  opts: {
    fast?: boolean;
    path?: unknown[];
    txPepDbm?: number;
    source?: string;
    live?: import('../../main/live/live').LiveOptions;
  } = {},
) {
  const db = tempDb();
  const store = new Store(db.file);
  const fast = opts.fast ?? true;
  const service = new Service({
    store,
    mode: 'cli',
    live: opts.live,
    createSource: (spec) =>
      createSource(fast && spec.startsWith('sim') ? `${spec}${spec.includes(':') ? ',' : ':'}fast` : spec),
  });
  const d = await service.invoke('createDesign', { name: 'Test DSB' });
  const r = await service.invoke('createRevision', { designId: d.id, name: 'A' });
  const u = await service.invoke('createUnit', { revisionId: r.id, serial: 'T-1' });
  const session = await service.invoke('createSession', {
    unitId: u.id,
    receiver: {
      name: 'sim rx',
      source: opts.source ?? 'sim:seed=5',
      calibration: null,
      bandwidthHz: 500,
      maxInputDbm: 10,
    },
    path: opts.path ?? [
      { kind: 'coupler', couplingDb: 30 },
      { kind: 'pad', db: 20 },
    ],
    carrierHz: 7.1e6,
    toneHz: 1000,
    txPepDbm: opts.txPepDbm ?? 30,
    trims: TRIMS,
  });
  return {
    service,
    store,
    session,
    unitId: u.id,
    async cleanup() {
      await service.close();
      store.close();
      db.cleanup();
    },
  };
}
