import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import type { PointRole } from '../../app/api';
import {
  TWO_TONE_PEP_DB,
  analyseSession,
  finalPoints,
  meterU,
  metricFigure,
  relativeU,
  type PointLevel,
} from '../../app/analysis';

function near(actual: number, expected: number, tol: number, what = ''): void {
  assert.ok(
    Math.abs(actual - expected) <= tol,
    `${what} expected ${expected} ± ${tol}, got ${actual} (off by ${actual - expected})`,
  );
}

const Q = 1 / Math.sqrt(12); // a 1 dB meter step
let t = 0;
/** A kept reading: calibration 0.5 dB, path 0.4 dB, a 1 dB meter step (k = 1). */
function pt(role: PointRole, dbm: number, extra: Partial<PointLevel> = {}): PointLevel {
  const uCalDb = extra.uCalDb ?? 0.5;
  const uPathDb = extra.uPathDb ?? 0.4;
  return {
    role,
    t: (t += 1000),
    freqHz: 7.1e6,
    dbm,
    uDb: Math.sqrt(uCalDb ** 2 + uPathDb ** 2 + Q ** 2),
    uCalDb,
    uPathDb,
    floorLimited: false,
    overload: false,
    ...extra,
  };
}

describe('analysis.relativeU()', () => {
  it('leaves the path out of a same-receiver, same-path ratio and keeps calibration and meter', () => {
    const p = pt('carrier', -30);
    near(meterU(p), Q, 1e-12, 'meter part');
    near(relativeU(p), Math.sqrt(0.5 ** 2 + Q ** 2), 1e-12, 'relative u');
    assert.ok(relativeU(p) < p.uDb);
  });
});

describe('analysis.finalPoints()', () => {
  it('takes the last kept reading of each point as its result', () => {
    const a = pt('carrier', -10);
    const b = pt('carrier', -40);
    const c = pt('upper', 24);
    const f = finalPoints([b, c, a]);
    assert.equal(f.carrier?.dbm, -40);
    assert.equal(f.upper?.dbm, 24);
  });
});

describe('analysis.analyseSession()', () => {
  it('states DSB carrier suppression against one tone, PEP and the unbalanced carrier', () => {
    const f = analyseSession([
      pt('upper', 24),
      pt('lower', 24),
      pt('carrier', -28),
      pt('reference', 21),
      pt('imd3u', -8),
      pt('imd3l', -9),
    ]);
    near(f.tone!.dbm, 24, 1e-9, 'tone');
    // docs/references.md § Modulation and power: DSB with one tone, PEP = 4 x one tone's power (+6.02 dB).
    near(f.pep!.dbm - f.tone!.dbm, 6.0206, 1e-4, 'PEP above one tone');
    near(TWO_TONE_PEP_DB, 6.0206, 1e-4);
    near(f.carrier.tone!.value, 52, 1e-9, 'carrier below one tone');
    near(f.carrier.pep!.value, 58.0206, 1e-4, 'carrier below PEP');
    near(f.carrier.unbalanced!.value, 49, 1e-9, 'carrier below the unbalanced carrier');
    // docs/references.md § Power sum and noise correction: the fundamental's mean power is the sum of its lines' powers.
    near(f.mean!.dbm, 10 * Math.log10(2 * 10 ** 2.4 + 10 ** -2.8), 1e-9, 'mean power');
    near(f.balance!.value, 0, 1e-12);
    assert.equal(f.opposite, null, 'no opposite sideband in DSB');
  });

  it('gives IMD3 below PEP as IMD3 below one tone plus 6.02 dB', () => {
    const f = analyseSession([
      pt('upper', 0),
      pt('lower', 0),
      pt('carrier', -50),
      pt('imd3u', -30),
      pt('imd3l', -31),
    ]);
    // docs/references.md § Modulation and power: -30 dBc per tone = -36 dB PEP (the worse line counts).
    near(f.imd3.tone!.value, 30, 1e-9, 'IMD3 below one tone');
    near(f.imd3.pep!.value, 36.02, 0.005, 'IMD3 below PEP');
    near(metricFigure(f, 'imd3', 'pep')!.value, 36.02, 0.005);
    near(metricFigure(f, 'imd3', 'tone')!.value, 30, 1e-9);
  });

  it('propagates only calibration and meter into dBc figures, never the path', () => {
    const f = analyseSession([pt('upper', 24), pt('lower', 24), pt('carrier', -28)]);
    // Two tones at one level share the calibration error; their meter steps average down by √2.
    const uTone = Math.sqrt(0.5 ** 2 + Q ** 2 / 2);
    near(f.tone!.uRel, uTone, 1e-12, 'tone u');
    near(f.carrier.tone!.u, Math.hypot(uTone, Math.sqrt(0.5 ** 2 + Q ** 2)), 1e-12, 'carrier dBc u');
    // The balance of two equal tones: the calibration error cancels, the meter steps do not.
    near(f.balance!.u, Math.SQRT2 * Q, 1e-12, 'balance u');
    // The path stays in the absolute level.
    near(f.tone!.uAbs, Math.sqrt(0.5 ** 2 + 0.4 ** 2 + Q ** 2 / 2), 1e-12);
  });

  it('turns a carrier read at the receiver floor into a bound, never a value', () => {
    const flagged = analyseSession([
      pt('upper', 24),
      pt('lower', 24),
      pt('carrier', -80, { floorLimited: true }),
    ]);
    assert.equal(flagged.carrier.tone!.bound, 'atLeast');
    assert.match(flagged.carrier.tone!.notes.join(), /floor/);
    // Within 3 dB of the kept floor reading counts as the floor too.
    const byFloor = analyseSession([pt('upper', 24), pt('lower', 24), pt('floor', -82), pt('carrier', -80)]);
    assert.equal(byFloor.floorDbm, -82);
    assert.equal(byFloor.carrier.pep!.bound, 'atLeast');
    const clear = analyseSession([pt('upper', 24), pt('lower', 24), pt('floor', -90), pt('carrier', -80)]);
    assert.equal(clear.carrier.pep!.bound, 'value');
  });

  it('states no suppression against tones (or a reference) that sat at the receiver floor', () => {
    // Tones at the floor are no reference: the carrier "80 dB below" them says nothing about the modulator.
    const f = analyseSession([
      pt('upper', -60, { floorLimited: true }),
      pt('lower', -60, { floorLimited: true }),
      pt('carrier', -140, { floorLimited: true }),
      pt('imd3u', -100),
      pt('h2', -120),
    ]);
    for (const [name, fig] of [
      ['carrier/tone', f.carrier.tone],
      ['carrier/PEP', f.carrier.pep],
      ['IMD3/tone', f.imd3.tone],
      ['h2 below mean', f.harmonics[0].belowMean],
    ] as const) {
      assert.equal(fig!.bound, 'unknown', name);
      assert.match(fig!.notes.join(), /upper and lower tone read at the receiver floor/, name);
    }
    assert.ok(f.warnings.some((w) => /tone read at the receiver floor: is the transmitter keyed/.test(w)));
    // One tone at the floor is enough to spoil the mean tone and PEP.
    const one = analyseSession([
      pt('upper', 24),
      pt('lower', -70, { floorLimited: true }),
      pt('carrier', -40),
    ]);
    assert.equal(one.carrier.tone!.bound, 'unknown');
    // The unbalanced reference at the floor spoils only the figure against it.
    const ref = analyseSession([
      pt('upper', 24),
      pt('lower', 24),
      pt('carrier', -40),
      pt('reference', -75, { floorLimited: true }),
    ]);
    assert.equal(ref.carrier.unbalanced!.bound, 'unknown');
    assert.equal(ref.carrier.tone!.bound, 'value');
  });

  it('states the opposite sideband for SSB, with PEP equal to the one tone', () => {
    const f = analyseSession([pt('upper', 30), pt('lower', -15), pt('carrier', -25)], 'usb');
    near(f.opposite!.value, 45, 1e-9, 'opposite sideband');
    // PEP: one tone has a flat envelope, so PEP is its power; the residual opposite line adds in amplitude.
    near(f.pep!.dbm, 10 * Math.log10((Math.sqrt(10 ** 3) + Math.sqrt(10 ** -1.5)) ** 2), 1e-9);
    near(f.pep!.dbm - 30, 0.049, 0.001);
    assert.equal(f.balance, null, 'no balance figure for SSB');
    assert.equal(f.imd3.tone, null, 'no IMD3 from one SSB tone');
    const l = analyseSession([pt('upper', -15), pt('lower', 30), pt('carrier', -25)], 'lsb');
    near(l.opposite!.value, 45, 1e-9);
  });

  it('warns when a DSB session has sidebands far apart (an SSB set as DSB)', () => {
    const f = analyseSession([pt('upper', 30), pt('lower', -15), pt('carrier', -25)]);
    assert.match(f.warnings.join('\n'), /set the emission to USB or LSB/);
  });

  it('states harmonics below the mean power and PEP with the absolute uncertainties of both', () => {
    const f = analyseSession([
      pt('upper', 24),
      pt('lower', 24),
      pt('carrier', -40),
      pt('h2', -18, { freqHz: 14.2e6 }),
    ]);
    const h = f.harmonics[0];
    assert.equal(h.order, 2);
    near(h.belowMean!.value, 10 * Math.log10(2 * 10 ** 2.4 + 10 ** -4) + 18, 1e-9);
    near(h.belowMean!.u, Math.hypot(f.mean!.uAbs, h.uDb), 1e-12);
  });

  it('says what is missing instead of inventing it', () => {
    const f = analyseSession([pt('carrier', -20)]);
    assert.equal(f.carrier.tone, null);
    assert.equal(f.carrier.pep, null);
    assert.match(f.warnings.join('\n'), /no tone kept/);
    const g = analyseSession([pt('upper', 24), pt('carrier', -30)]);
    assert.match(g.warnings.join('\n'), /only the upper tone/);
    near(g.carrier.pep!.value, 54 + TWO_TONE_PEP_DB, 1e-9);
  });

  it('reports sideband balance as a magnitude for comparison', () => {
    const f = analyseSession([pt('upper', 23), pt('lower', 24.5), pt('carrier', -30)]);
    near(f.balance!.value, -1.5, 1e-9);
    near(metricFigure(f, 'balance', 'tone')!.value, 1.5, 1e-9);
  });
});
