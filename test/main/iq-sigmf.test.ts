import { after, before, describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { BenchError } from '../../app/errors';
import { openRecording } from '../../main/sources/iq/open';
import { openSigmf, readSigmfInfo } from '../../main/sources/iq/sigmf';
import { f64from, python } from '../helpers/python';
import { tempDir } from '../helpers/tmp';
import { runMeasure } from '../helpers/measure';

/**
 * numpy writes the dataset in the given SigMF datatype (quantising a test signal) and prints the
 * values it wrote, decoded back to +/-1 floats the way the datatype's integer range implies.
 */
function writeDataset(
  path: string,
  datatype: string,
  body = 'z = 0.6 * np.exp(2j * np.pi * 0.01 * np.arange(4096))',
): Float64Array {
  return f64from(
    python(
      `import sys, numpy as np
dt = sys.argv[2]
${body}
x = np.empty(2 * len(z)); x[0::2] = z.real; x[1::2] = z.imag
if dt == 'cf32_le': q = x.astype('<f4'); ref = q.astype(float)
elif dt == 'cf64_be': q = x.astype('>f8'); ref = q.astype(float)
elif dt == 'ci16_le': q = np.round(x * 32767).astype('<i2'); ref = q / 32768
elif dt == 'ci16_be': q = np.round(x * 32767).astype('>i2'); ref = q / 32768
elif dt == 'ci8': q = np.round(x * 127).astype(np.int8); ref = q / 128
elif dt == 'cu8': q = np.clip(np.round(x * 127.5 + 127.5), 0, 255).astype(np.uint8); ref = (q - 127.5) / 127.5
open(sys.argv[1], 'wb').write(q.tobytes())
sys.stdout.buffer.write(np.asarray(ref, '<f8').tobytes())`,
      undefined,
      [path, datatype],
    ),
  );
}

function writeMeta(path: string, meta: unknown): void {
  writeFileSync(path, JSON.stringify(meta, null, 2));
}

const meta = (datatype: string, extra: Record<string, unknown> = {}) => ({
  global: { 'core:datatype': datatype, 'core:version': '1.2.0', 'core:sample_rate': 250000, ...extra },
  captures: [{ 'core:sample_start': 0, 'core:frequency': 7_100_000 }],
  annotations: [],
});

const einval = (field: string, pattern: RegExp) => (e: unknown) =>
  e instanceof BenchError && e.code === 'EINVAL' && e.field === field && pattern.test(e.message);

describe('openSigmf()', () => {
  const t = tempDir('nullbench-sigmf-');
  const base = (name: string) => join(t.dir, name);
  after(() => t.cleanup());

  for (const dt of ['cf32_le', 'cf64_be', 'ci16_le', 'ci16_be', 'ci8', 'cu8']) {
    it(`reads ${dt} as numpy wrote it, with the sample rate and centre frequency from the metadata`, async () => {
      const ref = writeDataset(base(`${dt}.sigmf-data`), dt); // Source: numpy (Debian python3-numpy) writes and decodes.
      writeMeta(base(`${dt}.sigmf-meta`), meta(dt));
      const rec = await openSigmf(base(`${dt}.sigmf-meta`));
      try {
        assert.equal(rec.sampleRate, 250000);
        assert.equal(rec.centerHz, 7_100_000);
        assert.equal(rec.sampleCount, 4096);
        const got = await rec.read(0, 4096);
        let err = 0;
        for (let i = 0; i < ref.length; i++) err = Math.max(err, Math.abs(got[i] - ref[i]));
        assert.ok(err < 1e-7, `max difference ${err}`);
      } finally {
        await rec.close();
      }
    });
  }

  it('accepts the .sigmf-data path too, and reads only the first capture segment', async () => {
    writeDataset(base('two.sigmf-data'), 'ci16_le');
    writeMeta(base('two.sigmf-meta'), {
      ...meta('ci16_le'),
      captures: [
        { 'core:sample_start': 0, 'core:frequency': 7_100_000 },
        { 'core:sample_start': 1000, 'core:frequency': 7_200_000 },
      ],
    });
    const info = await readSigmfInfo(base('two.sigmf-data'));
    assert.equal(info.sampleCount, 1000);
    assert.equal(info.segments, 2);
    assert.equal(info.centerHz, 7_100_000);
    const rec = await openRecording(base('two.sigmf-data'));
    assert.equal(rec.kind, 'sigmf');
    await rec.close();
  });

  it('treats an empty captures array as one capture from sample 0 without a frequency', async () => {
    writeDataset(base('nocap.sigmf-data'), 'cf32_le');
    writeMeta(base('nocap.sigmf-meta'), { ...meta('cf32_le'), captures: [] });
    const info = await readSigmfInfo(base('nocap.sigmf-meta'));
    assert.equal(info.centerHz, null);
    assert.equal(info.sampleCount, 4096);
  });

  describe('bad metadata gets an error naming the field', () => {
    before(() => writeDataset(base('bad.sigmf-data'), 'cf32_le'));
    const check = async (m: unknown, field: string, pattern: RegExp) => {
      writeMeta(base('bad.sigmf-meta'), m);
      await assert.rejects(readSigmfInfo(base('bad.sigmf-meta')), einval(field, pattern));
    };

    it('an unknown datatype', () =>
      check(meta('cx12_le'), 'global.core:datatype', /unknown datatype "cx12_le".*bad\.sigmf-meta/));
    it('a real datatype', () => check(meta('rf32_le'), 'global.core:datatype', /real samples.*cf32_le/));
    it('a missing datatype', () => {
      const m = meta('cf32_le');
      delete (m.global as Record<string, unknown>)['core:datatype'];
      return check(m, 'global.core:datatype', /required/);
    });
    it('a missing or malformed version', async () => {
      await check(meta('cf32_le', { 'core:version': undefined }), 'global.core:version', /X\.Y\.Z/);
      await check(meta('cf32_le', { 'core:version': 'v1' }), 'global.core:version', /X\.Y\.Z/);
    });
    it('a missing sample rate', () =>
      check(meta('cf32_le', { 'core:sample_rate': undefined }), 'global.core:sample_rate', /missing/));
    it('a sample rate of zero', () =>
      check(meta('cf32_le', { 'core:sample_rate': 0 }), 'global.core:sample_rate', /positive/));
    it('more than one channel', () =>
      check(meta('cf32_le', { 'core:num_channels': 2 }), 'global.core:num_channels', /one IQ channel/));
    it('no captures array', () =>
      check({ global: meta('cf32_le').global, annotations: [] }, 'captures', /required/));
    it('no annotations array', () =>
      check({ global: meta('cf32_le').global, captures: [] }, 'annotations', /required/));
    it('a capture without sample_start', () =>
      check(
        { ...meta('cf32_le'), captures: [{ 'core:frequency': 1e6 }] },
        'captures[0].core:sample_start',
        /required/,
      ));
    it('captures out of order', () =>
      check(
        { ...meta('cf32_le'), captures: [{ 'core:sample_start': 10 }, { 'core:sample_start': 5 }] },
        'captures[1].core:sample_start',
        /sorted/,
      ));
    it('a global that is not an object', () =>
      check({ global: [], captures: [], annotations: [] }, 'global', /object/));

    it('JSON that does not parse', async () => {
      writeFileSync(base('bad.sigmf-meta'), '{"global": {');
      await assert.rejects(
        readSigmfInfo(base('bad.sigmf-meta')),
        einval(base('bad.sigmf-meta'), /not valid JSON/),
      );
    });
  });

  it('reports a dataset that ends part-way through a sample', async () => {
    const whole = readFileSync(base('cf32_le.sigmf-data'));
    writeFileSync(base('cut.sigmf-data'), whole.subarray(0, 1001));
    writeMeta(base('cut.sigmf-meta'), meta('cf32_le'));
    await assert.rejects(
      readSigmfInfo(base('cut.sigmf-meta')),
      einval(base('cut.sigmf-data'), /truncated: .*1001 bytes.*8-byte cf32_le sample at byte 1000/),
    );
  });

  it('refuses a float sample that is NaN or infinite, naming the sample, the component and the byte', async () => {
    const data = Buffer.alloc(8 * 4);
    data.writeFloatLE(0.25, 0);
    data.writeFloatLE(Number.NEGATIVE_INFINITY, 12); // sample 1, Q
    data.writeFloatLE(Number.NaN, 16); // sample 2, I
    writeFileSync(base('inf.sigmf-data'), data);
    writeMeta(base('inf.sigmf-meta'), meta('cf32_le'));
    const rec = await openRecording(base('inf.sigmf-meta'));
    try {
      await assert.rejects(
        rec.read(0, 4),
        einval(
          base('inf.sigmf-meta'),
          /sample 1 \(Q, at byte 12 of its data\) is -Infinity in 32-bit float little-endian/,
        ),
      );
      await assert.rejects(
        rec.read(2, 2),
        einval(base('inf.sigmf-meta'), /sample 2 \(I, at byte 16 of its data\) is NaN/),
      );
      assert.deepEqual([...(await rec.read(0, 1))], [0.25, 0]);
    } finally {
      await rec.close();
    }
  });

  it('reports a missing dataset and a missing metadata file', async () => {
    writeMeta(base('lonely.sigmf-meta'), meta('cf32_le'));
    await assert.rejects(
      readSigmfInfo(base('lonely.sigmf-meta')),
      (e: unknown) => e instanceof BenchError && e.code === 'ENOTFOUND',
    );
    await assert.rejects(
      readSigmfInfo(base('absent.sigmf-meta')),
      (e: unknown) => e instanceof BenchError && e.code === 'ENOTFOUND',
    );
  });
});

describe('nullbench measure on a SigMF cu8 capture', () => {
  const t = tempDir('nullbench-sigmf-');
  after(() => t.cleanup());

  it('reads 40 dB suppression within 0.5 dB and gives absolute frequencies from core:frequency', async () => {
    // numpy DSB at 250 kS/s: sidebands at -8 dBFS, carrier 40 dB below them, 25 kHz below the centre,
    // 800 Hz tone, noise at -105 dBFS/Hz (dithers the 8-bit quantiser), one second.
    writeDataset(
      join(t.dir, 'dsb.sigmf-data'),
      'cu8',
      `n = 250000
t = np.arange(n) / 250000
rng = np.random.default_rng(9)
a = 10 ** (-8 / 20)
fc = -25000
z = a * np.exp(2j*np.pi*(fc+800)*t) + a * np.exp(2j*np.pi*(fc-800)*t + 0.5j) + a * 0.01 * np.exp(2j*np.pi*fc*t + 1j)
z = z + np.sqrt(10 ** (-10.5) * 250000 / 2) * (rng.standard_normal(n) + 1j * rng.standard_normal(n))`,
    );
    writeMeta(join(t.dir, 'dsb.sigmf-meta'), meta('cu8'));
    const r = await runMeasure([
      join(t.dir, 'dsb.sigmf-meta'),
      '--tone-hz',
      '800',
      '--carrier-hz',
      '-25000',
      '--json',
    ]);
    assert.equal(r.code, 0, r.err);
    const j = JSON.parse(r.out);
    assert.ok(Math.abs(j.suppression_db - 40) < 0.5, `suppression ${j.suppression_db}`);
    assert.equal(j.floor_limited, false);
    assert.equal(j.center_hz, 7_100_000);
    const carrier = j.components.find((c: { role: string }) => c.role === 'carrier');
    assert.ok(Math.abs(carrier.freq_hz - 7_075_000) < 0.5);
    assert.equal(j.format, '8-bit unsigned');
  });

  it('exits 2 naming the field for an unknown datatype', async () => {
    writeFileSync(join(t.dir, 'x.sigmf-data'), Buffer.alloc(64));
    writeMeta(join(t.dir, 'x.sigmf-meta'), meta('cq4'));
    const r = await runMeasure([join(t.dir, 'x.sigmf-meta'), '--tone-hz', '1000']);
    assert.equal(r.code, 2);
    assert.match(r.err, /EINVAL.*global\.core:datatype: unknown datatype "cq4"/);
  });
});
