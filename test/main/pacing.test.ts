// How often the live bench asks the receiver: a set interval from the start of one question to the start of
// the next, the receiver's answer time included (issue 16: a level change waits at most one interval). On the
// simulated bench's virtual clock each reading takes its 40 ms latency, so the spacing of the stored readings
// shows the pacing exactly, with no dependence on how loaded the machine is.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { serviceWithSession } from '../helpers/session';

async function spacing(intervalMs: number): Promise<number[]> {
  const b = await serviceWithSession({ live: { intervalMs } });
  try {
    let n = 0;
    const enough = new Promise<void>((ok) =>
      b.service.listen('reading', () => {
        if (++n >= 12) ok();
      }),
    );
    await b.service.invoke('openSession', { sessionId: b.session.id });
    await enough;
    await b.service.invoke('closeSession', {});
    const t = b.store.readings(b.session.id).map((r) => r.t);
    return t.slice(1).map((x, i) => x - t[i]);
  } finally {
    await b.cleanup();
  }
}

describe('live bench pacing', () => {
  it('starts a question every interval, the 40 ms answer time within it', async () => {
    const d = await spacing(100);
    assert.ok(d.length >= 11);
    assert.deepEqual(new Set(d), new Set([100]), `spacing ${d.join(' ')}`);
  });

  it('asks again at once when the answer takes longer than the interval', async () => {
    const d = await spacing(25);
    assert.deepEqual(new Set(d), new Set([40]), `spacing ${d.join(' ')}`);
  });
});
