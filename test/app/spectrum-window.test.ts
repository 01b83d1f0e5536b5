import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import { Window } from '../../app/spectrum/window';
import { f64from, python } from '../helpers/python';

/** Window values from scipy.signal.windows (periodic, sym=False) as float64 bytes. */
function scipyWindow(expr: string, n: number): Float64Array {
  return f64from(
    python(
      `import sys, numpy as np, scipy.signal.windows as w\nn=${n}\nx=${expr}\nsys.stdout.buffer.write(np.asarray(x,dtype='<f8').tobytes())`,
    ),
  );
}

const maxAbsDiff = (a: ArrayLike<number>, b: ArrayLike<number>) => {
  assert.equal(a.length, b.length);
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i] - b[i]));
  return m;
};

describe('Window coefficients', () => {
  for (const n of [1024, 1000]) {
    it(`match scipy.signal.windows (sym=False) for N = ${n}`, () => {
      // Source: scipy.signal.windows from Debian's python3-scipy, the reference library named in docs/references.md.
      assert.ok(maxAbsDiff(Window.rectangular(n).values, scipyWindow('w.boxcar(n, sym=False)', n)) < 1e-7);
      assert.ok(maxAbsDiff(Window.hann(n).values, scipyWindow('w.hann(n, sym=False)', n)) < 1e-7);
      assert.ok(
        maxAbsDiff(Window.blackmanHarris4(n).values, scipyWindow('w.blackmanharris(n, sym=False)', n)) < 1e-7,
      );
      // scipy's flattop peaks at sum(a) = 1.000000001; ours is scaled to exactly 1.
      assert.ok(maxAbsDiff(Window.flatTop(n).values, scipyWindow('w.flattop(n, sym=False)', n)) < 1e-7);
      // HFT95 is not in scipy: Heinzel 2002's coefficients through scipy's general_cosine, scaled to peak 1.
      const hft = scipyWindow(
        'w.general_cosine(n, [1, 1.9383379, 1.3045202, 0.4028270, 0.0350665], sym=False); x = x / x.max()',
        n,
      );
      assert.ok(maxAbsDiff(Window.hft95(n).values, hft) < 1e-7);
    });
  }
});

describe('Window figures of merit', () => {
  const n = 1024;
  it('rectangular: coherent gain 1, ENBW 1 bin, scalloping 3.92 dB', () => {
    const w = Window.rectangular(n);
    assert.equal(w.coherentGain, 1); // Harris 1978, Table 1
    assert.ok(Math.abs(w.enbwBins - 1) < 1e-12); // Harris 1978, Table 1
    assert.ok(Math.abs(w.scallopLossDb - 3.92) < 0.005); // Harris 1978, Table 1
  });

  it('Hann: coherent gain 0.50, ENBW 1.50 bins, scalloping 1.42 dB', () => {
    const w = Window.hann(n);
    assert.ok(Math.abs(w.coherentGain - 0.5) < 1e-12); // Harris 1978, Table 1
    assert.ok(Math.abs(w.enbwBins - 1.5) < 1e-9); // Harris 1978, Table 1
    assert.ok(Math.abs(w.scallopLossDb - 1.42) < 0.005); // Harris 1978, Table 1
  });

  it('4-term Blackman-Harris: coherent gain 0.35875, ENBW 2.0044 bins, scalloping 0.826 dB', () => {
    const w = Window.blackmanHarris4(n);
    assert.ok(Math.abs(w.coherentGain - 0.35875) < 1e-9); // Harris 1978, Table 1 (0.36) / docs/references.md computed
    assert.ok(Math.abs(w.enbwBins - 2.0044) < 5e-5); // Harris 1978, Table 1 (2.00) / docs/references.md computed
    assert.ok(Math.abs(w.scallopLossDb - 0.826) < 0.001); // docs/references.md computed (Harris 1978: 0.83)
  });

  it('flat-top (scipy coefficients): coherent gain 0.21558, ENBW 3.7702 bins, scalloping 0.0098 dB', () => {
    const w = Window.flatTop(n);
    assert.ok(Math.abs(w.coherentGain - 0.21558) < 5e-6); // docs/references.md computed from scipy's coefficients
    assert.ok(Math.abs(w.enbwBins - 3.7702) < 5e-5); // docs/references.md computed
    assert.ok(Math.abs(w.scallopLossDb - 0.0098) < 0.0003); // docs/references.md computed
  });

  it('HFT95: ENBW 3.8112 bins and amplitude error at most 0.0044 dB across the bin', () => {
    const w = Window.hft95(n);
    assert.ok(Math.abs(w.enbwBins - 3.8112) < 5e-5); // Heinzel, Rudiger, Schilling 2002, HFT95 NENBW
    let worst = 0;
    for (let i = 0; i <= 500; i++) worst = Math.max(worst, Math.abs(20 * Math.log10(w.response(i / 1000))));
    assert.ok(Math.abs(worst - 0.0044) < 0.0002, `worst ${worst}`); // Heinzel 2002, HFT95 amplitude flatness
  });

  it('response() matches the DFT of the window computed by numpy at fractional offsets', () => {
    // Source: numpy (Debian python3-numpy): |sum w[n] exp(-j 2 pi d n / N)| / sum w.
    const deltas = [0, 0.1, 0.25, 0.5, 1, 1.3, 2.5, 7.7];
    for (const [ctor, expr] of [
      [Window.hann, 'w.hann(n, sym=False)'],
      [Window.flatTop, 'w.flattop(n, sym=False)'],
      [Window.blackmanHarris4, 'w.blackmanharris(n, sym=False)'],
      [Window.rectangular, 'w.boxcar(n, sym=False)'],
    ] as const) {
      const ref = f64from(
        python(
          `import sys, numpy as np, scipy.signal.windows as w\nn=${n}\nx=${expr}\nk=np.arange(n)\n` +
            `r=[abs(np.sum(x*np.exp(-2j*np.pi*d*k/n)))/np.sum(x) for d in ${JSON.stringify(deltas)}]\n` +
            `sys.stdout.buffer.write(np.asarray(r,dtype='<f8').tobytes())`,
        ),
      );
      const w = ctor(n);
      deltas.forEach((d, i) =>
        assert.ok(
          Math.abs(w.response(d) - ref[i]) < 1e-9,
          `${w.name} at ${d}: ${w.response(d)} vs ${ref[i]}`,
        ),
      );
    }
  });
});

describe('Window.byName()', () => {
  it('accepts the names and the usual aliases', () => {
    assert.equal(Window.byName('flattop', 64).name, 'flat-top');
    assert.equal(Window.byName('Hanning', 64).name, 'hann');
    assert.equal(Window.byName('bh4', 64).name, 'blackman-harris-4');
    assert.equal(Window.byName('HFT95', 64).name, 'hft95');
    assert.equal(Window.byName('rect', 64).name, 'rectangular');
  });

  it('rejects an unknown name with EINVAL naming the field and the choices', () => {
    assert.throws(
      () => Window.byName('kaiser', 64, '--window'),
      (e: unknown) =>
        e instanceof BenchError &&
        e.code === 'EINVAL' &&
        e.field === '--window' &&
        /flat-top/.test(e.message),
    );
  });

  it('rejects a size below 16 or not whole', () => {
    for (const n of [8, 100.5, NaN]) {
      assert.throws(
        () => Window.hann(n),
        (e: unknown) => e instanceof BenchError && e.code === 'EINVAL' && /Window\.hann/.test(e.field ?? ''),
      );
    }
  });

  it('describes itself with kind and key figures', () => {
    const s = Window.flatTop(4096).toString();
    assert.match(s, /flat-top/);
    assert.match(s, /n=4096/);
    assert.match(s, /enbw=3\.770/);
  });
});
