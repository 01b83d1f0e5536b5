// Runs in Node. What every IQ recording reader gives: the capture's figures and a way to read complex
// samples as float32 (interleaved I,Q, full scale 1.0), decoded from the file's own sample format.
import { open, type FileHandle } from 'node:fs/promises';
import { BenchError, check } from '../../../app/errors';

/** One complex sample format as stored: component type, width and byte order. */
export interface SampleFormat {
  /** 'u' unsigned integer, 'i' signed integer, 'f' IEEE float. */
  kind: 'u' | 'i' | 'f';
  /** Bits per component (8, 16, 24, 32, 64). */
  bits: number;
  littleEndian: boolean;
  /** For unsigned formats: the code of 0.0 (WAV 8-bit: 128; SDR 8-bit: 127.5). */
  zero?: number;
}

export interface IqRecording {
  /** 'wav' or 'sigmf'. */
  readonly kind: string;
  readonly path: string;
  /** Complex samples per second. */
  readonly sampleRate: number;
  /** Centre frequency of the capture, Hz, when the file says. */
  readonly centerHz: number | null;
  /** Number of complex samples. */
  readonly sampleCount: number;
  /** Human-readable format, e.g. "16-bit signed little-endian". */
  readonly formatLabel: string;
  /** The stored sample format (its width says where full scale is). */
  readonly format: SampleFormat;
  /**
   * Reads complex samples start .. start+count-1 (clipped to the recording) as interleaved float32
   * I,Q with full scale 1.0.
   */
  read(start: number, count: number): Promise<Float32Array>;
  close(): Promise<void>;
}

/** Bytes of one complex sample. */
export function bytesPerSample(f: SampleFormat): number {
  return (2 * f.bits) / 8;
}

export function describeFormat(f: SampleFormat): string {
  const kind = f.kind === 'f' ? 'float' : f.kind === 'i' ? 'signed' : 'unsigned';
  const order = f.bits === 8 ? '' : f.littleEndian ? ' little-endian' : ' big-endian';
  return `${f.bits}-bit ${kind}${order}`;
}

/** Decodes interleaved components to float32 with full scale 1.0. */
export function decode(bytes: Uint8Array, f: SampleFormat, out: Float32Array): void {
  const v = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const m = out.length;
  const le = f.littleEndian;
  const key = `${f.kind}${f.bits}`;
  switch (key) {
    case 'u8': {
      const z = f.zero ?? 128;
      const s = 1 / Math.max(z, 255 - z);
      for (let i = 0; i < m; i++) out[i] = (bytes[i] - z) * s;
      return;
    }
    case 'i8':
      for (let i = 0; i < m; i++) out[i] = v.getInt8(i) / 128;
      return;
    case 'u16': {
      const z = f.zero ?? 32768;
      const s = 1 / Math.max(z, 65535 - z);
      for (let i = 0; i < m; i++) out[i] = (v.getUint16(2 * i, le) - z) * s;
      return;
    }
    case 'i16':
      for (let i = 0; i < m; i++) out[i] = v.getInt16(2 * i, le) / 32768;
      return;
    case 'i24':
      for (let i = 0; i < m; i++) {
        const b0 = bytes[3 * i];
        const b1 = bytes[3 * i + 1];
        const b2 = bytes[3 * i + 2];
        const x = le ? b0 | (b1 << 8) | (b2 << 16) : b2 | (b1 << 8) | (b0 << 16);
        out[i] = ((x << 8) >> 8) / 8388608;
      }
      return;
    case 'u32': {
      const z = f.zero ?? 2147483648;
      const s = 1 / Math.max(z, 4294967295 - z);
      for (let i = 0; i < m; i++) out[i] = (v.getUint32(4 * i, le) - z) * s;
      return;
    }
    case 'i32':
      for (let i = 0; i < m; i++) out[i] = v.getInt32(4 * i, le) / 2147483648;
      return;
    case 'f32':
      for (let i = 0; i < m; i++) out[i] = v.getFloat32(4 * i, le);
      return;
    case 'f64':
      for (let i = 0; i < m; i++) out[i] = v.getFloat64(8 * i, le);
      return;
    default:
      throw new BenchError('EINVAL', `cannot decode ${describeFormat(f)} samples`, 'format');
  }
}

/**
 * A recording whose samples sit contiguously in one file from `dataOffset`.
 * Reads are positioned (no shared file offset), so reads may overlap or come in any order.
 */
export class ContiguousRecording implements IqRecording {
  readonly formatLabel: string;

  private constructor(
    readonly kind: string,
    readonly path: string,
    private readonly fh: FileHandle,
    readonly sampleRate: number,
    readonly centerHz: number | null,
    readonly sampleCount: number,
    readonly format: SampleFormat,
    private readonly dataOffset: number,
  ) {
    this.formatLabel = describeFormat(format);
  }

  static async open(o: {
    kind: string;
    path: string;
    dataPath?: string;
    sampleRate: number;
    centerHz: number | null;
    sampleCount: number;
    format: SampleFormat;
    dataOffset: number;
  }): Promise<ContiguousRecording> {
    const fh = await openForReading(o.dataPath ?? o.path);
    return new ContiguousRecording(
      o.kind,
      o.path,
      fh,
      o.sampleRate,
      o.centerHz,
      o.sampleCount,
      o.format,
      o.dataOffset,
    );
  }

  async read(start: number, count: number): Promise<Float32Array> {
    check(
      Number.isInteger(start) && start >= 0,
      'start',
      `must be a whole sample number >= 0, got ${String(start)}`,
    );
    check(
      Number.isInteger(count) && count >= 0,
      'count',
      `must be a whole number of samples >= 0, got ${String(count)}`,
    );
    const k = Math.max(0, Math.min(count, this.sampleCount - start));
    const size = bytesPerSample(this.format);
    const bytes = new Uint8Array(k * size);
    const pos = this.dataOffset + start * size;
    let got = 0;
    while (got < bytes.length) {
      const { bytesRead } = await this.fh.read(bytes, got, bytes.length - got, pos + got);
      if (bytesRead === 0) {
        throw new BenchError(
          'EIO',
          `file ended at byte ${pos + got} while reading samples ${start}..${start + k - 1}`,
          this.path,
        );
      }
      got += bytesRead;
    }
    const out = new Float32Array(2 * k);
    decode(bytes, this.format, out);
    if (this.format.kind === 'f') {
      // A float file can hold NaN or infinity (or a 64-bit value beyond float range): no level can be
      // computed from it, so it is refused where it sits rather than turned into a silent null.
      const i = out.findIndex((x) => !Number.isFinite(x));
      if (i >= 0) {
        const n = start + Math.floor(i / 2);
        throw new BenchError(
          'EINVAL',
          `sample ${n} (${i % 2 === 0 ? 'I' : 'Q'}, at byte ${pos + i * (size / 2)} of its data) ` +
            `is ${out[i]} in ${describeFormat(this.format)} samples: the recording is damaged, or not in the format it declares`,
          this.path,
        );
      }
    }
    return out;
  }

  async close(): Promise<void> {
    await this.fh.close();
  }
}

/** Opens a file for reading; ENOTFOUND / EIO naming the path otherwise. */
export async function openForReading(path: string): Promise<FileHandle> {
  try {
    return await open(path, 'r');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'ENOENT') throw new BenchError('ENOTFOUND', 'no such file', path);
    throw new BenchError('EIO', `cannot open: ${(e as Error).message}`, path);
  }
}

/**
 * The magnitude at or beyond which a component sits at full scale, as decoded (full scale 1.0): the top code
 * of an integer format is 1 − 2^−(bits−1) (the bottom one −1); a float sample at ±1.0 or beyond.
 */
export function clipLevel(f: SampleFormat): number {
  return f.kind === 'f' ? 1 : 1 - 2 ** -(f.bits - 1);
}
