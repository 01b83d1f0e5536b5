import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import { SpectrumAverager } from '../../app/spectrum/averager';
import { measureIq, measureSpectrum, type TwoToneMeasurement } from '../../app/spectrum/measure';
import { Window, type WindowName } from '../../app/spectrum/window';
import { dsbGenerator, quantizeU8, type DsbSpec } from '../../main/sim/dsbsignal';

const FS = 2_400_000;
const N = 262144;

/**
 * A DSB capture quantised to 8 bits as an SDR delivers it (16 frames of 262144 = 1.75 s at 2.4 MS/s),
 * measured with `window`; the tone is given to the measurement rounded to 100 Hz, as a user would.
 */
async function measure8bit(
  spec: DsbSpec,
  frames = 16,
  window: WindowName = 'flat-top',
  carrierHz = spec.carrierHz,
) {
  const gen = dsbGenerator({ toneDbfs: -8, ...spec });
  const x = new Float32Array(2 * N * frames);
  gen(x, 0, { sampleRate: FS, centerHz: 0, gainTenthsDb: null });
  const bytes = quantizeU8(x);
  const avg = await SpectrumAverager.create(Window.byName(window, N));
  for (let f = 0; f < frames; f++) avg.pushU8(bytes, f * N);
  const m = measureSpectrum(avg.spectrum(), {
    sampleRate: FS,
    carrierHz,
    toneHz: Math.round(spec.toneHz / 100) * 100,
  });
  avg.dispose();
  return m;
}

const near = (got: number | null | undefined, want: number, tol: number, what: string) => {
  assert.ok(
    typeof got === 'number' && Math.abs(got - want) <= tol,
    `${what}: got ${got}, want ${want} +/- ${tol}`,
  );
};

describe('measureSpectrum() on synthetic DSB from 8-bit samples', () => {
  // Each signal is our own synthesis: tones at -8 dBFS, carrier `suppressionDb` below the mean of
  // the two sidebands (the definition), white noise at -110 dBFS/Hz (which also dithers the
  // quantiser), then 8-bit rounding. At 70 dB the carrier is then about 15 dB above the floor per bin.
  for (const sup of [30, 50, 70]) {
    it(`recovers ${sup} dB carrier suppression within +/-0.5 dB`, async () => {
      const m = await measure8bit({
        carrierHz: 150_000,
        toneHz: 1000,
        suppressionDb: sup,
        imd3Dbc: -40,
        imd5Dbc: -60,
      });
      near(m.suppression?.db, sup, 0.5, 'suppression');
      assert.equal(m.floorLimited, false);
      assert.equal(m.suppression?.floorLimited, false);
      near(m.components.upper.dbfs, -8, 0.1, 'upper');
      near(m.components.lower.dbfs, -8, 0.1, 'lower');
      near(m.components.carrier.dbfs, -8 - sup, 0.5, 'carrier');
      // The noise-based uncertainty accounts for the error.
      assert.ok(Math.abs((m.suppression?.db as number) - sup) <= 3 * (m.suppression?.uDb as number) + 0.05);
      near(m.imd3?.db, -40, 0.5, 'IMD3 re one tone');
      // Two equal tones: PEP = 4 x one tone, so IMD3 re PEP = re tone - 6.02 dB (docs/references.md § Modulation and power).
      near(m.imd3?.pepDb, -46.02, 0.5, 'IMD3 re PEP');
      near(m.imd5?.db, -60, 0.5, 'IMD5');
      near(m.carrierHz, 150_000, 0.01, 'carrier position');
      assert.equal(m.ssb, null);
    });
  }

  it('flags a carrier buried in the floor and reports suppression as "at least", never above the truth', async () => {
    const m = await measure8bit({ carrierHz: 150_000, toneHz: 1000, suppressionDb: 100 }, 4);
    assert.equal(m.components.carrier.floorLimited, true);
    assert.equal(m.floorLimited, true);
    assert.equal(m.suppression?.floorLimited, true);
    const bound = m.suppression?.db as number;
    assert.ok(bound < 100 && bound > 60, `bound ${bound}`);
    // The carrier's reported level is an upper bound at the floor plus the margin (flat-top ripple aside).
    assert.ok((m.components.carrier.dbfs as number) >= m.components.carrier.floorDbfs + 6 - 0.01);
  });

  it('finds the noise density through the ENBW: white noise plus 8-bit quantisation noise', async () => {
    const m = await measure8bit(
      { carrierHz: 150_000, toneHz: 1000, suppressionDb: 40, noiseDbfsHz: -100 },
      4,
    );
    // Quantisation noise of 8-bit I and Q (step 1/127.5): 2 * q^2/12 in fs (Bennett 1948), computed.
    const quant = 10 * Math.log10((2 * (1 / 127.5) ** 2) / 12 / FS);
    const want = 10 * Math.log10(10 ** (-100 / 10) + 10 ** (quant / 10));
    near(m.noiseDensityDbfsHz, want, 0.3, 'density');
    near(m.noiseFloorDbfs, want + 10 * Math.log10(m.enbwHz), 0.3, 'floor per bin');
  });

  for (const w of ['hann', 'blackman-harris-4', 'hft95'] as const) {
    it(`gives the same suppression with the ${w} window`, async () => {
      const m = await measure8bit({ carrierHz: 150_000, toneHz: 1000, suppressionDb: 50 }, 4, w);
      near(m.suppression?.db, 50, 0.5, 'suppression');
      assert.equal(m.window, w);
    });
  }

  it('follows a carrier below the centre and a tone a few hertz off nominal', async () => {
    const m = await measure8bit(
      { carrierHz: -300_000, toneHz: 1004, suppressionDb: 45 },
      4,
      'flat-top',
      -300_000,
    );
    near(m.suppression?.db, 45, 0.5, 'suppression');
    near(m.toneHz, 1004, 0.05, 'tone');
    near(m.carrierHz, -300_000, 0.05, 'carrier');
  });

  it('reads an SSB signal: the wanted sideband, the opposite-sideband and carrier suppression', async () => {
    const m = await measure8bit({ carrierHz: 150_000, toneHz: 1000, suppressionDb: 40, lowerRelDb: -45 }, 4);
    assert.equal(m.ssb?.wanted, 'upper');
    near(m.ssb?.opposite.db, 45, 0.5, 'opposite sideband');
    // The carrier is 40 dB below the mean of the sidebands, which is 3.01 dB below the upper alone.
    const meanDb = 10 * Math.log10((1 + 10 ** -4.5) / 2);
    near(m.ssb?.carrier.db, 40 - meanDb, 0.5, 'carrier below wanted');
  });

  it('bounds an opposite sideband lost in the floor', async () => {
    const m = await measure8bit({ carrierHz: 150_000, toneHz: 1000, suppressionDb: 40, lowerRelDb: -120 }, 4);
    assert.equal(m.ssb?.wanted, 'upper');
    assert.equal(m.ssb?.opposite.floorLimited, true);
    assert.ok((m.ssb?.opposite.db as number) > 50);
    // The sideband mean is then known to better than 0.05 dB, so suppression stays a value.
    near(m.suppression?.db, 40 + 10 * Math.log10((1 + 1e-12) / 2) + 3.01, 0.5, 'suppression');
  });

  it('marks IMD products outside the band and still measures the rest', async () => {
    const m = await measure8bit({ carrierHz: 1_180_000, toneHz: 5000, suppressionDb: 40 }, 4);
    assert.equal(m.components.imd5Upper.inBand, false);
    assert.equal(m.components.imd5Upper.dbfs, null);
    assert.equal(m.components.imd3Upper.inBand, true); // 1.195 MHz, inside +/-1.2 MHz
    assert.equal(m.components.imd5Lower.inBand, true);
    assert.notEqual(m.imd5, null, 'IMD5 from the product still in band');
    near(m.suppression?.db, 40, 0.5, 'suppression');
  });
});

describe('measureIq()', () => {
  it('measures float samples with the default window and FFT size', async () => {
    const gen = dsbGenerator({ carrierHz: 2000, toneHz: 1000, suppressionDb: 35, noiseDbfsHz: -130 });
    const x = new Float32Array(2 * 48000);
    gen(x, 0, { sampleRate: 48000, centerHz: 0, gainTenthsDb: null });
    const m: TwoToneMeasurement = await measureIq(x, { sampleRate: 48000, carrierHz: 2000, toneHz: 1000 });
    near(m.suppression?.db, 35, 0.5, 'suppression');
    assert.equal(m.window, 'flat-top');
    assert.ok(m.averages >= 2);
  });

  const x = new Float32Array(2 * 8192);
  const expectEinval = (field: string) => (e: unknown) =>
    e instanceof BenchError && e.code === 'EINVAL' && e.field === field;

  it('rejects a sample rate of zero naming sampleRate', async () => {
    await assert.rejects(measureIq(x, { sampleRate: 0, toneHz: 1000 }), expectEinval('sampleRate'));
  });

  it('rejects a tone outside the band naming toneHz', async () => {
    await assert.rejects(
      measureIq(x, { sampleRate: 48000, toneHz: 24000, fftSize: 4096 }),
      expectEinval('toneHz'),
    );
    await assert.rejects(
      measureIq(x, { sampleRate: 48000, carrierHz: 20000, toneHz: 5000, fftSize: 4096 }),
      expectEinval('toneHz'),
    );
  });

  it('rejects a carrier outside the band naming carrierHz', async () => {
    await assert.rejects(
      measureIq(x, { sampleRate: 48000, carrierHz: -24000, toneHz: 1000, fftSize: 4096 }),
      expectEinval('carrierHz'),
    );
  });

  it('rejects a tone too close to the carrier for the resolution, saying what would do', async () => {
    await assert.rejects(measureIq(x, { sampleRate: 48000, toneHz: 50, fftSize: 4096 }), (e: unknown) => {
      return e instanceof BenchError && e.field === 'toneHz' && /larger FFT/.test(e.message);
    });
  });

  it('rejects fewer samples than one frame', async () => {
    await assert.rejects(
      measureIq(x, { sampleRate: 48000, toneHz: 1000, fftSize: 16384 }),
      expectEinval('samples'),
    );
  });
});
