import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import { applyCalibration } from '../../app/calibration';
import {
  UNBALANCED_PEP_RISE_DB,
  assertPlanSafe,
  averagePoint,
  parsePointList,
  planFrequencies,
  planReference,
  planTable,
  validatePlanSpec,
  type PlanPointResult,
  type PointAverage,
} from '../../app/plan';
import { defaultCalibrationFor, iaruR1SUnitCalibration, mergeBand } from '../../app/receiver';

const avg = (dbmDut: number, extra: Partial<PointAverage> = {}): PointAverage => ({
  n: 5,
  dbmRx: dbmDut - 50,
  dbmDut,
  uDb: 0.6,
  uStatDb: 0.1,
  spreadDb: 0.4,
  floorLimited: false,
  overload: false,
  settled: true,
  ...extra,
});
const pt = (idx: number, role: PlanPointResult['role'], a: PointAverage | null): PlanPointResult => ({
  idx,
  role,
  freqHz: 7.1e6,
  state: a ? 'done' : 'pending',
  avg: a,
});

describe('plan.validatePlanSpec()', () => {
  it('fills defaults: carrier, tones and IMD3; 5 readings; 1.5 s settle (3 x the R.1 500 ms decay); tone reference', () => {
    const s = validatePlanSpec({});
    assert.deepEqual(s.points, ['carrier', 'upper', 'lower', 'imd3u', 'imd3l']);
    assert.equal(s.average, 5);
    assert.equal(s.settleMs, 1500); // IARU R.1: meter decay time constant >= 500 ms
    assert.equal(s.reference, 'tone');
  });

  it('names the field of each mistake', () => {
    const f = (input: unknown, field: string) =>
      assert.throws(
        () => validatePlanSpec(input, 'plan'),
        (e: unknown) => e instanceof BenchError && e.field === field,
      );
    f({ points: ['carrier', 'imd9'] }, 'plan.points[1]');
    f({ points: [] }, 'plan.points');
    f({ average: 0 }, 'plan.average');
    f({ average: 2.5 }, 'plan.average');
    f({ settleMs: -1 }, 'plan.settleMs');
    f({ reference: 'unbalanced' }, 'plan.reference');
    f({ points: ['carrier', 'h2'], reference: 'pep' }, 'plan.points');
  });

  it('parses the CLI point list, naming a wrong item', () => {
    assert.deepEqual(parsePointList('carrier, upper,h3'), ['carrier', 'upper', 'h3']);
    assert.throws(() => parsePointList('carrier,imd4'), /--points item 2: unknown point "imd4"/);
  });
});

describe('plan.planFrequencies()', () => {
  it('puts tones at carrier +/- f, IMD3 at +/- 3f, IMD5 at +/- 5f, harmonics at n x carrier', () => {
    assert.deepEqual(
      planFrequencies(['carrier', 'upper', 'lower', 'imd3u', 'imd3l', 'imd5u', 'h2', 'h5'], 7.1e6, 1000),
      [7.1e6, 7.101e6, 7.099e6, 7.103e6, 7.097e6, 7.105e6, 14.2e6, 35.5e6],
    );
  });
});

describe('plan.assertPlanSafe()', () => {
  it('adds 20*log10(3/2) = 3.52 dB for the unbalanced-carrier reference (computed)', () => {
    assert.ok(Math.abs(UNBALANCED_PEP_RISE_DB - 3.5218) < 1e-4);
    const path = [{ kind: 'pad' as const, db: 40, tolDb: 0 }];
    // 40 dBm (10 W) PEP through 40 dB: 0 dBm at the receiver, rated +2 dBm: fine without the reference.
    assert.equal(assertPlanSafe(40, path, 2, ['carrier', 'upper']).rxDbm, 0);
    assert.throws(
      () => assertPlanSafe(40, path, 2, ['carrier', 'reference']),
      (e: unknown) =>
        e instanceof BenchError && e.code === 'EUNSAFE' && /3\.52 dBm into the receiver/.test(e.message),
    );
  });
});

describe('plan.averagePoint()', () => {
  const r = (dbm: number, extra = {}) => ({
    dbmRx: dbm - 50,
    dbmDut: dbm,
    uDb: 0.5,
    floorLimited: false,
    overload: false,
    settled: true,
    ...extra,
  });

  it('averages in power: -10 and -20 dBm give 10*log10((0.1 + 0.01)/2) = -12.596 dBm (computed)', () => {
    const a = averagePoint([r(-10), r(-20)]);
    assert.ok(Math.abs(a.dbmDut - -12.596) < 1e-3);
    assert.equal(a.n, 2);
    assert.equal(a.spreadDb, 10);
  });

  it("combines the readings' own uncertainty with the scatter of the mean (GUM: type A s/sqrt(n), type B)", () => {
    const a = averagePoint([r(-30), r(-31), r(-29), r(-30)]);
    const s = Math.sqrt(2 / 3); // sample standard deviation of -30, -31, -29, -30
    assert.ok(Math.abs(a.uStatDb - s / 2) < 1e-12);
    assert.ok(Math.abs(a.uDb - Math.hypot(0.5, s / 2)) < 1e-12);
  });

  it('keeps the flags: one reading at the floor makes the mean an upper bound', () => {
    const a = averagePoint([r(-90), r(-91, { floorLimited: true }), r(-90, { settled: false })]);
    assert.equal(a.floorLimited, true);
    assert.equal(a.settled, false);
    assert.throws(() => averagePoint([]), /needs at least one reading/);
  });
});

describe('plan.planReference() and planTable()', () => {
  const points = [
    pt(0, 'carrier', avg(-20)),
    pt(1, 'upper', avg(24)),
    pt(2, 'lower', avg(24)),
    pt(3, 'imd3u', avg(-8)),
    pt(4, 'reference', avg(21)),
    pt(5, 'h2', null),
  ];

  it('tone: the power mean of the two tones', () => {
    const r = planReference(points, 'tone').ref!;
    assert.equal(r.dbm, 24);
    assert.equal(r.label, 'mean of the two tones');
  });

  it('pep: (sqrt(Pu) + sqrt(Pl))^2, 6.02 dB above two equal tones (docs/references.md: PEP = 4 x one tone)', () => {
    const r = planReference(points, 'pep').ref!;
    assert.ok(Math.abs(r.dbm - (24 + 6.0206)) < 1e-3);
    // Unequal tones, 24 and 18 dBm: (sqrt(251.19) + sqrt(63.096))^2 mW = 28.5 dBm (computed).
    const u = planReference([pt(1, 'upper', avg(24)), pt(2, 'lower', avg(18))], 'pep').ref!;
    assert.ok(Math.abs(u.dbm - 10 * Math.log10((Math.sqrt(10 ** 2.4) + Math.sqrt(10 ** 1.8)) ** 2)) < 1e-9);
  });

  it('unbalanced: the reference point itself, which reads exactly 0 dB against itself', () => {
    const t = planTable(points, 'unbalanced', 0.3);
    assert.equal(t.reference?.dbm, 21);
    const ref = t.rows.find((x) => x.role === 'reference')!;
    assert.equal(ref.relDb, 0);
    assert.equal(ref.uRelDb, 0);
    assert.equal(t.rows.find((x) => x.role === 'carrier')!.relDb, -41);
  });

  it('gives each point relative to the reference; pending points and a missing reference stay empty', () => {
    const t = planTable(points, 'tone', 0.3);
    assert.equal(t.rows.find((x) => x.role === 'carrier')!.relDb, -44);
    assert.equal(t.rows.find((x) => x.role === 'imd3u')!.relDb, -32);
    const h2 = t.rows.find((x) => x.role === 'h2')!;
    assert.deepEqual([h2.dbmDut, h2.relDb, h2.state], [null, null, 'pending']);
    // The path's uncertainty (0.3 dB) cancels in a ratio: what stays is sqrt(0.6^2 - 0.3^2) for each level.
    const u1 = Math.sqrt(0.36 - 0.09);
    assert.ok(Math.abs(t.rows.find((x) => x.role === 'carrier')!.uRelDb! - Math.hypot(u1, u1)) < 1e-12);
    const none = planTable([pt(0, 'carrier', avg(-20))], 'tone');
    assert.equal(none.reference, null);
    assert.match(none.reason!, /neither tone/);
    assert.equal(none.rows[0].relDb, null);
  });
});

describe('receiver.defaultCalibrationFor()', () => {
  it('uses IARU R.1 for dB re S9 and for S-units (S9 = -73 dBm below 30 MHz, -93 dBm from 144 MHz, 6 dB per S-unit)', () => {
    assert.equal(applyCalibration(defaultCalibrationFor('strength-db'), 0, 7.1e6).dbm, -73);
    const s = iaruR1SUnitCalibration();
    assert.equal(applyCalibration(s, 9, 7.1e6).dbm, -73);
    assert.equal(applyCalibration(s, 1, 7.1e6).dbm, -121); // docs/references.md: S1 = -121 dBm
    assert.equal(applyCalibration(s, 8, 7.1e6).dbm, -79); // S8 = -79 dBm
    assert.equal(applyCalibration(s, 9, 145e6).dbm, -93);
    assert.equal(applyCalibration(defaultCalibrationFor('dbm'), -42.5, 7.1e6).dbm, -42.5);
  });

  it('refuses a default for raw counts, saying how to calibrate', () => {
    assert.throws(
      () => defaultCalibrationFor('raw'),
      (e: unknown) =>
        e instanceof BenchError && e.field === 'calibration' && /guided calibration/.test(e.message),
    );
  });
});

describe('receiver.mergeBand()', () => {
  const cal = (name: string, bands: [number, number, number][]) => ({
    name,
    quantity: 'strength-db' as const,
    bands: bands.map(([fromHz, toHz, off]) => ({
      fromHz,
      toHz,
      points: [
        { raw: -40, dbm: -113 + off },
        { raw: 20, dbm: -53 + off },
      ],
    })),
  });

  it('puts a band fitted afresh in place, cutting back the bands it overlaps and keeping the rest', () => {
    const old = cal('rx', [
      [0, 5e6, 0],
      [5e6, 20e6, 1],
      [20e6, 30e6, 2],
    ]);
    const m = mergeBand(old, cal('fresh', [[6e6, 10e6, 5]]));
    assert.deepEqual(
      m.bands.map((b) => [b.fromHz, b.toHz, b.points[0].dbm]),
      [
        [0, 5e6, -113],
        [5e6, 6e6, -112],
        [6e6, 10e6, -108],
        [10e6, 20e6, -112],
        [20e6, 30e6, -111],
      ],
    );
    assert.equal(m.name, 'rx');
    // A band covering others whole drops them.
    assert.equal(mergeBand(old, cal('wide', [[0, 40e6, 3]])).bands.length, 1);
    assert.throws(
      () => mergeBand(old, { ...cal('s', [[1e6, 2e6, 0]]), quantity: 's-units' }),
      /maps s-units/,
    );
  });
});
