// The moving average of the live spectrum (app/spectrum/sliding.ts): the mean of the last k frames exactly
// (checked against the plain mean of those frames computed here), and a fresh start on a step of the carrier.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { SlidingSpectrum, STEP_RESTART_DB } from '../../app/spectrum/sliding';
import { Window } from '../../app/spectrum/window';
import { rng } from './nullfit-helpers';

describe('SlidingSpectrum', () => {
  const n = 64;
  const w = Window.hann(n);

  it('is the mean of the last k frames after every frame, for a thousand frames', () => {
    const g = rng(5);
    const k = 6;
    const s = new SlidingSpectrum(w, k);
    const frames: Float64Array[] = [];
    for (let f = 0; f < 1000; f++) {
      const x = Float64Array.from({ length: n }, () => Math.exp(3 * g.gauss()));
      frames.push(x);
      assert.equal(s.push(x), false);
      const last = frames.slice(-k);
      const a = s.spectrum();
      assert.equal(a.averages, last.length);
      assert.equal(a.scale, 1 / (last.length * w.sum * w.sum));
      for (let i = 0; i < n; i += 7) {
        const mean = last.reduce((m, fr) => m + fr[i], 0);
        assert.ok(
          Math.abs(a.power[i] - mean) <= 1e-9 * mean,
          `frame ${f} bin ${i}: ${a.power[i]} vs ${mean}`,
        );
      }
    }
  });

  it('starts afresh when the carrier bins step by more than the restart threshold, not for smaller changes', () => {
    const s = new SlidingSpectrum(w, 4);
    const frame = (carrier: number) => Float64Array.from({ length: n }, (_, i) => (i === 10 ? carrier : 1));
    for (let f = 0; f < 4; f++) s.push(frame(1000), [9, 11]);
    // 9 dB less: within the threshold, averaged in.
    assert.equal(s.push(frame(1000 * 10 ** (-(STEP_RESTART_DB - 1) / 10)), [9, 11]), false);
    assert.equal(s.spectrum().averages, 4);
    // 40 dB less: a step; the old level is gone at once.
    assert.equal(s.push(frame(0.1), [9, 11]), true);
    assert.equal(s.spectrum().averages, 1);
    assert.equal(s.spectrum().power[10], 0.1);
    assert.throws(() => new SlidingSpectrum(w, 0), /averages/);
  });
});
