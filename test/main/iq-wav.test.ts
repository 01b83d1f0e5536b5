import { after, before, describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { spawnSync } from 'node:child_process';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { BenchError } from '../../app/errors';
import { measureRecording } from '../../main/shells/cli/measure';
import { openWav, readWavInfo } from '../../main/sources/iq/wav';
import { f64from, python } from '../helpers/python';
import { tempDir } from '../helpers/tmp';
import { runMeasure } from '../helpers/measure';

/** Runs Debian's sox (an outside WAV writer). */
function sox(args: string[]): void {
  const r = spawnSync('sox', args, { encoding: 'utf8' });
  assert.equal(r.status, 0, `sox ${args.join(' ')}: ${r.stderr}`);
}

/**
 * Decodes a WAV file's samples with numpy, independently of our reader: walks the RIFF chunks,
 * reads the format tag (or the sub-format of WAVE_FORMAT_EXTENSIBLE) and scales integers to +/-1.
 */
function numpyWav(path: string): Float64Array {
  return f64from(
    python(
      `import sys, struct, numpy as np
b = open(sys.argv[1], 'rb').read()
pos = 12
while pos < len(b):
    cid, n = b[pos:pos+4], struct.unpack('<I', b[pos+4:pos+8])[0]
    if cid == b'fmt ':
        tag, ch, sr, _, ba, bits = struct.unpack('<HHIIHH', b[pos+8:pos+24])
        if tag == 0xFFFE: tag = struct.unpack('<H', b[pos+32:pos+34])[0]
    if cid == b'data':
        data = b[pos+8:pos+8+n]; break
    pos += 8 + n + (n & 1)
if tag == 1 and bits == 8: x = (np.frombuffer(data, np.uint8).astype(float) - 128) / 128
elif tag == 1 and bits == 16: x = np.frombuffer(data, '<i2') / 32768
elif tag == 1 and bits == 24:
    a = np.frombuffer(data, np.uint8).reshape(-1, 3).astype(np.int64)
    v = a[:, 0] | (a[:, 1] << 8) | (a[:, 2] << 16)
    x = np.where(v >= 1 << 23, v - (1 << 24), v) / 8388608
elif tag == 3 and bits == 32: x = np.frombuffer(data, '<f4').astype(float)
sys.stdout.buffer.write(np.asarray(x, '<f8').tobytes())`,
      undefined,
      [path],
    ),
  );
}

const einvalAt = (path: string, pattern: RegExp) => (e: unknown) =>
  e instanceof BenchError && e.code === 'EINVAL' && e.field === path && pattern.test(e.message);

describe('openWav() on files written by sox', () => {
  const t = tempDir('nullbench-wav-');
  const file = (name: string) => join(t.dir, name);
  // I = 0.5 cos(wt) (sine at 25 % phase), Q = 0.5 sin(wt): a complex tone at +1000 Hz, -6.02 dBFS.
  const plusTone = ['synth', '1', 'sine', '1000', '0', '25', 'sine', '1000', 'vol', '0.5'];
  before(() => {
    sox(['-D', '-n', '-r', '48000', '-c', '2', '-b', '16', file('s16.wav'), ...plusTone]);
    sox(['-D', '-n', '-r', '48000', '-c', '2', '-b', '8', '-e', 'unsigned', file('u8.wav'), ...plusTone]);
    sox(['-D', '-n', '-r', '48000', '-c', '2', '-b', '24', file('s24.wav'), ...plusTone]);
    sox([
      '-D',
      '-n',
      '-r',
      '48000',
      '-c',
      '2',
      '-e',
      'floating-point',
      '-b',
      '32',
      file('f32.wav'),
      ...plusTone,
    ]);
    // Q = 0.5 sin(wt + 180 deg) = -0.5 sin(wt): the tone at -1000 Hz.
    sox([
      '-D',
      '-n',
      '-r',
      '48000',
      '-c',
      '2',
      '-b',
      '16',
      file('minus.wav'),
      'synth',
      '1',
      'sine',
      '1000',
      '0',
      '25',
      'sine',
      '1000',
      '0',
      '50',
      'vol',
      '0.5',
    ]);
    sox(['-D', '-n', '-r', '48000', '-c', '1', '-b', '16', file('mono.wav'), 'synth', '0.1', 'sine', '1000']);
  });
  after(() => t.cleanup());

  for (const [name, label] of [
    ['s16.wav', '16-bit signed little-endian'],
    ['u8.wav', '8-bit unsigned'],
    ['s24.wav', '24-bit signed little-endian'], // sox writes this as WAVE_FORMAT_EXTENSIBLE
    ['f32.wav', '32-bit float little-endian'],
  ]) {
    it(`reads ${label} samples exactly as numpy decodes them`, async () => {
      const rec = await openWav(file(name));
      try {
        assert.equal(rec.sampleRate, 48000);
        assert.equal(rec.sampleCount, 48000);
        assert.equal(rec.centerHz, null);
        assert.equal(rec.formatLabel, label);
        const ours = await rec.read(0, rec.sampleCount);
        const ref = numpyWav(file(name)); // Source: numpy (Debian python3-numpy) decoding of the same bytes.
        assert.equal(ours.length, ref.length);
        let err = 0;
        for (let i = 0; i < ref.length; i++) err = Math.max(err, Math.abs(ours[i] - ref[i]));
        assert.ok(err < 1e-7, `max difference ${err}`);
      } finally {
        await rec.close();
      }
    });
  }

  for (const [name, tol] of [
    ['s16.wav', 0.02],
    ['s24.wav', 0.02],
    ['f32.wav', 0.02],
    ['u8.wav', 0.1],
  ] as const) {
    it(`measures the +1000 Hz tone of ${name} at -6.02 dBFS and nothing at -1000 Hz`, async () => {
      const rec = await openWav(file(name));
      const m = await measureRecording(rec, {
        toneHz: 1000,
        carrierHz: 0,
        window: 'flat-top',
        maxAverages: 100,
      });
      await rec.close();
      // 0 dBFS = complex amplitude 1 (the definition); sox's amplitude 0.5 is 20 log10(0.5) = -6.02 dB.
      assert.ok(
        Math.abs((m.components.upper.dbfs as number) + 6.02) < tol,
        `upper ${m.components.upper.dbfs}`,
      );
      assert.ok((m.components.lower.dbfs as number) < -40, `lower ${m.components.lower.dbfs}`);
      assert.equal(m.ssb?.wanted, 'upper');
    });
  }

  it('puts a tone with Q = -sin at -1000 Hz (I first, Q second)', async () => {
    const rec = await openWav(file('minus.wav'));
    const m = await measureRecording(rec, {
      toneHz: 1000,
      carrierHz: 0,
      window: 'flat-top',
      maxAverages: 100,
    });
    await rec.close();
    assert.ok(Math.abs((m.components.lower.dbfs as number) + 6.02) < 0.02);
    assert.equal(m.ssb?.wanted, 'lower');
  });

  it('rejects a one-channel file naming the channel count', async () => {
    await assert.rejects(
      readWavInfo(file('mono.wav')),
      einvalAt(file('mono.wav'), /channels: expected 2 \(I and Q\), got 1/),
    );
  });

  it('rejects a truncated file, saying where the data stops', async () => {
    const whole = readFileSync(file('s16.wav'));
    writeFileSync(file('cut.wav'), whole.subarray(0, 10000));
    await assert.rejects(
      readWavInfo(file('cut.wav')),
      einvalAt(
        file('cut.wav'),
        /truncated: the data chunk at byte 36 declares 192000 bytes, but the file ends at byte 10000/,
      ),
    );
    writeFileSync(file('cuthead.wav'), whole.subarray(0, 30));
    await assert.rejects(
      readWavInfo(file('cuthead.wav')),
      einvalAt(file('cuthead.wav'), /truncated: .*fmt chunk that starts at byte 20/),
    );
  });

  it('rejects a file that is not a WAV, and a missing one', async () => {
    writeFileSync(file('text.wav'), 'hello, this is not audio at all');
    await assert.rejects(readWavInfo(file('text.wav')), einvalAt(file('text.wav'), /not a WAV file/));
    await assert.rejects(
      readWavInfo(file('nope.wav')),
      (e: unknown) => e instanceof BenchError && e.code === 'ENOTFOUND',
    );
  });
});

describe('openWav() on files written with numpy', () => {
  const t = tempDir('nullbench-wav-');
  after(() => t.cleanup());

  /** Writes a WAV with a hand-built header; `extensible` uses WAVE_FORMAT_EXTENSIBLE. */
  function writeWav(path: string, opts: { rate: number; float: boolean; extensible: boolean; body: string }) {
    python(
      `import sys, struct, numpy as np
rate, isfloat, ext = ${opts.rate}, ${opts.float ? 'True' : 'False'}, ${opts.extensible ? 'True' : 'False'}
${opts.body}
data = x.astype('<f4').tobytes() if isfloat else np.round(np.clip(x, -1, 32767/32768) * 32768).astype('<i2').tobytes()
bits = 32 if isfloat else 16
tag = 3 if isfloat else 1
if ext:
    guid = struct.pack('<H', tag) + bytes([0,0,0,0,0x10,0,0x80,0,0,0xaa,0,0x38,0x9b,0x71])
    fmt = struct.pack('<HHIIHHHHI', 0xFFFE, 2, rate, rate*2*bits//8, 2*bits//8, bits, 22, bits, 3) + guid
else:
    fmt = struct.pack('<HHIIHH', tag, 2, rate, rate*2*bits//8, 2*bits//8, bits)
body = b'WAVE' + b'fmt ' + struct.pack('<I', len(fmt)) + fmt + b'LIST' + struct.pack('<I', 3) + b'abc\\0' + b'data' + struct.pack('<I', len(data)) + data
open(sys.argv[1], 'wb').write(b'RIFF' + struct.pack('<I', len(body)) + body)`,
      undefined,
      [path],
    );
  }

  // DSB: carrier 50 dB below the mean sideband power, sidebands at -10 dBFS, 1 kHz tone on a 6 kHz
  // carrier offset, white noise at -130 dBFS/Hz; numpy's random generator with a fixed seed.
  const dsb = `n = rate * 2
t = np.arange(n) / rate
rng = np.random.default_rng(5)
a = 10 ** (-10 / 20)
z = a * np.exp(2j*np.pi*7000*t) + a * np.exp(2j*np.pi*5000*t + 1j) + a * 10 ** (-50/20) * np.exp(2j*np.pi*6000*t + 2j)
z = z + np.sqrt(10 ** (-13) * rate / 2) * (rng.standard_normal(n) + 1j * rng.standard_normal(n))
x = np.empty(2 * n); x[0::2] = z.real; x[1::2] = z.imag`;

  it('reads WAVE_FORMAT_EXTENSIBLE float with a LIST chunk before the data, and the CLI measures 50 dB', async () => {
    const path = join(t.dir, 'ext.wav');
    writeWav(path, { rate: 48000, float: true, extensible: true, body: dsb });
    const info = await readWavInfo(path);
    assert.equal(info.format.kind, 'f');
    assert.equal(info.sampleCount, 96000);
    const r = await runMeasure([path, '--tone-hz', '1000', '--carrier-hz', '6000', '--json']);
    assert.equal(r.code, 0, r.err);
    const j = JSON.parse(r.out);
    assert.ok(Math.abs(j.suppression_db - 50) < 0.5, `suppression ${j.suppression_db}`);
    assert.equal(j.floor_limited, false);
    assert.ok(Math.abs(j.upper_dbfs + 10) < 0.05 && Math.abs(j.lower_dbfs + 10) < 0.05);
    assert.equal(j.carrier_offset_hz, 6000);
    assert.equal(j.center_hz, null);
    assert.equal(j.sample_rate, 48000);
    assert.equal(j.window, 'flat-top');
    assert.equal(typeof j.n, 'number');
    assert.equal(typeof j.averages, 'number');
  });

  it('reads 16-bit PCM under WAVE_FORMAT_EXTENSIBLE', async () => {
    const path = join(t.dir, 'ext16.wav');
    writeWav(path, { rate: 8000, float: false, extensible: true, body: 'x = np.tile([0.5, -0.25], 1000)' });
    const rec = await openWav(path);
    const s = await rec.read(0, 2);
    await rec.close();
    assert.deepEqual([...s], [0.5, -0.25, 0.5, -0.25]);
  });

  it('rejects a header with a sample rate of zero', async () => {
    const path = join(t.dir, 'zero.wav');
    writeWav(path, { rate: 0, float: false, extensible: false, body: 'x = np.zeros(64)' });
    await assert.rejects(readWavInfo(path), einvalAt(path, /sample rate is 0/));
  });
});
