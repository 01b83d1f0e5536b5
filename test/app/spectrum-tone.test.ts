import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { SpectrumAverager } from '../../app/spectrum/averager';
import { floorBetween, select } from '../../app/spectrum/floor';
import { averagedTail, medianToMean, noiseExceedance } from '../../app/spectrum/stats';
import { findPeak, readAt } from '../../app/spectrum/tone';
import { Window } from '../../app/spectrum/window';
import { Rng } from '../../main/sim/rng';
import { pythonJson } from '../helpers/python';

const db = (x: number) => 10 * Math.log10(x);

/** One frame holding a complex tone of amplitude `amp` at fractional bin `bin`. */
async function toneSpectrum(w: Window, bin: number, amp: number) {
  const n = w.n;
  const x = new Float32Array(2 * n);
  for (let i = 0; i < n; i++) {
    const ph = (2 * Math.PI * bin * i) / n + 0.4;
    x[2 * i] = amp * Math.cos(ph);
    x[2 * i + 1] = amp * Math.sin(ph);
  }
  const avg = await SpectrumAverager.create(w);
  avg.pushComplex(x);
  const p = Float64Array.from(avg.power());
  avg.dispose();
  return p;
}

describe('tone level across bin offsets', () => {
  const n = 4096;
  for (const [w, limit] of [
    [Window.flatTop(n), 0.05], // the bound for the flat-top
    [Window.hft95(n), 0.05],
    [Window.blackmanHarris4(n), 0.05],
    [Window.hann(n), 0.05],
  ] as const) {
    it(`${w.name}: corrected level within ${limit} dB for offsets 0 to 0.5 bin, position within 0.01 bin`, async () => {
      let worst = 0;
      let worstRaw = 0;
      for (let i = 0; i <= 10; i++) {
        const bin = 300 + i * 0.05;
        const p = await toneSpectrum(w, bin, 0.5);
        const r = findPeak(p, w, 300, 3);
        const level = db(r.binPower / (r.response * r.response));
        worst = Math.max(worst, Math.abs(level - db(0.25)));
        worstRaw = Math.max(worstRaw, Math.abs(db(r.binPower) - db(0.25)));
        assert.ok(Math.abs(r.bin - bin) < 0.01, `found ${r.bin}, true ${bin}`);
      }
      assert.ok(worst <= limit, `worst corrected error ${worst} dB`);
      // Uncorrected, the error is the window's scalloping loss (Harris 1978, Table 1).
      assert.ok(
        Math.abs(worstRaw - w.scallopLossDb) < 0.01,
        `raw ${worstRaw} vs scalloping ${w.scallopLossDb}`,
      );
    });
  }

  it('readAt() corrects a tone at a known position exactly', async () => {
    const w = Window.hann(1024);
    const p = await toneSpectrum(w, 200.37, 1);
    const r = readAt(p, w, 200.37);
    assert.ok(Math.abs(db(r.binPower / r.response ** 2)) < 0.001);
  });
});

describe('stats for averaged noise bins', () => {
  it('median-to-mean of one exponential bin is 1/ln 2 (+1.59 dB)', () => {
    // Source: median of the exponential distribution is ln 2 times its mean (any statistics text).
    assert.ok(Math.abs(medianToMean(1) - 1 / Math.LN2) < 1e-9);
  });

  it('medianToMean() and noiseExceedance() match scipy.stats.gamma for K averages', () => {
    const ks = [1, 2, 4, 16, 100, 1000, 5000];
    // Source: scipy.stats.gamma(a=K, scale=1/K) from Debian's python3-scipy.
    const ref = pythonJson<{ median: number[]; isf: number[] }>(
      `import json; from scipy.stats import gamma\nks=${JSON.stringify(ks)}\n` +
        `print(json.dumps({'median':[gamma(a=k,scale=1/k).median() for k in ks],'isf':[gamma(a=k,scale=1/k).isf(1e-3) for k in ks]}))`,
    );
    ks.forEach((k, i) => {
      assert.ok(Math.abs(1 / medianToMean(k) / ref.median[i] - 1) < 2e-4, `median K=${k}`);
      assert.ok(
        Math.abs(noiseExceedance(k, 1e-3) / ref.isf[i] - 1) < 2e-3,
        `isf K=${k}: ${noiseExceedance(k, 1e-3)} vs ${ref.isf[i]}`,
      );
    });
  });

  it('averagedTail() is 1 at 0 and exp(-x) for one average', () => {
    assert.equal(averagedTail(0, 5), 1);
    assert.ok(Math.abs(averagedTail(3, 1) - Math.exp(-3)) < 1e-12);
  });
});

describe('floorBetween()', () => {
  it('recovers the mean of exponential noise bins within 0.2 dB and ignores excluded tones', () => {
    const n = 8192;
    const rng = new Rng(11);
    const p = new Float64Array(n);
    for (let i = 0; i < n; i++) p[i] = 1e-9 * rng.exponential();
    for (let k = -6; k <= 6; k++) p[(1000 + k + n) % n] = 1; // a strong tone's main lobe
    const est = floorBetween(p, 1, -4096, 4095, [{ center: 1000, halfWidth: 7 }]);
    assert.equal(est.bins, n - 15);
    assert.ok(Math.abs(db(est.mean / 1e-9)) < 0.2, `${db(est.mean / 1e-9)} dB`);
  });

  it('wraps around the band edge and scales', () => {
    const n = 64;
    const p = new Float64Array(n).fill(2);
    p[0] = 100;
    const est = floorBetween(p, 1000, -40, -20, [], 0.5);
    assert.equal(est.bins, 21);
    assert.ok(Math.abs(est.mean - 2 * medianToMean(1000) * 0.5) < 1e-12);
  });

  it('select() finds order statistics', () => {
    const a = Float64Array.from([5, 1, 4, 2, 3, 9, 0]);
    assert.equal(select(Float64Array.from(a), 7, 3), 3);
    assert.equal(select(Float64Array.from(a), 7, 0), 0);
    assert.equal(select(Float64Array.from(a), 7, 6), 9);
  });
});
