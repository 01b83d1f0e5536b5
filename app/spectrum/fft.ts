// Runs anywhere (app/ is runtime-free; the WASM loader finds its .wasm next to itself by import.meta.url).
// Complex FFT on float32 interleaved I,Q through PFFFT compiled to WASM.
//
// Chosen by benchmark on the development machine (Node 20, one core, complex, forward, ordered):
// N = 65536: PFFFT SIMD build 0.61 ms, PFFFT scalar build 1.50 ms, fft.js 2.77 ms;
// N = 262144: 3.49 / 7.16 / 21.4 ms. The SIMD build is used, the scalar one if SIMD is unavailable.
import type { PffftModule } from '@echogarden/pffft-wasm';
import { BenchError, check } from '../errors';

let modulePromise: Promise<PffftModule> | null = null;

/** Loads the WASM module once per process (async: the binary is fetched or read on first use). */
function loadModule(): Promise<PffftModule> {
  modulePromise ??= (async () => {
    try {
      const simd = await import('@echogarden/pffft-wasm/simd');
      return await simd.default();
    } catch {
      const scalar = await import('@echogarden/pffft-wasm');
      return await scalar.default();
    }
  })();
  return modulePromise;
}

/** True when n is a size PFFFT transforms as complex: a multiple of 16 whose only prime factors are 2, 3, 5. */
export function isFftSize(n: number): boolean {
  if (!Number.isInteger(n) || n < 16 || n % 16 !== 0 || n > 1 << 24) return false;
  let m = n;
  for (const p of [2, 3, 5]) while (m % p === 0) m /= p;
  return m === 1;
}

/**
 * A forward complex FFT of fixed size n, unscaled: X[k] = sum_n x[n] exp(-j 2 pi k n / N), the same
 * convention and bin order as numpy.fft.fft (bin k is k*fs/N for k < N/2, (k-N)*fs/N above).
 * Write the input into `input()`, call `forward()`, read `output()`. The arrays live in WASM memory:
 * fetch them after creating other transforms (memory growth replaces the buffer), and call
 * `dispose()` when done.
 */
export class Fft {
  private inView: Float32Array;
  private outView: Float32Array;
  private disposed = false;

  private constructor(
    private readonly mod: PffftModule,
    readonly n: number,
    private readonly setup: number,
    private readonly inPtr: number,
    private readonly outPtr: number,
    private readonly workPtr: number,
  ) {
    this.inView = new Float32Array(mod.HEAPF32.buffer, inPtr, 2 * n);
    this.outView = new Float32Array(mod.HEAPF32.buffer, outPtr, 2 * n);
  }

  /**
   * @param n number of complex points: a multiple of 16 made of factors 2, 3, 5 (any power of two >= 16)
   */
  static async create(n: number): Promise<Fft> {
    check(
      isFftSize(n),
      'fftSize',
      `must be a multiple of 16 with no prime factor above 5 (e.g. 4096, 65536), got ${String(n)}`,
    );
    const mod = await loadModule();
    const setup = mod._pffft_new_setup(n, 1);
    if (!setup) throw new BenchError('EINVAL', `size ${n} is not supported by the FFT`, 'fftSize');
    const bytes = 8 * n;
    const inPtr = mod._pffft_aligned_malloc(bytes);
    const outPtr = mod._pffft_aligned_malloc(bytes);
    const workPtr = mod._pffft_aligned_malloc(bytes);
    if (!inPtr || !outPtr || !workPtr) {
      for (const p of [inPtr, outPtr, workPtr]) if (p) mod._pffft_aligned_free(p);
      mod._pffft_destroy_setup(setup);
      throw new BenchError('ENAVAIL', `out of memory for an FFT of ${n} points`, 'fftSize');
    }
    return new Fft(mod, n, setup, inPtr, outPtr, workPtr);
  }

  private refresh(): void {
    const buf = this.mod.HEAPF32.buffer;
    if (this.inView.buffer !== buf) {
      this.inView = new Float32Array(buf, this.inPtr, 2 * this.n);
      this.outView = new Float32Array(buf, this.outPtr, 2 * this.n);
    }
  }

  /** Interleaved I,Q input, length 2n. */
  input(): Float32Array {
    this.refresh();
    return this.inView;
  }

  /** Interleaved Re,Im output of the last forward(), length 2n. */
  output(): Float32Array {
    this.refresh();
    return this.outView;
  }

  /** Transforms input() into output(); the input is left as it was. */
  forward(): void {
    if (this.disposed) throw new BenchError('ECONFLICT', 'this FFT has been disposed', 'fft');
    this.mod._pffft_transform_ordered(this.setup, this.inPtr, this.outPtr, this.workPtr, 0);
  }

  /** Frees the WASM memory; the object cannot be used afterwards. */
  dispose(): void {
    if (this.disposed) return;
    this.disposed = true;
    this.mod._pffft_aligned_free(this.inPtr);
    this.mod._pffft_aligned_free(this.outPtr);
    this.mod._pffft_aligned_free(this.workPtr);
    this.mod._pffft_destroy_setup(this.setup);
  }

  toString(): string {
    return `Fft(n=${this.n}, complex, forward, unscaled)`;
  }
}

/** Async factory (the WASM module loads on first use). Same as Fft.create(n). */
export function createFft(n: number): Promise<Fft> {
  return Fft.create(n);
}
