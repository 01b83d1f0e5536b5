// Runs anywhere (app/ is runtime-free; needs WebAssembly with SIMD, else callers use plain JS).
// The one per-frame step plain JS does slowly: unsigned 8-bit I,Q to windowed float32, four complex
// samples per SIMD step. The module is assembled here from the listing below rather than shipped as
// an opaque binary, so what runs is what is read.
//
//   (func (export "convert") (param $in i32) (param $win i32) (param $out i32) (param $groups i32) (param $zero f32)
//     (local $z v128) (local $w16 v128)
//     (local.set $z (f32x4.splat (local.get $zero)))
//     (loop $next
//       ;; 8 bytes = I0 Q0 I1 Q1 I2 Q2 I3 Q3 -> two f32x4 of (byte - zero) * window
//       (local.set $w16 (i16x8.extend_low_i8x16_u (v128.load64_zero (local.get $in))))
//       (v128.store offset=0 (local.get $out)
//         (f32x4.mul (f32x4.sub (f32x4.convert_i32x4_u (i32x4.extend_low_i16x8_u (local.get $w16))) (local.get $z))
//                    (v128.load offset=0 (local.get $win))))
//       (v128.store offset=16 (local.get $out)
//         (f32x4.mul (f32x4.sub (f32x4.convert_i32x4_u (i32x4.extend_high_i16x8_u (local.get $w16))) (local.get $z))
//                    (v128.load offset=16 (local.get $win))))
//       (local.set $in (i32.add (local.get $in) (i32.const 8)))
//       (local.set $win (i32.add (local.get $win) (i32.const 32)))
//       (local.set $out (i32.add (local.get $out) (i32.const 32)))
//       (br_if $next (local.tee $groups (i32.sub (local.get $groups) (i32.const 1))))))
//
// Opcodes from the WebAssembly SIMD binary encoding (0xfd prefix, LEB128 sub-opcode).

const leb = (v: number): number[] => {
  const out: number[] = [];
  do {
    let b = v & 0x7f;
    v >>>= 7;
    if (v) b |= 0x80;
    out.push(b);
  } while (v);
  return out;
};
const vec = (items: number[][]): number[] => [...leb(items.length), ...items.flat()];
const name = (s: string): number[] => [...leb(s.length), ...[...s].map((c) => c.charCodeAt(0))];
const section = (id: number, body: number[]): number[] => [id, ...leb(body.length), ...body];

const I32 = 0x7f;
const F32 = 0x7d;
const V128 = 0x7b;
const localGet = (i: number) => [0x20, i];
const localSet = (i: number) => [0x21, i];
const localTee = (i: number) => [0x22, i];
/** i32.const with a signed LEB128 immediate. */
const i32Const = (v: number) => {
  const out = [0x41];
  for (;;) {
    const b = v & 0x7f;
    v >>= 7;
    if ((v === 0 && !(b & 0x40)) || (v === -1 && b & 0x40)) return [...out, b];
    out.push(b | 0x80);
  }
};
const loop = [0x03, 0x40]; // loop with no result
const brIf = (depth: number) => [0x0d, depth];
const end = [0x0b];
/** "\0asm", version 1. */
const HEADER = [0x00, 0x61, 0x73, 0x6d, 0x01, 0x00, 0x00, 0x00];
const i32Add = [0x6a];
const i32Sub = [0x6b];
const simd = (op: number, ...imm: number[]) => [0xfd, ...leb(op), ...imm];
/** memarg: alignment exponent, byte offset. */
const mem = (align: number, offset: number) => [align, ...leb(offset)];
const v128Load = (offset: number) => simd(0x00, ...mem(4, offset));
const v128Store = (offset: number) => simd(0x0b, ...mem(4, offset));
const v128Load64Zero = simd(0x5d, ...mem(0, 0));
const f32x4Splat = simd(0x13);
const i16x8ExtendLowU8 = simd(0x89);
const i32x4ExtendLowU16 = simd(0xa9);
const i32x4ExtendHighU16 = simd(0xaa);
const f32x4ConvertU = simd(0xfb);
const f32x4Sub = simd(0xe5);
const f32x4Mul = simd(0xe6);

// Parameters 0..4: in, win, out, groups, zero; locals 5 ($z) and 6 ($w16).
const half = (extend: number[], offset: number) => [
  ...localGet(2),
  ...localGet(6),
  ...extend,
  ...f32x4ConvertU,
  ...localGet(5),
  ...f32x4Sub,
  ...localGet(1),
  ...v128Load(offset),
  ...f32x4Mul,
  ...v128Store(offset),
];
const code = [
  ...vec([[2, V128]]),
  ...localGet(4),
  ...f32x4Splat,
  ...localSet(5),
  ...loop,
  ...localGet(0),
  ...v128Load64Zero,
  ...i16x8ExtendLowU8,
  ...localSet(6),
  ...half(i32x4ExtendLowU16, 0),
  ...half(i32x4ExtendHighU16, 16),
  ...localGet(0),
  ...i32Const(8),
  ...i32Add,
  ...localSet(0),
  ...localGet(1),
  ...i32Const(32),
  ...i32Add,
  ...localSet(1),
  ...localGet(2),
  ...i32Const(32),
  ...i32Add,
  ...localSet(2),
  ...localGet(3),
  ...i32Const(1),
  ...i32Sub,
  ...localTee(3),
  ...brIf(0),
  ...end, // loop
  ...end, // function
];
const MODULE = new Uint8Array([
  ...HEADER,
  ...section(1, vec([[0x60, ...vec([[I32], [I32], [I32], [I32], [F32]]), ...vec([])]])),
  ...section(2, vec([[...name('env'), ...name('mem'), 0x02, 0x00, ...leb(1)]])),
  ...section(3, vec([[0]])),
  ...section(7, vec([[...name('convert'), 0x00, 0]])),
  ...section(10, vec([[...leb(code.length), ...code]])),
]);

let compiled: WebAssembly.Module | null | undefined;

/** The compiled kernel, or null where WebAssembly SIMD is unavailable. */
function kernel(): WebAssembly.Module | null {
  if (compiled === undefined) {
    try {
      compiled =
        typeof WebAssembly === 'object' && WebAssembly.validate(MODULE)
          ? new WebAssembly.Module(MODULE)
          : null;
    } catch {
      compiled = null;
    }
  }
  return compiled;
}

/**
 * Converts frames of n unsigned 8-bit I,Q samples to windowed float32, (byte - zero) * w[i] / fullScale,
 * the same as the plain-JS loop to within float32 rounding (the scaled window is held in float32 here).
 */
export class U8Windower {
  private readonly bytes: Uint8Array;
  private readonly win: Float32Array;
  private readonly out: Float32Array;
  private zero = NaN;

  private constructor(
    private readonly n: number,
    private readonly window: Float32Array,
    private readonly run: (
      inPtr: number,
      winPtr: number,
      outPtr: number,
      groups: number,
      zero: number,
    ) => void,
    memory: WebAssembly.Memory,
  ) {
    // Layout: bytes (2n) | window, interleaved and scaled (8n) | output (8n); 2n is a multiple of 16.
    this.bytes = new Uint8Array(memory.buffer, 0, 2 * n);
    this.win = new Float32Array(memory.buffer, 2 * n, 2 * n);
    this.out = new Float32Array(memory.buffer, 10 * n, 2 * n);
  }

  /** A converter for `window` (length n, a multiple of 16), or null without WebAssembly SIMD. */
  static create(window: Float32Array): U8Windower | null {
    const mod = kernel();
    const n = window.length;
    if (!mod || n % 16 !== 0) return null;
    const memory = new WebAssembly.Memory({ initial: Math.ceil((18 * n) / 65536) });
    const instance = new WebAssembly.Instance(mod, { env: { mem: memory } });
    const run = instance.exports.convert as (a: number, b: number, c: number, d: number, e: number) => void;
    return new U8Windower(n, window, run, memory);
  }

  /**
   * Converts the n complex samples from sample `start` of `bytes` into `out` (length 2n).
   * @param zero byte value of 0.0; full scale is the larger distance from it to 0 or 255
   */
  convert(bytes: Uint8Array, start: number, zero: number, out: Float32Array): void {
    const n = this.n;
    if (zero !== this.zero) {
      const scale = 1 / Math.max(zero, 255 - zero);
      for (let i = 0; i < n; i++) this.win[2 * i] = this.win[2 * i + 1] = this.window[i] * scale;
      this.zero = zero;
    }
    this.bytes.set(bytes.subarray(2 * start, 2 * (start + n)));
    this.run(0, 2 * n, 10 * n, n / 4, zero);
    out.set(this.out);
  }
}
