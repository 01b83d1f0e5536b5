// The demo scenario is seeded all or nothing, and never touches the durability of the store's connection
// (a live session may be writing on it while the demo is loaded).
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { Service } from '../../main/service';
import { seedDemo, DEMO_DESIGN } from '../../main/service/demo';
import { Store } from '../../main/store/store';
import { connectionOf } from '../../main/store/connection';
import { tempDb } from '../helpers/tmp';

const count = (store: Store, table: string, where = '1') =>
  (connectionOf(store).prepare(`SELECT COUNT(*) AS n FROM ${table} WHERE ${where}`).get() as { n: number }).n;

describe('demo seeding', () => {
  it('leaves nothing behind when it fails half-way (here: the fourth session cannot be made)', async () => {
    const t = tempDb();
    const store = new Store(t.file);
    try {
      let sessions = 0;
      const failing = (o: ConstructorParameters<typeof Service>[0]) => {
        const s = new Service(o);
        return {
          close: () => s.close(),
          invoke: (async (name: string, args: unknown) => {
            if (name === 'createSession' && ++sessions === 4) throw new Error('disk pulled out');
            return s.invoke(name as never, args as never);
          }) as Service['invoke'],
        };
      };
      await assert.rejects(seedDemo(store, failing), /disk pulled out/);
      assert.equal(sessions, 4, 'the demo got as far as its fourth session');
      for (const table of ['designs', 'revisions', 'units', 'sessions', 'readings', 'corrections'])
        assert.equal(count(store, table), 0, `${table} after a failed demo`);
      // And it can then be loaded whole.
      const done = await seedDemo(store, (o) => new Service(o));
      assert.equal(done.sessions, 6);
      assert.equal(count(store, 'sessions'), 6);
      assert.equal(count(store, 'readings', 'kept = 1'), done.keptReadings);
    } finally {
      store.close();
      t.cleanup();
    }
  });

  it('keeps the connection at full durability and refuses a second load without changing anything', async () => {
    const t = tempDb();
    const store = new Store(t.file);
    try {
      const sync = () => connectionOf(store).pragma('synchronous', { simple: true });
      assert.equal(sync(), 2, 'FULL before'); // SQLite: synchronous FULL reads back as 2
      const service = new Service({ store, mode: 'cli' });
      const r = await service.invoke('loadDemo', {});
      assert.equal(sync(), 2, 'FULL after');
      assert.equal(count(store, 'readings', 'kept = 1'), r.keptReadings);
      const readings = count(store, 'readings');
      await assert.rejects(service.invoke('loadDemo', {}), new RegExp(`"${DEMO_DESIGN}" is already`));
      assert.equal(count(store, 'readings'), readings);
      await service.close();
    } finally {
      store.close();
      t.cleanup();
    }
  });
});
