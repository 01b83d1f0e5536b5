import { after, before, describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { runMeasure } from '../helpers/measure';
import { tempDir } from '../helpers/tmp';

describe('nullbench measure (command line)', () => {
  const t = tempDir('nullbench-measure-');
  const wav = join(t.dir, 'tone.wav');
  before(() => {
    // sox: I = 0.5 cos, Q = 0.5 sin, a +1000 Hz tone at -6.02 dBFS with nothing else: an SSB signal.
    const r = spawnSync('sox', [
      '-D',
      '-n',
      '-r',
      '48000',
      '-c',
      '2',
      '-b',
      '16',
      wav,
      'synth',
      '1',
      'sine',
      '1000',
      '0',
      '25',
      'sine',
      '1000',
      'vol',
      '0.5',
    ]);
    assert.equal(r.status, 0);
  });
  after(() => t.cleanup());

  it('--help prints the usage and exits 0', async () => {
    const r = await runMeasure(['--help']);
    assert.equal(r.code, 0);
    assert.match(r.out, /nullbench measure FILE --tone-hz F/);
    assert.match(r.out, /--carrier-hz/);
  });

  it('prints an aligned table with bounds marked and the suppression as "at least"', async () => {
    const r = await runMeasure([wav, '--tone-hz', '1000']);
    assert.equal(r.code, 0, r.err);
    const lines = r.out.split('\n');
    const header = lines.find((l) => l.startsWith('component'));
    const upper = lines.find((l) => l.startsWith('upper sideband'));
    assert.ok(header && upper);
    // The level column ends at the same place in the header and the rows.
    assert.equal(upper.indexOf('-6.02') + '-6.02'.length, header.indexOf('level dBFS') + 'level dBFS'.length);
    assert.match(r.out, /carrier\s+0\.0\s+<= -\d+\.\d\d/);
    assert.match(r.out, /Carrier suppression {2}at least \d+\.\d\d dB/);
    assert.match(r.out, /SSB {10}upper sideband wanted/);
    // How much of the file was used, and what the uncertainty covers, are said.
    assert.match(r.out, /Used {9}\d+ of \d+ frames: the first \d+\.\d+ s of \d+\.\d+ s/);
    assert.match(r.out, /U \(k = 2, about 95 %\) from the noise in the measured bins only/);
    assert.ok(!/\+\/- 0\.00\b/.test(r.out), 'an uncertainty printed as 0.00');
  });

  it('states in JSON what part of the recording was used and what the uncertainties cover', async () => {
    const r = await runMeasure([wav, '--tone-hz', '1000', '--json', '--average', '2']);
    assert.equal(r.code, 0, r.err);
    const j = JSON.parse(r.out);
    assert.equal(j.averages, 2);
    assert.ok(j.frames_in_file >= 2);
    assert.ok(Math.abs(j.seconds_used - (2 * j.n) / j.sample_rate) < 0.01);
    assert.equal(j.u_k, 1);
    assert.match(j.u_covers, /noise/);
  });

  it('--json prints one JSON object with the agreed fields', async () => {
    const r = await runMeasure([
      wav,
      '--tone-hz',
      '1000',
      '--json',
      '--window',
      'hft95',
      '--fft',
      '8192',
      '--average',
      '3',
    ]);
    assert.equal(r.code, 0, r.err);
    assert.equal(r.out.trim().split('\n').length, 1);
    const j = JSON.parse(r.out);
    for (const k of [
      'carrier_dbfs',
      'upper_dbfs',
      'lower_dbfs',
      'suppression_db',
      'floor_limited',
      'imd3_dbc',
      'noise_floor_dbfs',
      'window',
      'n',
      'averages',
      'sample_rate',
      'center_hz',
    ]) {
      assert.ok(k in j, k);
    }
    assert.equal(j.window, 'hft95');
    assert.equal(j.n, 8192);
    assert.equal(j.averages, 3);
    assert.equal(j.floor_limited, true);
    assert.ok(Math.abs(j.upper_dbfs + 6.02) < 0.01);
  });

  it('takes a negative carrier offset after a space', async () => {
    const r = await runMeasure([wav, '--tone-hz', '1000', '--carrier-hz', '-2000', '--json']);
    assert.equal(r.code, 0, r.err);
    assert.equal(JSON.parse(r.out).carrier_offset_hz, -2000);
  });

  const usageError = async (argv: string[], pattern: RegExp) => {
    const r = await runMeasure(argv);
    assert.equal(r.code, 2, r.out);
    assert.match(r.err, pattern);
  };

  it('takes --averages, the older name of --average, as an alias', async () => {
    const r = await runMeasure([wav, '--tone-hz', '1000', '--json', '--fft', '8192', '--averages', '2']);
    assert.equal(r.code, 0, r.err);
    assert.equal(JSON.parse(r.out).averages, 2);
  });

  it('exits 2 naming the option for bad usage', async () => {
    await usageError([wav], /--tone-hz: is required/);
    await usageError([wav, '--tone-hz', 'abc'], /--tone-hz: must be a number, got "abc"/);
    await usageError(
      [wav, '--tone-hz', '30000'],
      /--tone-hz: the upper sideband at 30000 Hz is outside the band/,
    );
    await usageError([wav, '--tone-hz', '1000', '--carrier-hz', '24000'], /--carrier-hz: .*outside the band/);
    await usageError([wav, '--tone-hz', '1000', '--window', 'kaiser'], /--window: unknown window "kaiser"/);
    await usageError([wav, '--tone-hz', '1000', '--fft', '1000'], /--fft: must be a multiple of 16/);
    await usageError([wav, '--tone-hz', '1000', '--fft', '1048576'], /fewer than one FFT frame/);
    await usageError([wav, '--tone-hz', '20', '--fft', '1024'], /--tone-hz: .*use a larger FFT/);
    await usageError(
      [wav, '--tone-hz', '1000', '--average', '0'],
      /--average: must be a whole number >= 1, got 0/,
    );
    // The older name is an alias, refused with its own name; both at once is refused too.
    await usageError([wav, '--tone-hz', '1000', '--averages', '0'], /--averages: must be a whole number/);
    await usageError([wav, '--tone-hz', '1000', '--average', '2', '--averages', '3'], /give --average only/);
    await usageError(['--tone-hz', '1000'], /expected one recording file/);
    await usageError([wav, '--tone-hz', '1000', '--bogus'], /Unknown option '--bogus'/);
    await usageError([join(t.dir, 'x.mp3'), '--tone-hz', '1000'], /unknown recording type/);
  });

  it('exits 1 for a file that does not exist', async () => {
    const r = await runMeasure([join(t.dir, 'missing.wav'), '--tone-hz', '1000']);
    assert.equal(r.code, 1);
    assert.match(r.err, /ENOTFOUND.*missing\.wav/);
  });
});
