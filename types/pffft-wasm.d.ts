// Types for the PFFFT WASM build (the package ships none). Only what app/spectrum/fft.ts uses.
declare module '@echogarden/pffft-wasm/simd' {
  import type { PffftModuleFactory } from '@echogarden/pffft-wasm';
  const factory: PffftModuleFactory;
  export default factory;
}

declare module '@echogarden/pffft-wasm' {
  export interface PffftModule {
    HEAPF32: Float32Array;
    /** size in points, transform 0 = real, 1 = complex; returns 0 when the size is not supported. */
    _pffft_new_setup(n: number, transform: number): number;
    _pffft_destroy_setup(setup: number): void;
    /** direction 0 = forward, 1 = backward; buffers are byte addresses from _pffft_aligned_malloc. */
    _pffft_transform_ordered(
      setup: number,
      input: number,
      output: number,
      work: number,
      direction: number,
    ): void;
    _pffft_aligned_malloc(bytes: number): number;
    _pffft_aligned_free(ptr: number): void;
    _pffft_simd_size(): number;
  }
  export type PffftModuleFactory = (options?: {
    wasmBinary?: ArrayBuffer | Uint8Array;
  }) => Promise<PffftModule>;
  const factory: PffftModuleFactory;
  export default factory;
}
