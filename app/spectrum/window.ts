// Runs anywhere (app/ is runtime-free). DFT windows of the cosine-sum family, their figures of merit
// and their exact spectral kernel (used to undo scalloping between bins).
import { BenchError, check } from '../errors';

/** Names accepted by Window.byName (and the CLI's --window). */
export const WINDOW_NAMES = ['rectangular', 'hann', 'blackman-harris-4', 'flat-top', 'hft95'] as const;
export type WindowName = (typeof WINDOW_NAMES)[number];

const ALIASES: Record<string, WindowName> = {
  rect: 'rectangular',
  rectangular: 'rectangular',
  boxcar: 'rectangular',
  hann: 'hann',
  hanning: 'hann',
  'blackman-harris-4': 'blackman-harris-4',
  'blackman-harris': 'blackman-harris-4',
  blackmanharris: 'blackman-harris-4',
  bh4: 'blackman-harris-4',
  'flat-top': 'flat-top',
  flattop: 'flat-top',
  hft95: 'hft95',
};

/** Largest window we build: 2^22 points (a 16 MB float buffer per FFT stage). */
export const MAX_WINDOW_POINTS = 1 << 22;

/**
 * A periodic (DFT-even) cosine-sum window w[n] = sum_k c[k] cos(2 pi k n / N), n = 0..N-1,
 * scaled to a peak of 1 so the coherent gain reads as in Harris 1978, Table 1.
 * The same definition as scipy.signal.windows.<name>(N, sym=False).
 */
export class Window {
  /** Window values, peak 1, length n; float32 because the FFT input is complex64. */
  readonly values: Float32Array;
  /** Mean of the window: a tone on a bin centre reads N * coherentGain at its peak. */
  readonly coherentGain: number;
  /** Equivalent noise bandwidth in bins: N * sum(w^2) / sum(w)^2. Multiply by fs/N for Hz. */
  readonly enbwBins: number;
  /** Loss for a tone half-way between two bins, dB (positive). */
  readonly scallopLossDb: number;
  /** Half-width of the main lobe in bins (the number of cosine terms beyond the constant). */
  readonly mainLobeBins: number;
  /** sum(w), the DC gain; the FFT of a unit complex tone on a bin centre has this magnitude. */
  readonly sum: number;
  /** sum(w^2). */
  readonly sumSquares: number;

  private constructor(
    readonly name: WindowName,
    readonly n: number,
    /** Signed cosine coefficients c[k], already divided by the peak value. */
    private readonly c: readonly number[],
  ) {
    const values = new Float32Array(n);
    let sum = 0;
    let sumSquares = 0;
    const step = (2 * Math.PI) / n;
    for (let i = 0; i < n; i++) {
      let w = 0;
      for (let k = 0; k < c.length; k++) w += c[k] * Math.cos(step * k * i);
      values[i] = w;
      sum += w;
      sumSquares += w * w;
    }
    this.values = values;
    this.sum = sum;
    this.sumSquares = sumSquares;
    this.coherentGain = sum / n;
    this.enbwBins = (n * sumSquares) / (sum * sum);
    this.mainLobeBins = Math.max(1, c.length - 1);
    this.scallopLossDb = -20 * Math.log10(this.response(0.5));
  }

  private static cosineSum(name: WindowName, n: number, coefficients: readonly number[]): Window {
    check(
      Number.isInteger(n) && n >= 16 && n <= MAX_WINDOW_POINTS,
      `Window.${name}(n)`,
      `n must be an integer from 16 to ${MAX_WINDOW_POINTS}, got ${String(n)}`,
    );
    // Peak at n = N/2, where cos(2 pi k n / N) = (-1)^k.
    let peak = 0;
    for (let k = 0; k < coefficients.length; k++) peak += coefficients[k] * (k % 2 === 0 ? 1 : -1);
    return new Window(
      name,
      n,
      coefficients.map((x) => x / peak),
    );
  }

  /** No window: best resolution, 3.92 dB scalloping, -13 dB sidelobes (Harris 1978). */
  static rectangular(n: number): Window {
    return Window.cosineSum('rectangular', n, [1]);
  }

  /** Hann: a0 = a1 = 0.5 (Harris 1978). */
  static hann(n: number): Window {
    return Window.cosineSum('hann', n, [0.5, -0.5]);
  }

  /** 4-term Blackman-Harris, -92 dB sidelobes (Harris 1978, Table 1). */
  static blackmanHarris4(n: number): Window {
    return Window.cosineSum('blackman-harris-4', n, [0.35875, -0.48829, 0.14128, -0.01168]);
  }

  /** The flat-top of scipy.signal.windows.flattop: scalloping below 0.01 dB, for tone levels. */
  static flatTop(n: number): Window {
    return Window.cosineSum('flat-top', n, [0.21557895, -0.41663158, 0.277263158, -0.083578947, 0.006947368]);
  }

  /** HFT95 (Heinzel, Rudiger, Schilling 2002): -95 dB sidelobes, 0.0044 dB amplitude error. */
  static hft95(n: number): Window {
    return Window.cosineSum('hft95', n, [1, -1.9383379, 1.3045202, -0.402827, 0.0350665]);
  }

  /** By name or a common alias ("flattop", "bh4", "hanning"...); EINVAL naming `field` otherwise. */
  static byName(name: string, n: number, field = 'window'): Window {
    const key = ALIASES[name.trim().toLowerCase()];
    if (!key) {
      throw new BenchError(
        'EINVAL',
        `unknown window "${name}"; use one of: ${WINDOW_NAMES.join(', ')}`,
        field,
      );
    }
    switch (key) {
      case 'rectangular':
        return Window.rectangular(n);
      case 'hann':
        return Window.hann(n);
      case 'blackman-harris-4':
        return Window.blackmanHarris4(n);
      case 'flat-top':
        return Window.flatTop(n);
      case 'hft95':
        return Window.hft95(n);
    }
  }

  /**
   * Amplitude response |W(delta)| / |W(0)| to a complex tone `delta` bins from a bin centre,
   * exact for this N: each cosine term shifts the Dirichlet kernel by k bins.
   * @param delta offset in bins, any real value
   */
  response(delta: number): number {
    const n = this.n;
    let re = 0;
    let im = 0;
    for (let k = 0; k < this.c.length; k++) {
      const half = k === 0 ? this.c[0] : this.c[k] / 2;
      for (const x of k === 0 ? [delta] : [delta - k, delta + k]) {
        // D(x) = sum_n exp(-j 2 pi x n / N) = exp(-j pi x (N-1)/N) sin(pi x) / sin(pi x / N)
        const s = Math.sin((Math.PI * x) / n);
        const mag = Math.abs(s) < 1e-300 ? n : Math.sin(Math.PI * x) / s;
        const phase = (-Math.PI * x * (n - 1)) / n;
        re += half * mag * Math.cos(phase);
        im += half * mag * Math.sin(phase);
      }
    }
    return Math.hypot(re, im) / this.sum;
  }

  toString(): string {
    return (
      `Window.${this.name}(n=${this.n}, coherentGain=${this.coherentGain.toFixed(5)}, ` +
      `enbw=${this.enbwBins.toFixed(4)} bins, scalloping=${this.scallopLossDb.toFixed(3)} dB)`
    );
  }
}
