// Runs in Node. Reads a two-channel WAV file as an IQ recording: channel 1 = I, channel 2 = Q.
// RIFF/WAVE with PCM (8-bit unsigned, 16/24/32-bit signed), IEEE float (32/64-bit), or the same
// formats under WAVE_FORMAT_EXTENSIBLE. A WAV file does not carry a centre frequency.
import { BenchError } from '../../../app/errors';
import { ContiguousRecording, openForReading, type SampleFormat } from './recording';

const FORMAT_PCM = 0x0001;
const FORMAT_FLOAT = 0x0003;
const FORMAT_EXTENSIBLE = 0xfffe;
/** Bytes 2..15 of the sub-format GUID that carries an ordinary format tag (00000000-0000-0010-8000-00aa00389b71). */
const GUID_TAIL = [0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71];

export interface WavInfo {
  sampleRate: number;
  format: SampleFormat;
  /** Byte offset of the first sample. */
  dataOffset: number;
  /** Complex samples (sample frames). */
  sampleCount: number;
}

/** Opens a WAV file with two channels as IQ. */
export async function openWav(path: string): Promise<ContiguousRecording> {
  const info = await readWavInfo(path);
  return ContiguousRecording.open({
    kind: 'wav',
    path,
    sampleRate: info.sampleRate,
    centerHz: null,
    sampleCount: info.sampleCount,
    format: info.format,
    dataOffset: info.dataOffset,
  });
}

/** Parses the RIFF header and chunk list; EINVAL naming the file and the byte where it went wrong. */
export async function readWavInfo(path: string): Promise<WavInfo> {
  const fh = await openForReading(path);
  try {
    const size = (await fh.stat()).size;
    const bad = (message: string): never => {
      throw new BenchError('EINVAL', message, path);
    };
    const readAt = async (pos: number, len: number, what: string): Promise<DataView> => {
      const buf = new Uint8Array(len);
      const { bytesRead } = await fh.read(buf, 0, len, pos);
      if (bytesRead < len) {
        bad(
          `truncated: the file ends at byte ${size}, inside the ${what} that starts at byte ${pos} (needs ${len} bytes)`,
        );
      }
      return new DataView(buf.buffer);
    };
    const tag = (v: DataView, at: number) =>
      String.fromCharCode(v.getUint8(at), v.getUint8(at + 1), v.getUint8(at + 2), v.getUint8(at + 3));

    const head = await readAt(0, 12, 'RIFF header');
    const riff = tag(head, 0);
    if (riff === 'RF64') bad('RF64 (64-bit WAV) is not supported; convert it to SigMF or a plain WAV');
    if (riff !== 'RIFF' || tag(head, 8) !== 'WAVE') {
      bad(
        `not a WAV file: starts with "${printable(riff)}...${printable(tag(head, 8))}", expected "RIFF....WAVE"`,
      );
    }

    let pos = 12;
    let fmt: { sampleRate: number; format: SampleFormat; blockAlign: number } | null = null;
    while (pos + 8 <= size) {
      const ch = await readAt(pos, 8, 'chunk header');
      const id = tag(ch, 0);
      const len = ch.getUint32(4, true);
      const body = pos + 8;
      if (id === 'fmt ') {
        if (len < 16) bad(`the fmt chunk at byte ${pos} is ${len} bytes; it needs at least 16`);
        fmt = parseFmt(await readAt(body, Math.min(len, 40), 'fmt chunk'), len, pos, bad);
      } else if (id === 'data') {
        if (!fmt) bad(`the data chunk at byte ${pos} comes before any fmt chunk`);
        const f = fmt as NonNullable<typeof fmt>;
        // Writers that cannot seek back leave the size at its maximum: the data runs to the end.
        const declared = len === 0xffffffff ? size - body : len;
        if (body + declared > size) {
          bad(
            `truncated: the data chunk at byte ${pos} declares ${declared} bytes, but the file ends at byte ${size} ` +
              `(${size - body} bytes, ${Math.floor((size - body) / f.blockAlign)} samples present)`,
          );
        }
        if (declared % f.blockAlign !== 0) {
          bad(
            `the data chunk at byte ${pos} holds ${declared} bytes, not a whole number of ${f.blockAlign}-byte samples`,
          );
        }
        return {
          sampleRate: f.sampleRate,
          format: f.format,
          dataOffset: body,
          sampleCount: declared / f.blockAlign,
        };
      }
      pos = body + len + (len % 2);
    }
    return bad(
      fmt
        ? `no data chunk before the end of the file (byte ${size})`
        : `no fmt chunk before the end of the file (byte ${size})`,
    );
  } finally {
    await fh.close();
  }
}

function parseFmt(
  v: DataView,
  len: number,
  at: number,
  bad: (m: string) => never,
): { sampleRate: number; format: SampleFormat; blockAlign: number } {
  let code = v.getUint16(0, true);
  const channels = v.getUint16(2, true);
  const sampleRate = v.getUint32(4, true);
  const blockAlign = v.getUint16(12, true);
  const bits = v.getUint16(14, true);
  if (channels !== 2) bad(`channels: expected 2 (I and Q), got ${channels} (fmt chunk at byte ${at})`);
  if (sampleRate === 0) bad(`the sample rate is 0 (fmt chunk at byte ${at})`);
  if (code === FORMAT_EXTENSIBLE) {
    if (len < 40 || v.getUint16(16, true) < 22)
      bad(`the extensible fmt chunk at byte ${at} is too short for its sub-format`);
    const tail = GUID_TAIL.every((b, i) => v.getUint8(26 + i) === b);
    code = v.getUint16(24, true);
    if (!tail) bad(`the sub-format GUID in the fmt chunk at byte ${at} is not PCM or IEEE float`);
  }
  let format: SampleFormat;
  if (code === FORMAT_PCM && bits === 8) format = { kind: 'u', bits: 8, littleEndian: true, zero: 128 };
  else if (code === FORMAT_PCM && (bits === 16 || bits === 24 || bits === 32))
    format = { kind: 'i', bits, littleEndian: true };
  else if (code === FORMAT_FLOAT && (bits === 32 || bits === 64))
    format = { kind: 'f', bits, littleEndian: true };
  else {
    return bad(
      `format tag 0x${code.toString(16).padStart(4, '0')} with ${bits}-bit samples is not supported ` +
        `(use PCM 8/16/24/32-bit or float 32/64-bit; fmt chunk at byte ${at})`,
    );
  }
  if (blockAlign !== (2 * bits) / 8)
    bad(`block align ${blockAlign} does not match 2 channels of ${bits} bits (fmt chunk at byte ${at})`);
  return { sampleRate, format, blockAlign };
}

function printable(s: string): string {
  return s.replace(/[^\x20-\x7e]/g, '?');
}
