import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import {
  CalibrationSchema,
  DEFAULT_TABLE_U_DB,
  R1_DEFAULT_U_DB,
  applyCalibration,
  findBand,
  fitCalibrationFromInjections,
  iaruR1Calibration,
  validateCalibration,
  type Calibration,
} from '../../app/calibration';
import { iaruR1Scale, sToDbm } from '../../app/levels';

function throwsBench(fn: () => unknown, code: string, field: string): BenchError {
  let caught: unknown;
  try {
    fn();
  } catch (e) {
    caught = e;
  }
  assert.ok(caught instanceof BenchError, `expected a BenchError, got ${String(caught)}`);
  assert.equal(caught.code, code, caught.message);
  assert.equal(caught.field, field, caught.message);
  return caught;
}

// An invented receiver's table: A/D counts against dBm, measured on 40 m and on 20 m.
const TABLE = {
  name: 'bench receiver, counts',
  quantity: 'raw',
  bands: [
    {
      fromHz: 6.5e6,
      toHz: 7.5e6,
      points: [
        { raw: 10, dbm: -120 },
        { raw: 60, dbm: -100 },
        { raw: 160, dbm: -60 },
        { raw: 200, dbm: -30 },
      ],
    },
    {
      fromHz: 13.5e6,
      toHz: 14.5e6,
      points: [
        { raw: 20, dbm: -118 },
        { raw: 220, dbm: -28 },
      ],
    },
  ],
  madeAt: '2024-05-01',
};

function clone<T>(x: T): T {
  return JSON.parse(JSON.stringify(x)) as T;
}

describe('calibration.validateCalibration()', () => {
  it('accepts a well-formed table and returns it', () => {
    const cal = validateCalibration(TABLE);
    assert.equal(cal.name, 'bench receiver, counts');
    assert.equal(cal.bands.length, 2);
    assert.equal(cal.bands[0].points[3].dbm, -30);
  });

  it('names the point that breaks monotonic dBm', () => {
    const bad = clone(TABLE);
    bad.bands[0].points[3].dbm = -65;
    const e = throwsBench(() => validateCalibration(bad), 'EINVAL', 'bands[0].points[3].dbm');
    assert.match(e.message, /-65 dBm \(raw 200\) is not above -60 dBm \(raw 160\)/);
  });

  it('names the point that breaks rising raw', () => {
    const bad = clone(TABLE);
    bad.bands[1].points[1].raw = 20;
    throwsBench(() => validateCalibration(bad), 'EINVAL', 'bands[1].points[1].raw');
  });

  it('needs two points per band and at least one band', () => {
    const bad = clone(TABLE);
    bad.bands[1].points = [{ raw: 1, dbm: -100 }];
    const e = throwsBench(() => validateCalibration(bad), 'EINVAL', 'bands[1].points');
    assert.match(e.message, /at least 2 points/);
    throwsBench(() => validateCalibration({ ...TABLE, bands: [] }), 'EINVAL', 'bands');
  });

  it('needs fromHz below toHz', () => {
    const bad = clone(TABLE);
    bad.bands[1].toHz = 13e6;
    throwsBench(() => validateCalibration(bad), 'EINVAL', 'bands[1].toHz');
  });

  it('refuses overlapping bands but allows touching ones', () => {
    const bad = clone(TABLE);
    bad.bands[1].fromHz = 7.4e6;
    const e = throwsBench(() => validateCalibration(bad), 'EINVAL', 'bands[1].fromHz');
    assert.match(e.message, /overlaps bands\[0\]/);
    const touching = clone(TABLE);
    touching.bands[1].fromHz = 7.5e6;
    assert.equal(validateCalibration(touching).bands[1].fromHz, 7.5e6);
  });

  it('finds overlap whatever the order of the bands', () => {
    const bad = clone(TABLE);
    bad.bands.reverse();
    bad.bands[0].fromHz = 7e6; // 20 m table now starts inside the 40 m band, listed second
    throwsBench(() => validateCalibration(bad), 'EINVAL', 'bands[0].fromHz');
  });

  it('names shape errors with their path', () => {
    throwsBench(() => validateCalibration({ ...TABLE, quantity: 'volts' }), 'EINVAL', 'quantity');
    throwsBench(() => validateCalibration({ ...TABLE, name: '  ' }), 'EINVAL', 'name');
    const bad = clone(TABLE) as unknown as { bands: { points: { dbm: unknown }[] }[] };
    bad.bands[0].points[2].dbm = '-60';
    throwsBench(() => validateCalibration(bad), 'EINVAL', 'bands[0].points[2].dbm');
    throwsBench(() => validateCalibration({ ...TABLE, madeAt: 'yesterday' }), 'EINVAL', 'madeAt');
    throwsBench(() => validateCalibration({ ...TABLE, madeAt: '2024-02-30T25:00:00Z' }), 'EINVAL', 'madeAt');
    throwsBench(() => validateCalibration({ ...TABLE, madeAt: '2024-02-30' }), 'EINVAL', 'madeAt');
    throwsBench(() => validateCalibration({ ...TABLE, madeAt: '2023-02-29' }), 'EINVAL', 'madeAt');
    throwsBench(() => validateCalibration({ ...TABLE, uDb: -1 }), 'EINVAL', 'uDb');
    throwsBench(() => validateCalibration(null), 'EINVAL', '(input)');
  });

  it('catches a misspelled key', () => {
    const bad = clone(TABLE) as unknown as { bands: Record<string, unknown>[] };
    bad.bands[0].fromHZ = 1;
    const e = throwsBench(() => validateCalibration(bad), 'EINVAL', 'bands[0]');
    assert.match(e.message, /"fromHZ"/);
  });

  it('accepts ISO dates and date-times with a zone', () => {
    for (const d of [
      '2024-02-29',
      '2024-05-01T09:30:00Z',
      '2024-05-01T09:30:00.123+02:00',
      '2024-05-01T23:59-05:30',
    ]) {
      assert.equal(validateCalibration({ ...TABLE, madeAt: d }).madeAt, d);
    }
  });
});

describe('calibration.applyCalibration()', () => {
  const cal = validateCalibration(TABLE);

  it('interpolates piecewise-linearly inside a band', () => {
    assert.deepEqual(applyCalibration(cal, 110, 7.1e6), {
      dbm: -80,
      uDb: DEFAULT_TABLE_U_DB,
      clamped: false,
      band: 0,
    });
    assert.equal(applyCalibration(cal, 35, 7.1e6).dbm, -110);
    assert.equal(applyCalibration(cal, 180, 7.1e6).dbm, -45);
    assert.equal(applyCalibration(cal, 120, 14.2e6).dbm, -73);
  });

  it('returns table points exactly and unclamped', () => {
    for (const p of cal.bands[0].points) {
      const r = applyCalibration(cal, p.raw, 7e6);
      assert.equal(r.dbm, p.dbm);
      assert.equal(r.clamped, false);
    }
  });

  it('clamps at both ends and says so', () => {
    assert.deepEqual(applyCalibration(cal, 0, 7.1e6), {
      dbm: -120,
      uDb: DEFAULT_TABLE_U_DB,
      clamped: true,
      band: 0,
    });
    assert.deepEqual(applyCalibration(cal, 255, 7.1e6), {
      dbm: -30,
      uDb: DEFAULT_TABLE_U_DB,
      clamped: true,
      band: 0,
    });
  });

  it('uses the band holding the frequency, edges inclusive', () => {
    assert.equal(applyCalibration(cal, 100, 6.5e6).band, 0);
    assert.equal(applyCalibration(cal, 100, 7.5e6).band, 0);
    assert.equal(applyCalibration(cal, 100, 13.5e6).band, 1);
  });

  it('refuses a frequency outside every band, naming freq_hz and the bands', () => {
    const e = throwsBench(() => applyCalibration(cal, 100, 10.1e6), 'EINVAL', 'freq_hz');
    assert.match(e.message, /10\.1 MHz is outside calibration bands/);
    assert.match(e.message, /6\.5 MHz to 7\.5 MHz/);
  });

  it('refuses a raw value that is not a number', () => {
    throwsBench(() => applyCalibration(cal, NaN, 7e6), 'EINVAL', 'raw');
  });

  it('carries the table uncertainty', () => {
    assert.equal(applyCalibration({ ...cal, uDb: 1.2 }, 100, 7e6).uDb, 1.2);
  });
});

describe('calibration.iaruR1Calibration()', () => {
  const hf = iaruR1Calibration();
  const vhf = iaruR1Calibration('vhf');

  it('is a storable, valid calibration of rig STRENGTH', () => {
    assert.equal(hf.quantity, 'strength-db');
    assert.deepEqual(validateCalibration(JSON.parse(JSON.stringify(hf))), hf);
    assert.equal(CalibrationSchema.safeParse(vhf).success, true);
    assert.equal(hf.uDb, R1_DEFAULT_U_DB);
  });

  it('puts S9 at -73 dBm below 30 MHz and -93 dBm from 144 MHz', () => {
    // IARU Region 1 Technical Recommendation R.1: S9 = -73 dBm below 30 MHz, -93 dBm above 144 MHz
    assert.equal(applyCalibration(hf, 0, 14.2e6).dbm, -73);
    assert.equal(applyCalibration(hf, 0, 144e6).dbm, -93);
    assert.equal(applyCalibration(hf, 0, 432.2e6).dbm, -93);
  });

  it('reads STRENGTH as dB relative to S9, 6 dB per S-unit', () => {
    // Rig-control STRENGTH: S9 -> 0, S7 -> -12 (docs/references.md § Rig-control daemon); IARU R.1: 6 dB per S-unit
    assert.equal(applyCalibration(hf, -12, 7.1e6).dbm, -85);
    assert.equal(applyCalibration(hf, -48, 7.1e6).dbm, -121); // IARU R.1 derived: S1 = -121 dBm
    assert.equal(applyCalibration(hf, -6, 7.1e6).dbm, -79); // IARU R.1 derived: S8 = -79 dBm
    assert.equal(applyCalibration(hf, 10, 7.1e6).dbm, -63); // IARU R.1 derived: S9+10 dB = -63 dBm
    for (const f of [3.6e6, 14.2e6, 145e6]) {
      for (const s of [1, 4, 9]) {
        assert.equal(applyCalibration(hf, (s - 9) * 6, f).dbm, sToDbm(s, 0, iaruR1Scale(f)));
      }
    }
  });

  it('lets the user choose S9 for 30-144 MHz', () => {
    // IARU R.1 sets no value for 30-144 MHz
    assert.equal(applyCalibration(hf, 0, 50.1e6).dbm, -73);
    assert.equal(applyCalibration(vhf, 0, 50.1e6).dbm, -93);
    assert.equal(applyCalibration(vhf, 0, 29e6).dbm, -73);
  });

  it('clamps beyond S0 and S9+60', () => {
    assert.deepEqual(applyCalibration(hf, -60, 7e6), { dbm: -127, uDb: 2, clamped: true, band: 0 });
    assert.deepEqual(applyCalibration(hf, 70, 7e6), { dbm: -13, uDb: 2, clamped: true, band: 0 });
  });

  it('refuses a bad choice', () => {
    throwsBench(() => iaruR1Calibration('uhf' as 'hf'), 'EINVAL', 'between30and144MHz');
  });
});

describe('calibration.findBand()', () => {
  it('gives a shared edge to the band above', () => {
    const cal = iaruR1Calibration();
    assert.equal(findBand(cal, 30e6), 1);
    assert.equal(findBand(cal, 144e6), 2);
    assert.equal(findBand(cal, 29.999999e6), 0);
    assert.equal(findBand(cal, 1e15), -1);
  });
});

describe('calibration.fitCalibrationFromInjections()', () => {
  // A generator stepped in 10 dB steps through a 20 dB pad at 7.1 MHz, entered out of order.
  const injections = [
    { raw: 130, generatorDbm: -60, padDb: 20, freqHz: 7.1e6 },
    { raw: 40, generatorDbm: -90, padDb: 20, freqHz: 7.1e6 },
    { raw: 100, generatorDbm: -70, padDb: 20, freqHz: 7.1e6 },
    { raw: 70, generatorDbm: -80, padDb: 20, freqHz: 7.1e6 },
  ];

  it('builds a sorted single-band table with dBm = generator - pad', () => {
    const cal: Calibration = fitCalibrationFromInjections(injections, 'bench receiver on 40 m');
    assert.equal(cal.name, 'bench receiver on 40 m');
    assert.equal(cal.quantity, 'raw');
    assert.equal(cal.bands.length, 1);
    assert.deepEqual(cal.bands[0].points, [
      { raw: 40, dbm: -110 },
      { raw: 70, dbm: -100 },
      { raw: 100, dbm: -90 },
      { raw: 130, dbm: -80 },
    ]);
    assert.equal(cal.bands[0].fromHz, 3.55e6);
    assert.equal(cal.bands[0].toHz, 14.2e6);
    assert.match(cal.note ?? '', /4 injections at 7\.1 MHz through 20 dB/);
    assert.equal(applyCalibration(cal, 85, 7.1e6).dbm, -95);
  });

  it('takes the quantity, band and uncertainty when given', () => {
    const cal = fitCalibrationFromInjections(injections, 'strength table', {
      quantity: 'strength-db',
      fromHz: 7e6,
      toHz: 7.2e6,
      uDb: 0.3,
      madeAt: '2024-05-01',
    });
    assert.equal(cal.quantity, 'strength-db');
    assert.deepEqual([cal.bands[0].fromHz, cal.bands[0].toHz], [7e6, 7.2e6]);
    assert.equal(cal.uDb, 0.3);
    throwsBench(
      () => fitCalibrationFromInjections(injections, 'x', { fromHz: 7.2e6, toHz: 7.3e6 }),
      'EINVAL',
      'band',
    );
  });

  it('names the injection whose level does not rise with the reading', () => {
    const bad = clone(injections);
    bad[2].generatorDbm = -85; // raw 100 would now be -105 dBm, below raw 70's -100 dBm
    const e = throwsBench(
      () => fitCalibrationFromInjections(bad, 'x'),
      'EINVAL',
      'injections[2].generatorDbm',
    );
    assert.match(e.message, /-105 dBm at the receiver for raw 100, not above injections\[3\]'s -100 dBm/);
  });

  it('names an injection that repeats a reading', () => {
    const bad = clone(injections);
    bad[3].raw = 40;
    throwsBench(() => fitCalibrationFromInjections(bad, 'x'), 'EINVAL', 'injections[3].raw');
  });

  it('checks every field and the count', () => {
    throwsBench(() => fitCalibrationFromInjections(injections.slice(0, 1), 'x'), 'EINVAL', 'injections');
    const bad = clone(injections);
    bad[1].padDb = -20;
    throwsBench(() => fitCalibrationFromInjections(bad, 'x'), 'EINVAL', 'injections[1].padDb');
    const bad2 = clone(injections);
    bad2[0].freqHz = 0;
    throwsBench(() => fitCalibrationFromInjections(bad2, 'x'), 'EINVAL', 'injections[0].freqHz');
    throwsBench(() => fitCalibrationFromInjections(injections, ''), 'EINVAL', 'name');
  });
});
