import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import { createFft, Fft, isFftSize } from '../../app/spectrum/fft';
import { SpectrumAverager } from '../../app/spectrum/averager';
import { U8Windower } from '../../app/spectrum/u8simd';
import { Window } from '../../app/spectrum/window';
import { Rng } from '../../main/sim/rng';
import { f32bytes, f64from, python } from '../helpers/python';

function randomIq(n: number, seed: number): Float32Array {
  const rng = new Rng(seed);
  const x = new Float32Array(2 * n);
  for (let i = 0; i < x.length; i++) x[i] = rng.normal() * 0.3;
  return x;
}

describe('Fft', () => {
  for (const n of [48, 4096, 65536]) {
    it(`matches numpy.fft.fft on the same complex64 input, N = ${n}`, async () => {
      const x = randomIq(n, n);
      const fft = await createFft(n);
      try {
        fft.input().set(x);
        fft.forward();
        const y = fft.output();
        // Source: numpy.fft.fft (Debian python3-numpy) in double precision on the same float32 samples.
        const ref = f64from(
          python(
            `import sys, numpy as np\nx=np.frombuffer(sys.stdin.buffer.read(),dtype='<f4').astype(np.float64)\n` +
              `X=np.fft.fft(x[0::2]+1j*x[1::2])\nout=np.empty(2*len(X))\nout[0::2]=X.real\nout[1::2]=X.imag\n` +
              `sys.stdout.buffer.write(out.astype('<f8').tobytes())`,
            f32bytes(x),
          ),
        );
        let peak = 0;
        let err = 0;
        for (let i = 0; i < ref.length; i++) {
          peak = Math.max(peak, Math.abs(ref[i]));
          err = Math.max(err, Math.abs(y[i] - ref[i]));
        }
        assert.ok(err / peak < 2e-6, `relative error ${err / peak}`);
        assert.deepEqual([...fft.input().subarray(0, 8)], [...x.subarray(0, 8)], 'input is left as it was');
      } finally {
        fft.dispose();
      }
    });
  }

  it('gives |X| = N * coherent gain for a unit complex tone on a bin (Hann, N = 1024: 512)', async () => {
    const n = 1024;
    const w = Window.hann(n);
    const fft = await Fft.create(n);
    const x = fft.input();
    for (let i = 0; i < n; i++) {
      x[2 * i] = Math.cos((2 * Math.PI * 37 * i) / n) * w.values[i];
      x[2 * i + 1] = Math.sin((2 * Math.PI * 37 * i) / n) * w.values[i];
    }
    fft.forward();
    const y = fft.output();
    assert.ok(Math.abs(Math.hypot(y[74], y[75]) - 512) < 1e-3); // docs/references.md § DFT windows: test vector
    fft.dispose();
  });

  it('keeps working views when another transform grows the WASM memory', async () => {
    const a = await Fft.create(64);
    const big = await Fft.create(1 << 20);
    a.input().fill(0);
    a.input()[0] = 1;
    a.forward();
    assert.equal(a.output()[0], 1); // the DFT of a unit impulse is 1 in every bin
    assert.equal(a.output()[126], 1);
    big.dispose();
    a.dispose();
  });

  it('accepts sizes PFFFT transforms and rejects others with EINVAL', async () => {
    assert.ok(isFftSize(4096) && isFftSize(48) && isFftSize(80) && isFftSize(1 << 20));
    for (const n of [0, 8, 1000, 112, 4097, 2.5]) {
      assert.equal(isFftSize(n), false, String(n));
      await assert.rejects(
        createFft(n),
        (e: unknown) => e instanceof BenchError && e.code === 'EINVAL' && e.field === 'fftSize',
      );
    }
  });

  it('refuses to run after dispose()', async () => {
    const f = await Fft.create(16);
    f.dispose();
    assert.throws(
      () => f.forward(),
      (e: unknown) => e instanceof BenchError && e.code === 'ECONFLICT',
    );
  });
});

describe('SpectrumAverager', () => {
  it('scales a full-scale tone on a bin centre to 1.0 (0 dBFS) whatever the window', async () => {
    const n = 4096;
    for (const w of [Window.rectangular(n), Window.hann(n), Window.flatTop(n), Window.hft95(n)]) {
      const avg = await SpectrumAverager.create(w);
      const x = new Float32Array(2 * n);
      for (let i = 0; i < n; i++) {
        x[2 * i] = Math.cos((2 * Math.PI * 100 * i) / n);
        x[2 * i + 1] = Math.sin((2 * Math.PI * 100 * i) / n);
      }
      avg.pushComplex(x);
      assert.ok(Math.abs(avg.power()[100] - 1) < 1e-5, `${w.name}: ${avg.power()[100]}`);
      avg.dispose();
    }
  });

  it('reads white noise of total power s^2 as s^2 * ENBW / N per bin on average', async () => {
    // Source: the definition of equivalent noise bandwidth (Harris 1978, eq. 11).
    const n = 4096;
    const w = Window.blackmanHarris4(n);
    const avg = await SpectrumAverager.create(w);
    const rng = new Rng(7);
    const x = new Float32Array(2 * n);
    const sigma = 0.01; // per component; total complex power 2 * sigma^2
    for (let k = 0; k < 64; k++) {
      for (let i = 0; i < x.length; i++) x[i] = sigma * rng.normal();
      avg.pushComplex(x);
    }
    const p = avg.power();
    let mean = 0;
    for (let i = 0; i < n; i++) mean += p[i] / n;
    const expect = (2 * sigma * sigma * w.enbwBins) / n;
    assert.ok(Math.abs(10 * Math.log10(mean / expect)) < 0.05, `${mean} vs ${expect}`);
    avg.dispose();
  });

  for (const simd of [true, false]) {
    it(`converts 8-bit samples with the given zero offset like the float path (${simd ? 'WebAssembly SIMD' : 'plain JS'})`, async () => {
      const n = 256;
      const w = Window.hann(n);
      const a = await SpectrumAverager.create(w, simd);
      const b = await SpectrumAverager.create(w);
      const bytes = new Uint8Array(4 * n);
      const rng = new Rng(3);
      for (let i = 0; i < bytes.length; i++) bytes[i] = Math.floor(rng.next() * 256);
      const floats = new Float32Array(4 * n);
      for (let i = 0; i < bytes.length; i++) floats[i] = (bytes[i] - 127.4) / 127.6;
      a.pushU8(bytes, 37, 127.4); // an odd start: frames need not be aligned
      b.pushComplex(floats, 37);
      const pa = a.power();
      const pb = b.power();
      const top = Math.max(...pb);
      for (let k = 0; k < n; k++)
        assert.ok(Math.abs(pa[k] - pb[k]) <= 1e-5 * top, `bin ${k}: ${pa[k]} vs ${pb[k]}`);
      a.dispose();
      b.dispose();
    });
  }

  it("U8Windower gives the plain loop's floats to within float32 rounding, and follows a new zero", () => {
    const n = 1024;
    const w = Window.blackmanHarris4(n);
    const conv = U8Windower.create(w.values);
    assert.ok(conv, 'WebAssembly SIMD is available on Node 20');
    const bytes = new Uint8Array(2 * n + 6);
    const rng = new Rng(8);
    for (let i = 0; i < bytes.length; i++) bytes[i] = Math.floor(rng.next() * 256);
    for (const zero of [127.5, 128, 127]) {
      const out = new Float32Array(2 * n);
      conv.convert(bytes, 3, zero, out);
      const scale = 1 / Math.max(zero, 255 - zero);
      for (let i = 0; i < 2 * n; i++) {
        const want = (bytes[6 + i] - zero) * w.values[i >> 1] * scale;
        assert.ok(
          Math.abs(out[i] - want) <= 2e-7 * Math.abs(want) + 1e-12,
          `${zero} at ${i}: ${out[i]} vs ${want}`,
        );
      }
    }
  });

  it('averages frames: two frames give the mean of their spectra; reset() starts over', async () => {
    const n = 64;
    const avg = await SpectrumAverager.create(Window.rectangular(n));
    const one = new Float32Array(2 * n);
    one[0] = 1; // impulse: flat spectrum of 1 / n^2 after scaling
    const two = new Float32Array(2 * n);
    two[0] = 3;
    avg.pushComplex(one);
    avg.pushComplex(two);
    assert.equal(avg.averages, 2);
    assert.ok(Math.abs(avg.power()[5] - (1 + 9) / 2 / (n * n)) < 1e-15);
    avg.reset();
    avg.pushComplex(one);
    assert.equal(avg.averages, 1);
    assert.ok(Math.abs(avg.power()[5] - 1 / (n * n)) < 1e-15);
    avg.dispose();
  });

  it('rejects a frame that runs past the samples', async () => {
    const avg = await SpectrumAverager.create(Window.hann(64));
    assert.throws(
      () => avg.pushComplex(new Float32Array(100)),
      (e: unknown) => e instanceof BenchError && e.field === 'samples',
    );
    assert.throws(
      () => avg.pushU8(new Uint8Array(128), 1),
      (e: unknown) => e instanceof BenchError && e.field === 'samples',
    );
    assert.throws(
      () => avg.power(),
      (e: unknown) => e instanceof BenchError && e.field === 'averages',
    );
    avg.dispose();
  });
});
