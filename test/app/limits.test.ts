import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import type { PointRole } from '../../app/api';
import { analyseSession, type PointLevel } from '../../app/analysis';
import { BenchError } from '../../app/errors';
import {
  PRESETS,
  VERIFY_CAUTION,
  evaluateSet,
  fmtWatts,
  ruleText,
  spuriousLimitDbm,
  validateLimitSet,
  verdictOf,
  type LimitRule,
} from '../../app/limits';

function near(actual: number, expected: number, tol: number, what = ''): void {
  assert.ok(Math.abs(actual - expected) <= tol, `${what} expected ${expected} ± ${tol}, got ${actual}`);
}

const preset = (id: string) => {
  const s = PRESETS.find((p) => p.id === id);
  assert.ok(s, `preset ${id}`);
  return s;
};
type Spur = Extract<LimitRule, { metric: 'spurious' }>;
const spurRule = (id: string, i = 0) => preset(id).rules[i] as Spur;
const W = (w: number) => 10 * Math.log10(w * 1000); // W -> dBm

let t = 0;
function pt(role: PointRole, dbm: number, extra: Partial<PointLevel> = {}): PointLevel {
  return {
    role,
    t: (t += 1),
    freqHz: 7.1e6,
    dbm,
    uDb: 0.6,
    uCalDb: 0.3,
    uPathDb: 0.4,
    floorLimited: false,
    overload: false,
    ...extra,
  };
}

describe('limits presets', () => {
  it('47 CFR 97.307(d): 100 W mean power allows a spur of at most +7 dBm', () => {
    // docs/references.md § Emission limits, 47 CFR 97.307(d): at least 43 dB below the mean power; 100 W -> +7 dBm.
    near(spuriousLimitDbm(spurRule('preset:us-97.307d'), W(100)).dbm, 7, 1e-9, '100 W');
    assert.equal(preset('preset:us-97.307d').rules[0].carrierBelowHz, 30e6, 'fundamental below 30 MHz');
  });

  it('47 CFR 97.307(e): 60 dB below above 25 W; at most 25 µW, 40 dB below, not below 10 µW at 25 W or less', () => {
    // docs/references.md, 47 CFR 97.307(e): >25 W: 60 dB below the mean power.
    const hi = spurRule('preset:us-97.307e', 0);
    assert.equal(hi.meanAboveW, 25);
    near(spuriousLimitDbm(hi, W(100)).dbm, W(100) - 60, 1e-9, '100 W');
    // 47 CFR 97.307(e), mean power <= 25 W: at most 25 µW (-16.02 dBm) ...
    const lo = spurRule('preset:us-97.307e', 1);
    assert.equal(lo.meanAtMostW, 25);
    near(spuriousLimitDbm(lo, W(10)).dbm, -16.02, 0.005, '10 W: the 25 µW cap');
    // ... and at least 40 dB below the mean power (0.1 W = +20 dBm -> -20 dBm) ...
    near(
      spuriousLimitDbm(lo, W(0.05)).dbm,
      -20,
      1e-9,
      '50 mW: 40 dB below gives -23 dBm, but need not be below 10 µW',
    );
    // ... but need not be below 10 µW (-20 dBm).
    near(spuriousLimitDbm(lo, W(0.001)).dbm, -20, 1e-9, '1 mW');
    // 0.2 W = +23.01 dBm: 40 dB below is -16.99 dBm, inside both the cap and the floor: it binds.
    near(spuriousLimitDbm(lo, W(0.2)).dbm, W(0.2) - 40, 1e-9, '0.2 W');
    // 0.3 W: 40 dB below would allow -15.23 dBm, but the 25 µW cap (-16.02 dBm) is stricter.
    near(spuriousLimitDbm(lo, W(0.3)).dbm, -16.02, 0.005, '0.3 W');
    assert.equal(fmtWatts(lo.absMaxDbm!), '25.0 µW');
    assert.equal(fmtWatts(lo.needNotBelowDbm!), '10.0 µW');
    assert.equal(hi.carrierFromHz, 30e6);
    assert.equal(hi.carrierBelowHz, 225e6);
  });

  it('ITU-R SM.329 category A: 43 + 10 log P or 50 dBc, whichever is less stringent', () => {
    // docs/references.md, ITU-R SM.329 (from a secondary source): 100 W PEP -> 43 + 20 = 63 dB or 50 dBc: 50 dBc,
    // i.e. at most 0 dBm.
    const r = spurRule('preset:itu-sm329-a');
    near(spuriousLimitDbm(r, W(100)).dbm, 0, 1e-9, '100 W PEP');
    // 1 W PEP -> 43 dB or 50 dBc: 43 dB, i.e. -13 dBm (43 + 10 log P below P is always -13 dBm).
    near(spuriousLimitDbm(r, W(1)).dbm, -13, 1e-9, '1 W PEP');
    near(spuriousLimitDbm(r, W(5)).dbm, -13, 1e-9, '5 W PEP: 43 + 7 = 50 dB, the two agree');
    assert.equal(r.reference, 'pep');
    assert.equal(preset('preset:itu-sm329-a').standing, 'secondary-source');
    assert.match(preset('preset:itu-sm329-a').source, /secondary source/);
  });

  it('47 CFR 80.207: the maritime 40 dB carrier figure, optional and labelled as another service', () => {
    // docs/references.md: 47 CFR 80.207 (maritime, not amateur): SSB carrier at least 40 dB below PEP.
    const s = preset('preset:us-80.207-maritime');
    assert.deepEqual(s.rules[0], {
      metric: 'carrier',
      reference: 'pep',
      minDb: 40,
      emissions: ['usb', 'lsb'],
    });
    assert.equal(s.standing, 'other-service');
    assert.match(s.name, /optional/);
    assert.match(s.source, /not amateur/);
  });

  it('common practice: 40 dB carrier and 40-50 dB opposite sideband; 60 dB on a careful layout', () => {
    // docs/references.md § Emission limits, common practice (no standard).
    const c = preset('preset:common-practice');
    assert.equal(c.standing, 'common-practice');
    assert.match(c.name, /common practice/);
    assert.deepEqual(
      c.rules.map((r) => [r.metric, 'minDb' in r ? r.minDb : null]),
      [
        ['carrier', 40],
        ['opposite', 40],
      ],
    );
    const careful = preset('preset:common-practice-careful');
    assert.equal(careful.rules[0].metric === 'carrier' && careful.rules[0].minDb, 60);
    assert.match(careful.name, /common practice/);
  });

  it('gives every preset a source and the "verify against your local rules" caution', () => {
    assert.match(VERIFY_CAUTION, /[Vv]erify against your local rules/);
    for (const p of PRESETS) {
      assert.ok(p.source.length > 40, `${p.id} names its source`);
      assert.ok(p.id.startsWith('preset:'));
      for (const r of p.rules) assert.ok(ruleText(r).length > 10);
    }
  });
});

describe('limits.validateLimitSet()', () => {
  it('accepts a user-defined set and names the field of a bad one', () => {
    const ok = validateLimitSet({
      id: 'u1',
      name: 'My kit',
      rules: [
        { metric: 'balance', maxDb: 1 },
        { metric: 'imd3', reference: 'pep', minDb: 30 },
      ],
    });
    assert.equal(ok.standing, 'user');
    for (const [bad, field] of [
      [{ id: 'u', name: 'x', rules: [{ metric: 'carrier', reference: 'pep', minDb: -3 }] }, 'rules[0].minDb'],
      [
        { id: 'u', name: 'x', rules: [{ metric: 'carrier', reference: 'moon', minDb: 3 }] },
        'rules[0].reference',
      ],
      [{ id: 'u', name: '', rules: [{ metric: 'balance', maxDb: 1 }] }, 'name'],
      [{ id: 'u', name: 'x', rules: [] }, 'rules'],
      [{ id: 'u', name: 'x', rules: [{ metric: 'balance', maxDb: 1, colour: 'red' }] }, 'rules[0]'],
      [
        {
          id: 'u',
          name: 'x',
          rules: [{ metric: 'carrier', reference: 'pep', minDb: 3, carrierFromHz: 9, carrierBelowHz: 5 }],
        },
        'rules[0].carrierBelowHz',
      ],
    ] as const) {
      assert.throws(
        () => validateLimitSet(bad),
        (e: unknown) => e instanceof BenchError && e.code === 'EINVAL' && e.field === field,
        `field ${field}`,
      );
    }
  });
});

describe('limits.verdictOf()', () => {
  it('passes only beyond the uncertainty, fails only beyond it, and is indeterminate in between', () => {
    assert.equal(verdictOf(3, 2, false).status, 'pass');
    assert.equal(verdictOf(2, 2, false).status, 'pass');
    assert.equal(verdictOf(1, 2, false).status, 'indeterminate');
    assert.equal(verdictOf(-1, 2, false).status, 'indeterminate');
    assert.equal(verdictOf(-3, 2, false).status, 'fail');
  });

  it('never fails on a floor reading: the floor straddling the limit is indeterminate', () => {
    assert.equal(verdictOf(3, 1, true).status, 'pass');
    const v = verdictOf(-10, 1, true);
    assert.equal(v.status, 'indeterminate');
    assert.match(v.reason, /floor/);
  });
});

describe('limits.evaluateSet()', () => {
  const ctx = { carrierHz: 7.1e6 };
  const session = (carrierDbm: number, extra: PointLevel[] = []) =>
    analyseSession([pt('upper', 24), pt('lower', 24), pt('carrier', carrierDbm), ...extra]);

  it('passes, fails or leaves indeterminate the common-practice carrier figure', () => {
    const set = preset('preset:common-practice');
    // PEP = 30.02 dBm; the carrier 40 dB below PEP is at -9.98 dBm.
    const pass = evaluateSet(set, session(-20), ctx);
    assert.equal(pass.overall, 'pass', JSON.stringify(pass));
    assert.equal(pass.outcomes[1].status, 'not-applicable', 'the opposite-sideband rule is SSB only');
    assert.equal(evaluateSet(set, session(0), ctx).overall, 'fail');
    const close = evaluateSet(set, session(-10.5), ctx);
    assert.equal(close.overall, 'indeterminate');
    assert.match(close.outcomes[0].reason, /within the ±/);
  });

  it('never passes a suppression whose reference tones sat at the receiver floor', () => {
    const atFloor = analyseSession([
      pt('upper', -60, { floorLimited: true }),
      pt('lower', -60, { floorLimited: true }),
      pt('carrier', -140, { floorLimited: true }),
      pt('h2', -120, { freqHz: 14.2e6 }),
    ]);
    const carrier = evaluateSet(preset('preset:common-practice'), atFloor, ctx);
    assert.equal(carrier.outcomes[0].status, 'indeterminate', JSON.stringify(carrier.outcomes[0]));
    assert.equal(carrier.outcomes[0].measured, 'not stated (reference at the floor)');
    assert.match(carrier.outcomes[0].reason, /tone read at the receiver floor.*is the transmitter keyed/);
    assert.notEqual(carrier.overall, 'pass');
    // A harmonic limit relative to the fundamental cannot be placed either.
    const spur = evaluateSet(preset('preset:us-97.307d'), atFloor, ctx);
    assert.equal(spur.outcomes[0].status, 'indeterminate', JSON.stringify(spur.outcomes[0]));
    assert.notEqual(spur.overall, 'pass');
  });

  it('checks each kept harmonic against 47 CFR 97.307(d) and leaves 97.307(e) not applicable at 7 MHz', () => {
    const f = session(-40, [pt('h2', -18, { freqHz: 14.2e6 }), pt('h3', -30, { freqHz: 21.3e6 })]);
    const d = evaluateSet(preset('preset:us-97.307d'), f, ctx);
    assert.equal(d.outcomes.length, 2, 'one check per harmonic');
    // Mean power 27.01 dBm -> spur at most -15.99 dBm; the 2nd harmonic at -18 dBm is 2.0 dB inside.
    near(d.outcomes[0].marginDb!, f.mean!.dbm - 43 + 18, 1e-9);
    assert.match(d.outcomes[0].label, /2nd harmonic ≤ −16\.0 dBm/);
    // The verdict states how little of "any spurious emission" was measured.
    assert.match(d.reason, /only the 2nd, 3rd harmonic were measured, other spurious emissions were not/);
    const e = evaluateSet(preset('preset:us-97.307e'), f, ctx);
    assert.equal(e.overall, 'not-applicable');
    assert.match(e.outcomes[0].reason, /below 30 MHz/);
  });

  it('says which checks could not be made for want of a reading', () => {
    const d = evaluateSet(preset('preset:us-97.307d'), session(-40), ctx);
    assert.equal(d.overall, 'indeterminate');
    assert.equal(d.outcomes[0].status, 'not-measured');
    assert.match(d.outcomes[0].reason, /harmonic/);
  });

  it('uses the floor bound: a carrier at the floor shallower than the limit is indeterminate, not fail', () => {
    const set = validateLimitSet({
      id: 'u',
      name: 'deep',
      rules: [{ metric: 'carrier', reference: 'tone', minDb: 90 }],
    });
    const f = session(-60, [pt('floor', -61)]);
    const o = evaluateSet(set, f, ctx);
    assert.equal(o.overall, 'indeterminate');
    assert.match(o.outcomes[0].measured, /^≥ 84\.0/);
  });
});
