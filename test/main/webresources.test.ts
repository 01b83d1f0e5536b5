// Capped resources behind the web mode: sheet printing goes through a queue (at most MAX_PRINTS Chromium
// processes at once); an upload takes a slot only once its part is valid, and all uploads together hold at most
// UPLOADS_MAX_CHARS_TOTAL characters.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { MAX_PRINTS, queuedPdf } from '../../main/sheet/pdf';
import { UPLOADS_MAX_CHARS_TOTAL } from '../../main/service/records';
import { Service } from '../../main/service';
import { Store } from '../../main/store/store';

describe('sheet printing queue', () => {
  it(`prints at most ${MAX_PRINTS} at once, in order, and a failed print frees its place`, async () => {
    let running = 0;
    let most = 0;
    const started: number[] = [];
    const gates: (() => void)[] = [];
    const render = queuedPdf(async (html) => {
      running++;
      most = Math.max(most, running);
      started.push(Number(html));
      await new Promise<void>((go) => gates.push(go));
      running--;
      if (html === '2') throw new Error('chromium went away');
      return new Uint8Array([Number(html)]);
    });
    const jobs = Promise.allSettled([0, 1, 2, 3, 4, 5, 6, 7].map((i) => render(String(i), '')));
    // Release the prints one at a time, waiting on the queue's own state (no clock).
    while (started.length < 8 || gates.length) {
      while (!gates.length) await new Promise((r) => setImmediate(r));
      assert.ok(render.running() <= MAX_PRINTS);
      gates.shift()!();
      await new Promise((r) => setImmediate(r));
    }
    const results = await jobs;
    assert.equal(most, MAX_PRINTS);
    assert.deepEqual(started, [0, 1, 2, 3, 4, 5, 6, 7]);
    assert.equal(results.filter((r) => r.status === 'rejected').length, 1);
    assert.equal(render.running(), 0);
  });
});

describe('bundle uploads in parts', () => {
  it('takes a slot only for a valid part, and caps what all uploads hold together', async () => {
    const store = new Store(':memory:');
    const svc = new Service({ store, mode: 'web' });
    try {
      // Invalid part numbers, many times over: refused, and no slot is taken by any of them.
      for (let i = 0; i < 10; i++) {
        const r = await svc.call('importBundlePart', {
          uploadId: `bad-part-${i}`,
          part: 5,
          parts: 2,
          text: '{',
        });
        assert.equal(r.ok, false);
        if (!r.ok) assert.deepEqual([r.code, r.field], ['EINVAL', 'part']);
      }
      const mb = 'x'.repeat(1024 * 1024);
      // Four uploads take the four slots; a fifth waits for one to finish.
      for (const id of ['big-upload', 'second-one', 'third-one', 'fourth-one']) {
        const r = await svc.call('importBundlePart', { uploadId: id, part: 0, parts: 4096, text: mb });
        assert.ok(r.ok, id);
      }
      const fifth = await svc.call('importBundlePart', {
        uploadId: 'fifth-one',
        part: 0,
        parts: 2,
        text: '{',
      });
      assert.equal(fifth.ok, false);
      if (!fifth.ok) assert.match(fifth.message, /4 imports are already under way/);
      // One upload near its own 200 MB limit in 1 MB parts (one string, held by reference), then a second
      // one until all of them together would pass the total.
      const mbs = UPLOADS_MAX_CHARS_TOTAL / mb.length;
      for (let i = 1; i < 199; i++) {
        const r = await svc.call('importBundlePart', {
          uploadId: 'big-upload',
          part: i,
          parts: 4096,
          text: mb,
        });
        assert.ok(r.ok, `part ${i}: ${r.ok ? '' : r.message}`);
      }
      let taken = 1;
      let refusal = '';
      for (let i = 1; i < 200 && !refusal; i++) {
        const r = await svc.call('importBundlePart', {
          uploadId: 'second-one',
          part: i,
          parts: 4096,
          text: mb,
        });
        if (r.ok) taken++;
        else refusal = r.message;
      }
      assert.equal(taken, mbs - 199 - 2, 'MB the second upload took before all four held the total');
      assert.match(refusal, /already hold 256 MB/);
    } finally {
      await svc.close();
      store.close();
    }
  });
});
