// Runs in Node. Reads a SigMF recording (open standard, schema v1.2.x): the .sigmf-meta JSON and its
// dataset. Complex datatypes only, one channel; the first capture segment is the one read.
import { readFile, stat } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { BenchError } from '../../../app/errors';
import { ContiguousRecording, bytesPerSample, type SampleFormat } from './recording';

/** SigMF datatype: (r|c)(f32|f64|i32|i16|u32|u16)_(le|be) or (r|c)(i8|u8). */
const DATATYPE = /^([rc])(?:(f32|f64|i32|i16|u32|u16)_(le|be)|(i8|u8))$/;

export interface SigmfInfo {
  metaPath: string;
  dataPath: string;
  datatype: string;
  format: SampleFormat;
  sampleRate: number;
  /** `core:frequency` of the first capture, Hz, when given. */
  centerHz: number | null;
  /** Byte offset of the first capture's first sample in the dataset. */
  dataOffset: number;
  /** Samples in the first capture segment. */
  sampleCount: number;
  /** Number of capture segments in the recording. */
  segments: number;
}

/** Parses a datatype string; EINVAL naming global.core:datatype for anything else. */
export function parseDatatype(datatype: unknown, where: string): SampleFormat {
  const field = 'global.core:datatype';
  if (typeof datatype !== 'string') {
    throw new BenchError('EINVAL', `required by SigMF and must be a string (${where})`, field);
  }
  const m = DATATYPE.exec(datatype);
  if (!m) {
    throw new BenchError(
      'EINVAL',
      `unknown datatype "${datatype}" (${where}); SigMF types are (r|c)(f32|f64|i32|i16|u32|u16)_(le|be) or (r|c)(i8|u8), e.g. cf32_le, ci16_le, cu8`,
      field,
    );
  }
  if (m[1] === 'r') {
    throw new BenchError(
      'EINVAL',
      `"${datatype}" holds real samples; an IQ measurement needs a complex type such as c${datatype.slice(1)} (${where})`,
      field,
    );
  }
  const t = m[2] ?? m[4];
  const kind = t[0] as 'f' | 'i' | 'u';
  const bits = Number(t.slice(1));
  // Unsigned SDR samples sit symmetrically about mid-scale (127.5 for 8 bits).
  const zero = kind === 'u' ? (2 ** bits - 1) / 2 : undefined;
  return { kind, bits, littleEndian: m[3] !== 'be', zero };
}

/**
 * Reads and validates the metadata. `path` may name the .sigmf-meta file, or the .sigmf-data file
 * (the metadata next to it is used).
 */
export async function readSigmfInfo(path: string): Promise<SigmfInfo> {
  const metaPath = path.endsWith('.sigmf-data') ? path.slice(0, -'.sigmf-data'.length) + '.sigmf-meta' : path;
  let text: string;
  try {
    text = await readFile(metaPath, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'ENOENT') throw new BenchError('ENOTFOUND', 'no such metadata file', metaPath);
    throw new BenchError('EIO', `cannot read: ${(e as Error).message}`, metaPath);
  }
  let meta: unknown;
  try {
    meta = JSON.parse(text);
  } catch (e) {
    throw new BenchError('EINVAL', `not valid JSON: ${(e as Error).message}`, metaPath);
  }
  const where = basename(metaPath);
  const bad = (field: string, message: string): never => {
    throw new BenchError('EINVAL', `${message} (${where})`, field);
  };
  const isObject = (v: unknown): v is Record<string, unknown> =>
    typeof v === 'object' && v !== null && !Array.isArray(v);
  if (!isObject(meta))
    return bad('(top level)', 'the metadata must be a JSON object with global, captures and annotations');
  const g = meta.global;
  if (!isObject(g)) return bad('global', 'required by SigMF and must be an object');
  if (!Array.isArray(meta.captures))
    return bad('captures', 'required by SigMF and must be an array (it may be empty)');
  if (!Array.isArray(meta.annotations))
    return bad('annotations', 'required by SigMF and must be an array (it may be empty)');

  const format = parseDatatype(g['core:datatype'], where);
  const version = g['core:version'];
  if (typeof version !== 'string' || !/^\d+\.\d+\.\d+/.test(version)) {
    bad('global.core:version', `required by SigMF in the form X.Y.Z, got ${JSON.stringify(version)}`);
  }
  const channels = g['core:num_channels'] ?? 1;
  if (channels !== 1)
    bad(
      'global.core:num_channels',
      `${JSON.stringify(channels)} interleaved channels are not supported; one IQ channel per recording`,
    );
  const rate = g['core:sample_rate'];
  if (rate === undefined) bad('global.core:sample_rate', 'missing; a measurement needs the sample rate');
  if (typeof rate !== 'number' || !Number.isFinite(rate) || rate <= 0) {
    bad(
      'global.core:sample_rate',
      `must be a positive number of samples per second, got ${JSON.stringify(rate)}`,
    );
  }

  const captures = meta.captures as unknown[];
  let previous = -1;
  captures.forEach((c, i) => {
    if (!isObject(c)) return bad(`captures[${i}]`, 'must be an object');
    const s = c['core:sample_start'];
    if (typeof s !== 'number' || !Number.isInteger(s) || s < 0) {
      return bad(
        `captures[${i}].core:sample_start`,
        `required by SigMF and must be a whole number >= 0, got ${JSON.stringify(s)}`,
      );
    }
    if (s <= previous)
      return bad(`captures[${i}].core:sample_start`, 'captures must be sorted by sample_start, ascending');
    previous = s;
    const f = c['core:frequency'];
    if (f !== undefined && (typeof f !== 'number' || !Number.isFinite(f))) {
      return bad(`captures[${i}].core:frequency`, `must be a number of Hz, got ${JSON.stringify(f)}`);
    }
    const h = c['core:header_bytes'];
    if (h !== undefined && !isCount(h))
      return bad(
        `captures[${i}].core:header_bytes`,
        `must be a whole number of bytes >= 0, got ${JSON.stringify(h)}`,
      );
    return undefined;
  });
  const first = (captures[0] ?? { 'core:sample_start': 0 }) as Record<string, unknown>;
  const start = first['core:sample_start'] as number;
  const headerBytes = (first['core:header_bytes'] as number | undefined) ?? 0;
  const trailing = g['core:trailing_bytes'] ?? 0;
  if (!isCount(trailing))
    bad(
      'global.core:trailing_bytes',
      `must be a whole number of bytes >= 0, got ${JSON.stringify(trailing)}`,
    );
  const dataset = g['core:dataset'];
  // A file name beside the metadata (SigMF's non-conforming dataset), never a path to elsewhere.
  if (dataset !== undefined && (typeof dataset !== 'string' || !/^(?!\.\.?$)[^/\\]+$/.test(dataset)))
    bad(
      'global.core:dataset',
      `must be the name of a file beside the metadata, got ${JSON.stringify(dataset)}`,
    );
  const dataPath =
    typeof dataset === 'string'
      ? join(dirname(metaPath), dataset)
      : metaPath.replace(/\.sigmf-meta$/, '') + '.sigmf-data';

  let size: number;
  try {
    const st = await stat(dataPath);
    if (!st.isFile()) throw new BenchError('EINVAL', `the dataset of ${where} is not a file`, dataPath);
    size = st.size;
  } catch (e) {
    if (e instanceof BenchError) throw e;
    throw new BenchError('ENOTFOUND', `the dataset of ${where} is missing`, dataPath);
  }
  const sampleBytes = bytesPerSample(format);
  const usable = size - headerBytes - (trailing as number);
  if (usable < 0)
    bad('global.core:trailing_bytes', `header and trailing bytes exceed the dataset's ${size} bytes`);
  if (usable % sampleBytes !== 0) {
    throw new BenchError(
      'EINVAL',
      `truncated: the dataset's sample data is ${usable} bytes, which ends part-way through a ${sampleBytes}-byte ` +
        `${g['core:datatype'] as string} sample at byte ${size - (usable % sampleBytes)}`,
      dataPath,
    );
  }
  const total = usable / sampleBytes;
  const next = captures[1] as Record<string, unknown> | undefined;
  const end = Math.min(total, next ? (next['core:sample_start'] as number) : total);
  if (start >= total)
    bad('captures[0].core:sample_start', `${start} is beyond the dataset's ${total} samples`);
  const freq = first['core:frequency'];
  return {
    metaPath,
    dataPath,
    datatype: g['core:datatype'] as string,
    format,
    sampleRate: rate as number,
    centerHz: typeof freq === 'number' ? freq : null,
    dataOffset: headerBytes + start * sampleBytes,
    sampleCount: end - start,
    segments: Math.max(1, captures.length),
  };
}

function isCount(v: unknown): v is number {
  return typeof v === 'number' && Number.isSafeInteger(v) && v >= 0;
}

/** Opens a SigMF recording (first capture segment) for reading. */
export async function openSigmf(path: string): Promise<ContiguousRecording> {
  const info = await readSigmfInfo(path);
  return ContiguousRecording.open({
    kind: 'sigmf',
    path: info.metaPath,
    dataPath: info.dataPath,
    sampleRate: info.sampleRate,
    centerHz: info.centerHz,
    sampleCount: info.sampleCount,
    format: info.format,
    dataOffset: info.dataOffset,
  });
}
