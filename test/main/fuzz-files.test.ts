// Property-based fuzzing (fast-check) of what arrives from outside as bytes: WAV and SigMF headers of IQ
// recordings, and the greeting of an SDR sample server. Whatever arrives: no crash, a clear error naming the
// file or the field, and when a file is accepted, what it claims holds (the samples it promises are there).
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { writeFileSync, rmSync, statSync } from 'node:fs';
import { createServer, type Server, type Socket } from 'node:net';
import { join } from 'node:path';
import fc from 'fast-check';
import { readWavInfo } from '../../main/sources/iq/wav';
import { readSigmfInfo } from '../../main/sources/iq/sigmf';
import { openRecording } from '../../main/sources/iq/open';
import { IqTcpClient } from '../../main/sources/iq/iqtcp';
import { bytesPerSample } from '../../main/sources/iq/recording';
import { assertClearError } from '../helpers/fuzz';
import { tempDir } from '../helpers/tmp';

const RUNS = Number(process.env.FUZZ_RUNS ?? 300);

// ---- WAV ---------------------------------------------------------------------------------------------

interface FmtChunk {
  kind: 'fmt';
  format: number;
  channels: number;
  rate: number;
  bits: number;
  blockAlign: number | null;
  declared: number | null;
  subFormat: number;
  guidOk: boolean;
}
interface DataChunk {
  kind: 'data';
  payload: Uint8Array;
  declared: number | null;
}
interface OtherChunk {
  kind: 'other';
  id: string;
  payload: Uint8Array;
  declared: number | null;
}
type Chunk = FmtChunk | DataChunk | OtherChunk;

const u32 = fc.oneof(fc.constant(null), fc.nat(80), fc.constant(0xffffffff), fc.nat({ max: 0xffffffff }));

const fmtChunk: fc.Arbitrary<Chunk> = fc.record({
  kind: fc.constant('fmt' as const),
  format: fc.constantFrom(1, 3, 0xfffe, 2, 0, 0x55),
  channels: fc.oneof(fc.constant(2), fc.nat(5)),
  rate: fc.oneof(fc.constant(48000), fc.constant(0), fc.nat({ max: 0xffffffff })),
  bits: fc.constantFrom(8, 16, 24, 32, 64, 12, 0, 7),
  blockAlign: fc.oneof(fc.constant(null), fc.nat(20)),
  declared: fc.oneof(fc.constant(null), fc.constantFrom(0, 14, 16, 18, 22, 40, 41), fc.nat(64)),
  subFormat: fc.constantFrom(1, 3, 2),
  guidOk: fc.boolean(),
});
const dataChunk: fc.Arbitrary<Chunk> = fc.record({
  kind: fc.constant('data' as const),
  payload: fc.uint8Array({ maxLength: 96 }),
  declared: u32,
});
const otherChunk: fc.Arbitrary<Chunk> = fc.record({
  kind: fc.constant('other' as const),
  id: fc.constantFrom('LIST', 'fact', 'JUNK', 'fmt\u0000', 'dat'),
  payload: fc.uint8Array({ maxLength: 24 }),
  declared: u32,
});

function chunkBytes(c: Chunk): Buffer {
  if (c.kind === 'fmt') {
    const body = Buffer.alloc(40);
    body.writeUInt16LE(c.format, 0);
    body.writeUInt16LE(c.channels, 2);
    body.writeUInt32LE(c.rate >>> 0, 4);
    const align = c.blockAlign ?? (c.channels * c.bits) / 8;
    body.writeUInt32LE(Math.floor(c.rate * align) % 2 ** 32, 8);
    body.writeUInt16LE(Math.floor(align) & 0xffff, 12);
    body.writeUInt16LE(c.bits, 14);
    body.writeUInt16LE(22, 16);
    body.writeUInt16LE(c.bits, 18);
    body.writeUInt16LE(c.subFormat, 24);
    const guid = c.guidOk
      ? [0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71]
      : new Array(14).fill(0x42);
    Buffer.from(guid).copy(body, 26);
    const len = c.format === 0xfffe ? 40 : 16;
    const head = Buffer.alloc(8);
    head.write('fmt ', 0, 'latin1');
    head.writeUInt32LE(c.declared ?? len, 4);
    return Buffer.concat([head, body.subarray(0, len)]);
  }
  const head = Buffer.alloc(8);
  head.write(c.kind === 'data' ? 'data' : c.id.padEnd(4, ' ').slice(0, 4), 0, 'latin1');
  head.writeUInt32LE((c.declared ?? c.payload.length) >>> 0, 4);
  const pad = c.payload.length % 2 ? Buffer.alloc(1) : Buffer.alloc(0);
  return Buffer.concat([head, Buffer.from(c.payload), pad]);
}

function riff(chunks: Chunk[], riffTag = 'RIFF', wave = 'WAVE'): Buffer {
  const body = Buffer.concat(chunks.map(chunkBytes));
  const head = Buffer.alloc(12);
  head.write(riffTag, 0, 'latin1');
  head.writeUInt32LE(body.length + 4, 4);
  head.write(wave, 8, 'latin1');
  return Buffer.concat([head, body]);
}

/** A valid two-channel file, then a few of its fields changed, chunks added or dropped, or its end cut. */
const editedWav = fc
  .record({
    format: fc.constantFrom<[number, number]>(
      [1, 8],
      [1, 16],
      [1, 24],
      [1, 32],
      [3, 32],
      [3, 64],
      [0xfffe, 16],
    ),
    frames: fc.nat(10),
    fmtEdit: fc.option(
      fc.record(
        {
          format: fc.constantFrom(1, 3, 0xfffe, 2, 0),
          channels: fc.nat(5),
          rate: fc.oneof(fc.constant(0), fc.nat({ max: 0xffffffff })),
          bits: fc.constantFrom(8, 16, 24, 32, 64, 12, 0),
          blockAlign: fc.nat(20),
          declared: fc.oneof(fc.constantFrom(0, 14, 16, 18, 22, 40, 41), fc.nat(64)),
          subFormat: fc.constantFrom(1, 3, 2),
          guidOk: fc.boolean(),
        },
        { requiredKeys: [] },
      ),
    ),
    dataDeclared: fc.option(u32),
    extra: fc.option(fc.tuple(fc.oneof(fmtChunk, dataChunk, otherChunk), fc.nat(2))),
    drop: fc.option(fc.constantFrom(0, 1)),
    tags: fc.constantFrom(
      ['RIFF', 'WAVE'],
      ['RIFF', 'WAVE'],
      ['RIFF', 'WAVE'],
      ['RF64', 'WAVE'],
      ['RIFF', 'AVI '],
    ),
    cut: fc.option(fc.nat(120), { freq: 4 }),
  })
  .map((w) => {
    const [format, bits] = w.format;
    const fmt: FmtChunk = {
      kind: 'fmt',
      format,
      channels: 2,
      rate: 48000,
      bits,
      blockAlign: null,
      declared: null,
      subFormat: 1,
      guidOk: true,
      ...(w.fmtEdit ?? {}),
    };
    const chunks: Chunk[] = [
      fmt,
      {
        kind: 'data',
        payload: new Uint8Array((w.frames * 2 * bits) / 8).fill(0x41),
        declared: w.dataDeclared,
      },
    ];
    if (w.extra) chunks.splice(w.extra[1], 0, w.extra[0]);
    if (w.drop !== null) chunks.splice(w.drop, 1);
    const all = riff(chunks, w.tags[0], w.tags[1]);
    return w.cut === null ? all : all.subarray(0, Math.min(w.cut, all.length));
  });

const wavFile: fc.Arbitrary<Buffer> = fc.oneof(
  { weight: 1, arbitrary: fc.uint8Array({ maxLength: 160 }).map((b) => Buffer.from(b)) },
  {
    weight: 1,
    arbitrary: fc
      .array(fc.oneof(fmtChunk, dataChunk, otherChunk), { maxLength: 4 })
      .map((chunks) => riff(chunks)),
  },
  { weight: 5, arbitrary: editedWav },
);

/** A stereo 16-bit file holding 4 frames: valid by construction. */
const VALID_WAV = riff([
  {
    kind: 'fmt',
    format: 1,
    channels: 2,
    rate: 48000,
    bits: 16,
    blockAlign: null,
    declared: null,
    subFormat: 1,
    guidOk: true,
  },
  { kind: 'data', payload: new Uint8Array(4 * 2 * 2), declared: null },
]);

// ---- SigMF -------------------------------------------------------------------------------------------

const anyJson = fc.jsonValue({ maxDepth: 2 });

/** A valid recording's metadata with a few of its fields changed, removed or added. */
const FIELDS: [string, string, fc.Arbitrary<unknown>][] = [
  [
    'global',
    'core:datatype',
    fc.oneof(fc.constantFrom('cf32_le', 'ci16_le', 'cu8', 'cf64_be', 'rf32_le', 'cf32', 'ci12_le'), anyJson),
  ],
  ['global', 'core:version', fc.oneof(fc.constantFrom('1.2.0', '1.0.0', '1', 'x.y.z'), anyJson)],
  ['global', 'core:sample_rate', fc.oneof(fc.constantFrom(48000, 0, -1, 1e-300), fc.double(), anyJson)],
  ['global', 'core:num_channels', fc.oneof(fc.constantFrom(1, 2, 0), anyJson)],
  [
    'global',
    'core:trailing_bytes',
    fc.oneof(fc.nat(16), fc.integer({ min: -16, max: -1 }), fc.double(), anyJson),
  ],
  ['global', 'core:dataset', fc.oneof(fc.constantFrom('x.bin', 'missing.bin', ''), anyJson)],
  [
    'capture',
    'core:sample_start',
    fc.oneof(fc.nat(40), fc.integer({ min: -5, max: -1 }), fc.double(), anyJson),
  ],
  ['capture', 'core:frequency', fc.oneof(fc.double(), anyJson)],
  [
    'capture',
    'core:header_bytes',
    fc.oneof(fc.nat(40), fc.integer({ min: -20, max: -1 }), fc.double(), anyJson),
  ],
  ['top', 'captures', fc.oneof(fc.constant([]), anyJson)],
  ['top', 'annotations', fc.oneof(fc.constant([]), anyJson)],
  ['top', 'global', anyJson],
];
const sigmfMeta = fc.oneof(
  { weight: 1, arbitrary: anyJson },
  {
    weight: 6,
    arbitrary: fc
      .tuple(
        fc.constantFrom('cf32_le', 'ci16_le', 'cu8'),
        fc.array(
          fc
            .tuple(fc.nat(FIELDS.length - 1), fc.boolean())
            .chain(([i, remove]) =>
              FIELDS[i][2].map((v) => ({ where: FIELDS[i][0], key: FIELDS[i][1], remove, v })),
            ),
          { maxLength: 2 },
        ),
        fc.nat(2),
      )
      .map(([datatype, edits, extraCaptures]) => {
        const m: Record<string, unknown> = {
          global: { 'core:datatype': datatype, 'core:version': '1.2.0', 'core:sample_rate': 48000 },
          captures: [{ 'core:sample_start': 0, 'core:frequency': 7.1e6 }],
          annotations: [],
        };
        for (let k = 0; k < extraCaptures; k++)
          (m.captures as unknown[]).push({ 'core:sample_start': 2 + 3 * k });
        // Whole sections last, so an edit inside a section always finds it.
        for (const e of [...edits].sort((a, b) => Number(a.where === 'top') - Number(b.where === 'top'))) {
          const captures = m.captures as Record<string, unknown>[];
          const target =
            e.where === 'top'
              ? m
              : e.where === 'global'
                ? (m.global as Record<string, unknown>)
                : captures[0];
          if (e.remove) delete target[e.key];
          else target[e.key] = e.v;
        }
        return m;
      }),
  },
);

/** SigMF metadata for a cf32 recording at 48 kHz: valid by construction. */
const VALID_SIGMF = {
  global: { 'core:datatype': 'cf32_le', 'core:version': '1.2.0', 'core:sample_rate': 48000 },
  captures: [{ 'core:sample_start': 0, 'core:frequency': 7.1e6 }],
  annotations: [],
};

describe('fuzz: IQ recording headers', () => {
  let tmp: ReturnType<typeof tempDir>;
  before(() => (tmp = tempDir()));
  after(() => tmp.cleanup());

  it('WAV: any bytes give a clear error naming the file, or a header whose samples are really there', async () => {
    const file = join(tmp.dir, 'fuzz.wav');
    let accepted = 0;
    await fc.assert(
      fc.asyncProperty(wavFile, async (bytes) => {
        writeFileSync(file, bytes);
        let info;
        try {
          info = await readWavInfo(file);
        } catch (e) {
          assertClearError(e, ['EINVAL'], 'readWavInfo');
          assert.equal(e.field, file);
          return;
        }
        accepted++;
        const size = bytes.length;
        const b = bytesPerSample(info.format);
        assert.ok(Number.isInteger(info.sampleRate) && info.sampleRate > 0, `rate ${info.sampleRate}`);
        assert.ok(Number.isInteger(info.sampleCount) && info.sampleCount >= 0, `count ${info.sampleCount}`);
        assert.ok(
          info.dataOffset >= 12 && info.dataOffset + info.sampleCount * b <= size,
          'data beyond the file',
        );
        const rec = await openRecording(file);
        try {
          const n = Math.min(rec.sampleCount, 8);
          if (n > 0) {
            const x = await rec.read(0, n);
            assert.equal(x.length, 2 * n);
            assert.ok(x.every(Number.isFinite), 'a sample is not a finite number');
          }
        } finally {
          await rec.close();
        }
      }),
      // A known-valid file runs first, so the accepting branch is always exercised (not left to chance).
      { numRuns: RUNS, examples: [[VALID_WAV]] },
    );
    assert.ok(accepted > 0, 'the known-valid example was refused');
  });

  it('WAV: a well-formed file parses to exactly what it declares', async () => {
    const file = join(tmp.dir, 'good.wav');
    await fc.assert(
      fc.asyncProperty(
        fc.constantFrom([1, 8], [1, 16], [1, 24], [1, 32], [3, 32], [3, 64]),
        fc.integer({ min: 1, max: 0xffffffff }),
        fc.nat(20),
        async ([format, bits], rate, frames) => {
          const fmt: Chunk = {
            kind: 'fmt',
            format,
            channels: 2,
            rate,
            bits,
            blockAlign: null,
            declared: null,
            subFormat: 1,
            guidOk: true,
          };
          const payload = new Uint8Array((frames * 2 * bits) / 8);
          writeFileSync(file, riff([fmt, { kind: 'data', payload, declared: null }]));
          const info = await readWavInfo(file);
          assert.deepEqual(
            [info.sampleRate, info.sampleCount, info.dataOffset],
            [rate, frames, 12 + chunkBytes(fmt).length + 8],
          );
        },
      ),
      { numRuns: 100 },
    );
  });

  it('SigMF: any metadata and dataset give a clear error, or a recording whose samples are really there', async () => {
    const meta = join(tmp.dir, 'fuzz.sigmf-meta');
    let accepted = 0;
    await fc.assert(
      fc.asyncProperty(
        fc.oneof(
          { weight: 6, arbitrary: sigmfMeta.map((m) => JSON.stringify(m)) },
          { weight: 1, arbitrary: fc.string({ maxLength: 40 }) },
        ),
        fc.option(
          fc.oneof(
            fc.nat(12).map((n) => new Uint8Array(8 * n)),
            fc.uint8Array({ maxLength: 64 }),
          ),
        ),
        fc.boolean(),
        async (text, data, named) => {
          writeFileSync(meta, text);
          for (const f of ['fuzz.sigmf-data', 'x.bin']) rmSync(join(tmp.dir, f), { force: true });
          if (data) writeFileSync(join(tmp.dir, named ? 'x.bin' : 'fuzz.sigmf-data'), data);
          let info;
          try {
            info = await readSigmfInfo(meta);
          } catch (e) {
            assertClearError(e, ['EINVAL', 'ENOTFOUND', 'EIO'], `readSigmfInfo ${text.slice(0, 200)}`);
            return;
          }
          accepted++;
          const size = statSync(info.dataPath).size;
          const b = bytesPerSample(info.format);
          assert.ok(Number.isFinite(info.sampleRate) && info.sampleRate > 0);
          assert.ok(Number.isInteger(info.sampleCount) && info.sampleCount >= 0, `count ${info.sampleCount}`);
          assert.ok(Number.isInteger(info.dataOffset) && info.dataOffset >= 0, `offset ${info.dataOffset}`);
          assert.ok(info.dataOffset + info.sampleCount * b <= size, `data beyond the dataset (${text})`);
          assert.ok(info.centerHz === null || Number.isFinite(info.centerHz));
          const rec = await openRecording(meta);
          try {
            const n = Math.min(rec.sampleCount, 4);
            // Samples come back finite, or a float sample that is NaN or infinite is refused where it sits.
            if (n > 0) {
              try {
                assert.ok((await rec.read(0, n)).every(Number.isFinite));
              } catch (e) {
                assertClearError(e, ['EINVAL'], `read ${text.slice(0, 200)}`);
                assert.match((e as Error).message, /is (NaN|-?Infinity) in \d+-bit float/);
              }
            }
          } finally {
            await rec.close();
          }
        },
      ),
      // A known-valid recording runs first, so the accepting branch is always exercised (not left to chance).
      { numRuns: RUNS, examples: [[JSON.stringify(VALID_SIGMF), new Uint8Array(8 * 4), false]] },
    );
    assert.ok(accepted > 0, 'the known-valid example was refused');
  });
});

// ---- the SDR greeting ------------------------------------------------------------------------------

describe('fuzz: SDR sample server greeting', () => {
  let server: Server;
  let port = 0;
  let greeting = Buffer.alloc(0);
  let hangUp = true;
  const sockets = new Set<Socket>();

  before(async () => {
    server = createServer((s) => {
      sockets.add(s);
      s.on('close', () => sockets.delete(s));
      s.on('error', () => undefined);
      s.write(greeting);
      if (hangUp) s.end();
    });
    await new Promise<void>((ok) => server.listen(0, '127.0.0.1', ok));
    port = (server.address() as { port: number }).port;
  });
  after(async () => {
    for (const s of sockets) s.destroy();
    await new Promise<void>((ok) => server.close(() => ok()));
  });

  it('connects only to a real greeting ("RTL0" + 8 bytes); anything else is a clear EPROTO, EIO or ETIMEOUT', async () => {
    const valid = fc
      .tuple(fc.nat({ max: 0xffffffff }), fc.nat({ max: 0xffffffff }), fc.uint8Array({ maxLength: 8 }))
      .map(([tuner, gains, extra]) => {
        const g = Buffer.alloc(12);
        g.write('RTL0', 0, 'latin1');
        g.writeUInt32BE(tuner, 4);
        g.writeUInt32BE(gains, 8);
        return Buffer.concat([g, Buffer.from(extra)]);
      });
    const garbage = fc.oneof(
      fc.uint8Array({ maxLength: 24 }).map((b) => Buffer.from(b)),
      fc.string({ maxLength: 16 }).map((s) => Buffer.from(s, 'latin1')),
      valid.map((b) => b.subarray(0, 11)),
      valid.map((b) => Buffer.concat([Buffer.from('RTL1'), b.subarray(4)])),
    );
    await fc.assert(
      fc.asyncProperty(fc.oneof(valid, garbage), fc.boolean(), async (bytes, close) => {
        greeting = bytes;
        hangUp = close;
        const client = new IqTcpClient({ port, timeoutMs: 150 });
        const real = bytes.length >= 12 && bytes.subarray(0, 4).toString('latin1') === 'RTL0';
        try {
          await client.connect();
          assert.ok(real, `accepted a greeting that is not one: ${bytes.toString('hex')}`);
          assert.equal(client.tunerType, bytes.readUInt32BE(4));
          assert.equal(client.gainCount, bytes.readUInt32BE(8));
        } catch (e) {
          assertClearError(e, ['EPROTO', 'EIO', 'ETIMEOUT'], `greeting ${bytes.toString('hex')}`);
          assert.ok(!real, `refused a real greeting: ${e.message}`);
        } finally {
          await client.close();
        }
      }),
      { numRuns: Math.min(RUNS, 120) },
    );
  });
});
