// Runs anywhere (app/ is runtime-free). Windowed FFT frames averaged into one power spectrum.
import { BenchError, check } from '../errors';
import { Fft } from './fft';
import { U8Windower } from './u8simd';
import { Window } from './window';

/** An averaged power spectrum as SpectrumAverager.spectrum() gives it. */
export interface AveragedSpectrum {
  /** Power per bin, FFT order; times `scale` it is in full-scale units (1.0 = 0 dBFS). */
  power: Float64Array;
  /** Default 1. */
  scale?: number;
  /** Number of frames averaged (sets the noise statistics). */
  averages: number;
  window: Window;
}

/**
 * Averages |FFT|^2 of windowed frames of complex samples, scaled so that a complex tone of
 * amplitude A on a bin centre reads A^2 in its bin (0 dBFS = amplitude 1.0), and white noise of
 * total power s^2 reads s^2 * enbwBins / n per bin. Frames do not overlap; bins stay in FFT order
 * (bin k is k*fs/n for k < n/2, (k-n)*fs/n above).
 */
export class SpectrumAverager {
  private readonly acc: Float64Array;
  private readonly out: Float64Array;
  private count = 0;

  private constructor(
    readonly window: Window,
    private readonly fft: Fft,
    /** SIMD conversion of 8-bit frames where the runtime has WebAssembly SIMD; else plain JS. */
    private readonly u8: U8Windower | null,
  ) {
    this.acc = new Float64Array(window.n);
    this.out = new Float64Array(window.n);
  }

  /**
   * An averager of window.n-point frames (async: the FFT's WASM module loads on first use).
   * @param simd convert 8-bit frames with WebAssembly SIMD where available (false: plain JS, for checks)
   */
  static async create(window: Window, simd = true): Promise<SpectrumAverager> {
    const fft = await Fft.create(window.n);
    return new SpectrumAverager(window, fft, simd ? U8Windower.create(window.values) : null);
  }

  get n(): number {
    return this.window.n;
  }

  /** Number of frames averaged since the last reset(). */
  get averages(): number {
    return this.count;
  }

  /** Starts a new average (the next frame overwrites the sums rather than adding to them). */
  reset(): void {
    this.count = 0;
  }

  /**
   * Adds one frame of float samples.
   * @param iq interleaved I,Q, full scale 1.0
   * @param start index of the frame's first complex sample; the frame needs n samples from there
   */
  pushComplex(iq: Float32Array, start = 0): void {
    const n = this.n;
    if (!(Number.isInteger(start) && start >= 0 && 2 * (start + n) <= iq.length))
      frameError(n, start, iq.length);
    const w = this.window.values;
    const x = this.fft.input();
    let j = 2 * start;
    for (let i = 0; i < n; i++, j += 2) {
      const wi = w[i];
      x[2 * i] = iq[j] * wi;
      x[2 * i + 1] = iq[j + 1] * wi;
    }
    this.accumulate();
  }

  /**
   * Adds one frame of unsigned 8-bit samples (the SDR TCP stream, cu8 recordings): converted and
   * windowed in one pass (WebAssembly SIMD where the runtime has it), then transformed.
   * @param bytes interleaved I,Q bytes
   * @param start index of the frame's first complex sample
   * @param zero the byte value of 0.0 (127.5 for most SDR dongles; 128 for WAV); full scale is the
   *   larger distance from it to 0 or 255
   */
  pushU8(bytes: Uint8Array, start = 0, zero = 127.5): void {
    const n = this.n;
    if (!(Number.isInteger(start) && start >= 0 && 2 * (start + n) <= bytes.length))
      frameError(n, start, bytes.length);
    if (!(zero >= 0 && zero <= 255)) check(false, 'zero', `must be between 0 and 255, got ${zero}`);
    const x = this.fft.input();
    if (this.u8) {
      this.u8.convert(bytes, start, zero, x);
    } else {
      const scale = 1 / Math.max(zero, 255 - zero);
      const w = this.window.values;
      let j = 2 * start;
      for (let i = 0; i < n; i++, j += 2) {
        const wi = w[i] * scale;
        x[2 * i] = (bytes[j] - zero) * wi;
        x[2 * i + 1] = (bytes[j + 1] - zero) * wi;
      }
    }
    this.accumulate();
  }

  private accumulate(): void {
    this.fft.forward();
    const y = this.fft.output();
    const acc = this.acc;
    const n = this.n;
    if (this.count === 0) {
      for (let k = 0, j = 0; k < n; k++, j += 2) {
        const re = y[j];
        const im = y[j + 1];
        acc[k] = re * re + im * im;
      }
    } else {
      for (let k = 0, j = 0; k < n; k++, j += 2) {
        const re = y[j];
        const im = y[j + 1];
        acc[k] += re * re + im * im;
      }
    }
    this.count++;
  }

  /**
   * The sums of |X|^2 behind the average, FFT order, owned by this object (do not modify); multiply
   * by `scale` for full-scale power. measureSpectrum() takes them as they are, saving a pass.
   */
  sums(): Float64Array {
    check(this.count > 0, 'averages', 'no frames have been added yet');
    return this.acc;
  }

  /** The average as measureSpectrum() takes it, without copying (valid until the next push or reset). */
  spectrum(): AveragedSpectrum {
    return { power: this.sums(), scale: this.scale, averages: this.count, window: this.window };
  }

  /** Factor from sums() to full-scale power per bin: 1 / (averages * sum(w)^2). */
  get scale(): number {
    return 1 / (this.count * this.window.sum * this.window.sum);
  }

  /**
   * The averaged spectrum, per bin, in units of full-scale power (1.0 = 0 dBFS).
   * The returned array is owned by this object and overwritten by the next call.
   */
  power(): Float64Array {
    check(this.count > 0, 'averages', 'no frames have been added yet');
    const g = this.scale;
    const acc = this.acc;
    const out = this.out;
    for (let k = 0; k < out.length; k++) out[k] = acc[k] * g;
    return out;
  }

  /** Frees the FFT's WASM memory. */
  dispose(): void {
    this.fft.dispose();
  }

  toString(): string {
    return `SpectrumAverager(n=${this.n}, window=${this.window.name}, averages=${this.count})`;
  }
}

/** Called per frame: the message is built only when the frame does not fit. */
function frameError(n: number, start: number, length: number): never {
  throw new BenchError(
    'EINVAL',
    `a frame needs ${n} complex samples from sample ${start}, but only ${Math.max(0, length / 2 - start)} are there`,
    'samples',
  );
}
