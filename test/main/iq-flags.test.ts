// The warnings an IQ figure carries (app/spectrum/flags.ts, nullbench measure): a line on DC or on another
// line's image, lines in one another's bins, and clipping counted in files as in streams. The image of a
// line at f is at −f (an I/Q gain or phase imbalance mirrors the spectrum about DC: any SDR textbook).
import { describe, it, after } from 'node:test';
import assert from 'node:assert/strict';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { clipFlag, coincidenceFlags, suggestOffset } from '../../app/spectrum/flags';
import { runMeasure } from '../helpers/measure';
import { tempDir } from '../helpers/tmp';

const PLAN = { sampleRate: 48_000, binHz: 48_000 / 8192, toneHz: 1000 };

/** A 16-bit stereo WAV (I left, Q right) of a DSB signal: carrier `carrierDb` below each tone. */
function dsbWav(
  path: string,
  o: {
    carrierHz: number;
    gain: number;
    carrierDb: number;
    seconds?: number;
    clicks?: number;
    toneHz?: number;
  },
): void {
  const fs = PLAN.sampleRate;
  const n = Math.round(fs * (o.seconds ?? 1));
  const data = Buffer.alloc(n * 4);
  const c = 10 ** (-o.carrierDb / 20);
  for (let k = 0; k < n; k++) {
    const t = k / fs;
    let i = 0;
    let q = 0;
    for (const [f, a] of [
      [o.carrierHz, c],
      [o.carrierHz + (o.toneHz ?? PLAN.toneHz), 1],
      [o.carrierHz - (o.toneHz ?? PLAN.toneHz), 1],
    ]) {
      i += a * Math.cos(2 * Math.PI * f * t);
      q += a * Math.sin(2 * Math.PI * f * t);
    }
    const clamp = (x: number) => Math.max(-32768, Math.min(32767, Math.round(x * o.gain * 32768)));
    // `clicks` samples driven to full scale, spread over the recording (a few overdriven moments).
    const click = o.clicks !== undefined && k % Math.floor(n / o.clicks) === 7;
    data.writeInt16LE(click ? 32767 : clamp(i), 4 * k);
    data.writeInt16LE(clamp(q), 4 * k + 2);
  }
  const h = Buffer.alloc(44);
  h.write('RIFF', 0);
  h.writeUInt32LE(36 + data.length, 4);
  h.write('WAVEfmt ', 8);
  h.writeUInt32LE(16, 16);
  h.writeUInt16LE(1, 20);
  h.writeUInt16LE(2, 22);
  h.writeUInt32LE(fs, 24);
  h.writeUInt32LE(fs * 4, 28);
  h.writeUInt16LE(4, 32);
  h.writeUInt16LE(16, 34);
  h.write('data', 36);
  h.writeUInt32LE(data.length, 40);
  writeFileSync(path, Buffer.concat([h, data]));
}

describe('coincidence flags', () => {
  it('flag the carrier on DC and the two tones on each other’s images when the carrier offset is 0', () => {
    const f = coincidenceFlags({ ...PLAN, carrierHz: 0 });
    const codes = f.map((x) => x.code);
    assert.ok(codes.includes('line-on-dc'));
    assert.ok(codes.includes('image-on-line'));
    assert.match(f.find((x) => x.code === 'line-on-dc')!.message, /the carrier sits 0 Hz from the centre/);
    assert.match(f[0].message, /A carrier offset of \d+ Hz \(--carrier-hz\) clears every line/);
  });

  it('flag the lower tone’s image landing on the carrier (carrier at half the tone)', () => {
    const f = coincidenceFlags({ ...PLAN, carrierHz: 500 });
    assert.ok(
      f.some((x) => x.code === 'image-on-line' && /carrier .* lower tone/.test(x.message)),
      JSON.stringify(f),
    );
  });

  it('say nothing where every line stands clear, and the offset they suggest is such a place', () => {
    const clear = suggestOffset({ ...PLAN, carrierHz: 0 })!;
    assert.ok(clear > 0);
    assert.deepEqual(coincidenceFlags({ ...PLAN, carrierHz: clear }), []);
    assert.deepEqual(coincidenceFlags({ ...PLAN, carrierHz: 7300 }), []);
  });

  it('count clipping as a fraction of the samples read', () => {
    assert.equal(clipFlag(0, 1000), null);
    assert.match(
      clipFlag(3, 1_000_000)!.message,
      /3 of 1000000 sample components \(<0\.01 %\) sit at or beyond full scale/,
    );
  });
});

describe('nullbench measure carries its warnings', () => {
  const t = tempDir('nullbench-flags-');
  after(() => t.cleanup());

  it('prints no warning for a clean recording with the carrier off the centre', async () => {
    const f = join(t.dir, 'clean.wav');
    dsbWav(f, { carrierHz: 7300, gain: 0.2, carrierDb: 40 });
    const r = await runMeasure([f, '--tone-hz', '1000', '--carrier-hz', '7300', '--json']);
    assert.equal(r.code, 0, r.err);
    const j = JSON.parse(r.out);
    assert.deepEqual(j.flags, []);
    assert.equal(j.clipped_components, 0);
    // 40 dB set, 40 dB measured (flat-top window; within its 0.1 dB scalloping and the 16-bit noise).
    assert.ok(Math.abs(j.suppression_db - 40) < 0.3, `${j.suppression_db} dB`);
  });

  it('flags a recording that clips slightly, and refuses one that clips hard', async () => {
    const light = join(t.dir, 'light.wav');
    // Twenty samples at full scale in a second of a signal well below it: flagged, levels still stated.
    dsbWav(light, { carrierHz: 7300, gain: 0.2, carrierDb: 40, clicks: 20 });
    const r = await runMeasure([light, '--tone-hz', '1000', '--carrier-hz', '7300', '--json']);
    assert.equal(r.code, 0, r.err);
    const j = JSON.parse(r.out);
    assert.ok(j.clipped_components > 0);
    assert.ok(j.flags.some((x: { code: string }) => x.code === 'clipped'));
    const text = await runMeasure([light, '--tone-hz', '1000', '--carrier-hz', '7300']);
    assert.match(text.out, /WARNING \(clipped\): \d+ of \d+ sample components/);
    const hard = join(t.dir, 'hard.wav');
    dsbWav(hard, { carrierHz: 7300, gain: 1, carrierDb: 40 });
    const refused = await runMeasure([hard, '--tone-hz', '1000', '--carrier-hz', '7300']);
    assert.equal(refused.code, 2);
    assert.match(
      refused.err,
      /hard\.wav: .*sit at or beyond full scale.*no level is stated from this recording/,
    );
  });

  it('flags the carrier on the centre and the tones on each other’s images, suggesting an offset', async () => {
    const f = join(t.dir, 'dc.wav');
    dsbWav(f, { carrierHz: 0, gain: 0.2, carrierDb: 40 });
    const r = await runMeasure([f, '--tone-hz', '1000', '--json']);
    assert.equal(r.code, 0, r.err);
    const codes = JSON.parse(r.out).flags.map((x: { code: string }) => x.code);
    assert.ok(codes.includes('line-on-dc') && codes.includes('image-on-line'), codes.join());
  });

  it('finds the lines of a transmitter whose crystal is 150 Hz off a 500 Hz tone, and makes no SSB call of DSB', async () => {
    // The case: with a ±tone/4 search this read 28.8 dB and called the DSB signal SSB.
    const f = join(t.dir, 'crystal.wav');
    dsbWav(f, { carrierHz: 7450, gain: 0.2, carrierDb: 40, toneHz: 500 });
    const r = await runMeasure([f, '--tone-hz', '500', '--carrier-hz', '7300', '--json']);
    assert.equal(r.code, 0, r.err);
    const j = JSON.parse(r.out);
    assert.ok(Math.abs(j.suppression_db - 40) < 0.5, `${j.suppression_db} dB`);
    assert.ok(Math.abs(j.carrier_offset_hz - 7450) < 3, `carrier found at ${j.carrier_offset_hz} Hz`);
    assert.equal(j.ssb, null);
    assert.ok(!j.flags.some((x: { code: string }) => x.code === 'search-edge'));
  });

  it('flags a line found at the edge of its search window, and then makes no DSB/SSB call', async () => {
    const f = join(t.dir, 'far.wav');
    // 240 Hz off a 500 Hz tone: beyond the ±225 Hz window (0.45 × 500).
    dsbWav(f, { carrierHz: 7540, gain: 0.2, carrierDb: 40, toneHz: 500 });
    const r = await runMeasure([f, '--tone-hz', '500', '--carrier-hz', '7300', '--json']);
    assert.equal(r.code, 0, r.err);
    const j = JSON.parse(r.out);
    const edge = j.flags.filter((x: { code: string }) => x.code === 'search-edge');
    assert.ok(edge.length >= 1, JSON.stringify(j.flags));
    assert.match(edge[0].message, /found at the edge of its ±225 Hz search window/);
    assert.equal(j.ssb, null);
    const bad = await runMeasure([f, '--tone-hz', '500', '--search-hz', '300']);
    assert.equal(bad.code, 2);
    assert.match(bad.err, /--search-hz: must be from 0 to below half the tone \(250 Hz\)/);
  });
});
