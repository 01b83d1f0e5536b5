import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import {
  dbfsToDbm,
  injectionDbfsCalibration,
  profileDbfsCalibration,
  validateDbfsCalibration,
} from '../../app/spectrum/dbfs';
import { BenchError } from '../../app/errors';

describe('spectrum.dbfsToDbm()', () => {
  it('adds the dBm at full scale to a level in dBFS', () => {
    const cal = profileDbfsCalibration(-14, 0.5);
    const r = dbfsToDbm(-40, 0, cal);
    // The calibration's definition: an input of dbmAtFullScale reads 0 dBFS, and dB add.
    assert.equal(r.dbm, -54);
    assert.equal(r.uDb, 0.5);
  });

  it('adds the reading and calibration uncertainties in quadrature', () => {
    const r = dbfsToDbm(-20, 0.3, profileDbfsCalibration(-10, 0.4));
    // GUM (JCGM 100:2008) eq. 10, uncorrelated inputs with unit sensitivity: sqrt(0.3^2 + 0.4^2) = 0.5
    assert.ok(Math.abs(r.uDb - 0.5) < 1e-12);
    assert.equal(r.dbm, -30);
  });

  it('refuses a level that is not a number, naming it', () => {
    assert.throws(
      () => dbfsToDbm(Number.NaN, 0, profileDbfsCalibration(-10, 1)),
      (e: unknown) => e instanceof BenchError && e.field === 'dbfs',
    );
  });
});

describe('spectrum.injectionDbfsCalibration()', () => {
  it('derives dBm at 0 dBFS from a generator level through a pad', () => {
    // -30 dBm through a 20 dB pad is -50 dBm at the input; read at -36 dBFS, so 0 dBFS is -14 dBm.
    const cal = injectionDbfsCalibration({
      generatorDbm: -30,
      generatorUDb: 0.4,
      padDb: 20,
      padUDb: 0.3,
      readDbfs: -36,
      readUDb: 0,
    });
    assert.equal(cal.dbmAtFullScale, -14);
    // GUM (JCGM 100:2008) eq. 10: sqrt(0.4^2 + 0.3^2) = 0.5
    assert.ok(Math.abs(cal.uDb - 0.5) < 1e-12);
    assert.equal(cal.from, 'injection');
    // The round trip: the injected level read back through the figure is the level at the input.
    assert.ok(Math.abs(dbfsToDbm(-36, 0, cal).dbm - -50) < 1e-12);
  });

  it('refuses a negative pad, naming the field', () => {
    assert.throws(
      () =>
        injectionDbfsCalibration({
          generatorDbm: -30,
          generatorUDb: 0.4,
          padDb: -20,
          padUDb: 0.3,
          readDbfs: -36,
          readUDb: 0,
        }),
      (e: unknown) => e instanceof BenchError && e.field === 'padDb',
    );
  });
});

describe('spectrum.validateDbfsCalibration()', () => {
  it('accepts what the app stores and refuses a figure that does not follow from its injection', () => {
    const cal = injectionDbfsCalibration({
      generatorDbm: -30,
      generatorUDb: 0.4,
      padDb: 20,
      padUDb: 0.3,
      readDbfs: -36,
      readUDb: 0,
    });
    assert.deepEqual(validateDbfsCalibration(JSON.parse(JSON.stringify(cal))), cal);
    assert.throws(
      () => validateDbfsCalibration({ ...cal, dbmAtFullScale: -10 }),
      (e: unknown) => e instanceof BenchError && e.field === 'dbmAtFullScale',
    );
    assert.throws(
      () => validateDbfsCalibration({ kind: 'dbfs-offset', dbmAtFullScale: -10, uDb: 1, from: 'guess' }),
      (e: unknown) => e instanceof BenchError && e.field === 'from',
    );
  });
});
