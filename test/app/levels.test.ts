import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import {
  BOLTZMANN,
  LEVEL_UNITS,
  dbmToDbuv,
  dbmToS,
  dbmToVrms,
  dbmToWatts,
  dbuvToDbm,
  formatS,
  fromDbm,
  iaruR1Scale,
  noiseCorrectedDb,
  parseLevel,
  parseUnit,
  powerSumDb,
  sTableScale,
  sToDbm,
  thermalNoiseDbm,
  toDbm,
  vrmsToDbm,
  wattsToDbm,
} from '../../app/levels';

/** |actual - expected| <= tol, with a message that shows both. */
function near(actual: number, expected: number, tol: number, what = ''): void {
  assert.ok(
    Math.abs(actual - expected) <= tol,
    `${what} expected ${expected} +/- ${tol}, got ${actual} (off by ${actual - expected})`,
  );
}

/** Throws BenchError with this code and a field matching `field`. */
function throwsBench(fn: () => unknown, code: string, field: string | RegExp): BenchError {
  let caught: unknown;
  try {
    fn();
  } catch (e) {
    caught = e;
  }
  assert.ok(caught instanceof BenchError, `expected a BenchError, got ${String(caught)}`);
  assert.equal(caught.code, code);
  if (typeof field === 'string') assert.equal(caught.field, field);
  else assert.match(caught.field ?? '', field);
  return caught;
}

const HF = iaruR1Scale(14.2e6);
const VHF = iaruR1Scale(145e6);

describe('levels.dbmToWatts() / wattsToDbm()', () => {
  it('converts the decade points exactly', () => {
    near(dbmToWatts(0), 1e-3, 1e-18); // definition of dBm
    near(dbmToWatts(30), 1, 1e-15); // definition of dBm
    near(dbmToWatts(50), 100, 1e-12); // definition of dBm
    near(wattsToDbm(100), 50, 1e-12); // definition of dBm
    near(wattsToDbm(1e-3), 0, 1e-12); // definition of dBm
  });

  it('gives -Infinity for zero power and 0 W for -Infinity dBm', () => {
    assert.equal(wattsToDbm(0), -Infinity);
    assert.equal(dbmToWatts(-Infinity), 0);
  });

  it('refuses a negative or non-finite power naming it', () => {
    const e = throwsBench(() => wattsToDbm(-1), 'EINVAL', 'watts');
    assert.match(e.message, /negative/);
    throwsBench(() => wattsToDbm(NaN), 'EINVAL', 'watts');
    throwsBench(() => dbmToWatts(NaN), 'EINVAL', 'dbm');
  });

  it('round-trips across 300 dB', () => {
    for (let dbm = -200; dbm <= 100; dbm += 7.3) near(wattsToDbm(dbmToWatts(dbm)), dbm, 1e-9);
  });
});

describe('levels.dbmToVrms() / vrmsToDbm()', () => {
  it('matches the 50 ohm values in docs/references.md § Levels', () => {
    near(dbmToVrms(0), 0.2236, 0.00005); // V_rms = sqrt(0.05 * 10^(dBm/10)), computed in docs/references.md
    near(dbmToVrms(-73), 50.06e-6, 0.005e-6); // docs/references.md: -73 dBm = 50.06 uV
    near(dbmToVrms(-107), 0.9988e-6, 0.00005e-6); // docs/references.md: -107 dBm = 0.9988 uV
    near(dbmToVrms(30), 7.071, 0.0005); // docs/references.md: +30 dBm = 7.071 V rms
  });

  it('puts exactly 50 uV at -73.01 dBm (IARU R.1 S9 below 30 MHz)', () => {
    near(vrmsToDbm(50e-6), -73.01, 0.005); // IARU Region 1 Technical Recommendation R.1, derived value in docs/references.md
    near(vrmsToDbm(5e-6), -93.01, 0.005); // IARU R.1: S9 = 5 uV above 144 MHz
  });

  it('uses the given impedance', () => {
    near(dbmToVrms(0, 75), Math.sqrt(0.075), 1e-12); // P = V^2 / R
    near(vrmsToDbm(Math.sqrt(0.075), 75), 0, 1e-12);
  });

  it('gives -Infinity for 0 V and refuses negatives and bad impedances', () => {
    assert.equal(vrmsToDbm(0), -Infinity);
    throwsBench(() => vrmsToDbm(-1e-6), 'EINVAL', 'vrms');
    throwsBench(() => dbmToVrms(0, 0), 'EINVAL', 'z0');
    throwsBench(() => vrmsToDbm(1, -50), 'EINVAL', 'z0');
  });
});

describe('levels.dbmToDbuv() / dbuvToDbm()', () => {
  it('adds 106.99 dB in 50 ohm', () => {
    near(dbmToDbuv(0), 106.99, 0.005); // docs/references.md: 0 dBm = 106.99 dBuV
    near(dbmToDbuv(-73), 33.99, 0.005); // docs/references.md: -73 dBm = 33.99 dBuV
    near(dbuvToDbm(106.99), 0, 0.005);
  });

  it('agrees with the voltage route', () => {
    for (const dbm of [-140, -73, 0, 20]) near(dbmToDbuv(dbm), 20 * Math.log10(dbmToVrms(dbm) / 1e-6), 1e-9);
  });

  it('depends on the impedance', () => {
    near(dbmToDbuv(0, 75), 20 * Math.log10(Math.sqrt(0.075) / 1e-6), 1e-9); // 0 dBm across 75 ohm
  });
});

describe('levels.powerSumDb()', () => {
  it('reads a signal equal to the noise as +3.01 dB', () => {
    near(powerSumDb(-120, -120), -120 + 3.01, 0.005); // docs/references.md § Levels: power sum, +3.01 dB
  });

  it('sums any number of levels in power', () => {
    near(powerSumDb(-10, -10, -10, -10), -10 + 10 * Math.log10(4), 1e-12); // 10*log10(sum 10^(L/10))
    near(powerSumDb(0, -10), 10 * Math.log10(1.1), 1e-12);
    near(powerSumDb(-50), -50, 1e-12);
  });

  it('keeps precision far below the largest term and ignores -Infinity', () => {
    near(powerSumDb(-400, -400), -400 + 10 * Math.log10(2), 1e-9);
    assert.equal(powerSumDb(-20, -Infinity), -20);
    assert.equal(powerSumDb(), -Infinity);
    assert.equal(powerSumDb(-Infinity, -Infinity), -Infinity);
  });

  it('refuses NaN naming its position', () => {
    throwsBench(() => powerSumDb(-10, NaN), 'EINVAL', 'levels[1]');
  });
});

describe('levels.noiseCorrectedDb()', () => {
  it('undoes a power sum', () => {
    const m = powerSumDb(-100, -105);
    near(noiseCorrectedDb(m, -105) as number, -100, 1e-9); // docs/references.md: 10*log10(10^(m/10) - 10^(n/10))
    near(noiseCorrectedDb(-117, -120) as number, 10 * Math.log10(10 ** -11.7 - 10 ** -12), 1e-9);
  });

  it('takes 3.01 dB off a reading 3.01 dB above the noise', () => {
    near(noiseCorrectedDb(-116.99, -120) as number, -120, 0.005); // docs/references.md: equal signal and noise reads +3.01 dB
  });

  it('is nearly the reading when the noise is far below', () => {
    near(noiseCorrectedDb(-20, -120) as number, -20, 1e-9);
    assert.equal(noiseCorrectedDb(-20, -Infinity), -20);
  });

  it('returns null when the reading is not above the noise', () => {
    assert.equal(noiseCorrectedDb(-120, -120), null);
    assert.equal(noiseCorrectedDb(-125, -120), null);
  });
});

describe('levels.thermalNoiseDbm()', () => {
  it('matches kT and kTB in docs/references.md § Thermal noise', () => {
    assert.equal(BOLTZMANN, 1.380649e-23); // SI 2019 exact value
    near(thermalNoiseDbm(1), -173.98, 0.005); // docs/references.md: kT at 290 K = -173.98 dBm/Hz
    near(thermalNoiseDbm(500), -146.99, 0.005); // docs/references.md: kTB 500 Hz
    near(thermalNoiseDbm(2400), -140.17, 0.005); // docs/references.md: kTB 2.4 kHz
    near(thermalNoiseDbm(3000), -139.2, 0.005); // docs/references.md: kTB 3 kHz
  });

  it('adds the noise figure and scales with temperature', () => {
    near(thermalNoiseDbm(2400, 8), -140.17 + 8, 0.005); // docs/references.md: floor = kTB + NF
    near(thermalNoiseDbm(1, 0, 580), -173.98 + 10 * Math.log10(2), 0.005); // kT doubles with T
  });

  it('refuses a bandwidth, noise figure or temperature that makes no sense', () => {
    throwsBench(() => thermalNoiseDbm(0), 'EINVAL', 'bandwidthHz');
    throwsBench(() => thermalNoiseDbm(2400, -1), 'EINVAL', 'noiseFigureDb');
    throwsBench(() => thermalNoiseDbm(2400, 0, 0), 'EINVAL', 'tempK');
  });
});

describe('levels.toDbm() / fromDbm()', () => {
  it('converts every unit and back', () => {
    const cases: [number, string, number][] = [
      [-73, 'dBm', -73],
      [-30, 'dBW', 0],
      [1, 'W', 30],
      [1, 'mW', 0],
      [1000, 'uW', 0],
      [7.0710678, 'V', 30], // docs/references.md: +30 dBm = 7.071 V rms
      [223.607, 'mV', 0], // docs/references.md: 0 dBm = 223.6 mV rms
      [50.06, 'uV', -73], // docs/references.md: -73 dBm = 50.06 uV
      [106.99, 'dBuV', 0], // docs/references.md: 0 dBm = 106.99 dBuV
    ];
    for (const [value, unit, dbm] of cases) {
      near(toDbm(value, unit), dbm, 0.005, unit);
      near(fromDbm(toDbm(value, unit), unit), value, Math.abs(value) * 1e-9, `${unit} round trip`);
    }
    assert.deepEqual([...LEVEL_UNITS], ['dBm', 'dBW', 'W', 'mW', 'uW', 'V', 'mV', 'uV', 'dBuV']);
  });

  it('accepts the micro sign, either code point, and forgives case', () => {
    near(toDbm(50, 'µV'), -73.01, 0.005); // U+00B5
    near(toDbm(50, 'μV'), -73.01, 0.005); // U+03BC
    near(toDbm(50, 'dBµV'), 50 - 106.99, 0.005);
    near(toDbm(-73, 'dbm'), -73, 0);
    near(toDbm(2, 'mw'), wattsToDbm(2e-3), 1e-12);
  });

  it('refuses an unknown unit naming the field and listing the units', () => {
    const e = throwsBench(() => toDbm(1, 'furlong', 'carrier'), 'EINVAL', 'carrier');
    assert.match(e.message, /furlong/);
    for (const u of LEVEL_UNITS) assert.ok(e.message.includes(u), `message lists ${u}`);
    throwsBench(() => fromDbm(0, 'dBu'), 'EINVAL', 'unit');
  });

  it('does not read MW or MV as milli', () => {
    const e = throwsBench(() => parseUnit('MW'), 'EINVAL', 'unit');
    assert.match(e.message, /mega-watts.*mW/);
  });

  it('refuses negative linear quantities and non-finite values naming the field', () => {
    throwsBench(() => toDbm(-5, 'uV', 'tone'), 'EINVAL', 'tone');
    throwsBench(() => toDbm(NaN, 'dBm', 'tone'), 'EINVAL', 'tone');
    assert.equal(toDbm(0, 'W'), -Infinity);
  });
});

describe('levels.iaruR1Scale()', () => {
  it('sets S9 by band and 6 dB per S-unit', () => {
    // IARU Region 1 Technical Recommendation R.1: S9 = -73 dBm below 30 MHz, -93 dBm above 144 MHz, 6 dB/S
    assert.equal(iaruR1Scale(1.8e6).s9Dbm, -73);
    assert.equal(iaruR1Scale(29.999e6).s9Dbm, -73);
    assert.equal(iaruR1Scale(144e6).s9Dbm, -93);
    assert.equal(iaruR1Scale(432e6).s9Dbm, -93);
    assert.equal(HF.dbPerS, 6);
    assert.equal(VHF.dbPerS, 6);
  });

  it('lets the user choose between 30 and 144 MHz, HF by default', () => {
    // IARU R.1 sets no value for 30-144 MHz
    assert.equal(iaruR1Scale(50.1e6).s9Dbm, -73);
    assert.equal(iaruR1Scale(30e6, 'vhf').s9Dbm, -93);
    assert.equal(iaruR1Scale(70.2e6, 'vhf').s9Dbm, -93);
    assert.match(iaruR1Scale(50.1e6, 'vhf').name, /chosen for 30-144 MHz/);
  });

  it('refuses a bad frequency or choice', () => {
    throwsBench(() => iaruR1Scale(0), 'EINVAL', 'freq_hz');
    throwsBench(() => iaruR1Scale(50e6, 'uhf' as 'hf'), 'EINVAL', 'between30and144MHz');
  });
});

describe('levels.sToDbm()', () => {
  it('matches the R.1 values in docs/references.md', () => {
    assert.equal(sToDbm(9, 0, HF), -73); // IARU R.1
    assert.equal(sToDbm(1, 0, HF), -121); // IARU R.1 derived: S1 = -121 dBm
    assert.equal(sToDbm(8, 0, HF), -79); // IARU R.1 derived: S8 = -79 dBm
    assert.equal(sToDbm(9, 10, HF), -63); // IARU R.1 derived: S9+10 dB = -63 dBm
    assert.equal(sToDbm(9, 0, VHF), -93); // IARU R.1: S9 = -93 dBm above 144 MHz
    assert.equal(sToDbm(7, 0, VHF), -105); // IARU R.1: 6 dB per S-unit
  });

  it('takes fractional S-units', () => {
    assert.equal(sToDbm(7.5, 0, HF), -82);
  });

  it('refuses dB over anything but S9, and S-units out of 0..9', () => {
    throwsBench(() => sToDbm(7, 10, HF), 'EINVAL', 'overDb');
    throwsBench(() => sToDbm(10, 0, HF), 'EINVAL', 's');
    throwsBench(() => sToDbm(-1, 0, HF), 'EINVAL', 's');
    throwsBench(() => sToDbm(9, -3, HF), 'EINVAL', 'overDb');
  });
});

describe('levels.dbmToS() / formatS()', () => {
  it('inverts sToDbm on the R.1 scale', () => {
    for (const [s, over] of [
      [1, 0],
      [4.5, 0],
      [9, 0],
      [9, 23],
    ]) {
      const r = dbmToS(sToDbm(s, over, HF), HF);
      near(r.s, s, 1e-12);
      near(r.overDb, over, 1e-12);
    }
  });

  it('floors at S0', () => {
    assert.deepEqual(dbmToS(-200, HF), { s: 0, overDb: 0 });
    assert.equal(formatS(-200, HF), 'S0');
  });

  it('writes whole S-units and whole dB over S9', () => {
    assert.equal(formatS(-85, HF), 'S7'); // IARU R.1: S7 = S9 - 12 dB
    assert.equal(formatS(-86.5, HF), 'S7'); // S6.75 rounds to S7
    assert.equal(formatS(-73, HF), 'S9');
    assert.equal(formatS(-74, HF), 'S9'); // S8.83 rounds to S9
    assert.equal(formatS(-72.7, HF), 'S9'); // 0.3 dB over rounds away
    assert.equal(formatS(-61, HF), 'S9+12');
    assert.equal(formatS(-63, HF), 'S9+10'); // IARU R.1 derived: S9+10 dB = -63 dBm
    assert.equal(formatS(-105, VHF), 'S7');
    assert.equal(formatS(-121, HF), 'S1'); // IARU R.1 derived: S1 = -121 dBm
  });
});

describe('levels.sTableScale()', () => {
  // An invented receiver whose S-units are 4 dB apart, with marks over S9 that read 2 dB generous.
  const table = sTableScale([
    { s: 1, dbm: -105 },
    { s: 5, dbm: -89 },
    { s: 9, dbm: -73 },
    { s: 9, overDb: 20, dbm: -55 },
    { s: 9, overDb: 40, dbm: -35 },
  ]);

  it('reports S9 and the mean step', () => {
    assert.equal(table.s9Dbm, -73);
    assert.equal(table.dbPerS, 4);
  });

  it('interpolates between rows both ways', () => {
    assert.equal(sToDbm(3, 0, table), -97);
    assert.equal(sToDbm(9, 10, table), -64);
    assert.equal(sToDbm(9, 30, table), -45);
    assert.deepEqual(dbmToS(-97, table), { s: 3, overDb: 0 });
    assert.deepEqual(dbmToS(-64, table), { s: 9, overDb: 10 });
    assert.equal(formatS(-55, table), 'S9+20');
    assert.equal(formatS(-81, table), 'S7');
  });

  it('extends the first segment below and counts dB over the last row', () => {
    assert.equal(sToDbm(0, 0, table), -109);
    assert.deepEqual(dbmToS(-109, table), { s: 0, overDb: 0 });
    assert.deepEqual(dbmToS(-200, table), { s: 0, overDb: 0 });
    assert.equal(sToDbm(9, 50, table), -25);
    assert.deepEqual(dbmToS(-25, table), { s: 9, overDb: 50 });
  });

  it('names the offending row when the table is not strictly monotonic', () => {
    const rows = [
      { s: 1, dbm: -105 },
      { s: 3, dbm: -97 },
      { s: 5, dbm: -89 },
      { s: 7, dbm: -90 },
      { s: 9, dbm: -73 },
    ];
    const e = throwsBench(() => sTableScale(rows), 'EINVAL', 'sTable[3].dbm');
    assert.match(e.message, /-90 dBm for S7 is not above -89 dBm for S5/);
    throwsBench(
      () =>
        sTableScale([
          { s: 1, dbm: -105 },
          { s: 1, dbm: -100 },
          { s: 9, dbm: -73 },
        ]),
      'EINVAL',
      'sTable[1].s',
    );
    throwsBench(
      () =>
        sTableScale([
          { s: 1, dbm: -105 },
          { s: 9, overDb: 20, dbm: -55 },
          { s: 9, overDb: 10, dbm: -50 },
        ]),
      'EINVAL',
      'sTable[2].overDb',
    );
  });

  it('needs an S9 row, a row below it, and dB over S9 only on S9 rows', () => {
    throwsBench(
      () =>
        sTableScale([
          { s: 1, dbm: -105 },
          { s: 8, dbm: -80 },
        ]),
      'EINVAL',
      'sTable',
    );
    throwsBench(
      () =>
        sTableScale([
          { s: 9, dbm: -73 },
          { s: 9, overDb: 20, dbm: -53 },
        ]),
      'EINVAL',
      'sTable',
    );
    throwsBench(
      () =>
        sTableScale([
          { s: 7, overDb: 10, dbm: -80 },
          { s: 9, dbm: -73 },
        ]),
      'EINVAL',
      'sTable[0].overDb',
    );
    throwsBench(() => sTableScale([{ s: 12, dbm: -60 }]), 'EINVAL', 'sTable[0].s');
  });
});

describe('levels.parseLevel()', () => {
  it('reads numbers with units', () => {
    assert.equal(parseLevel('-73 dBm', 'carrier'), -73);
    assert.equal(parseLevel('  -73dBm ', 'carrier'), -73);
    assert.equal(parseLevel('\u221273 dBm', 'carrier'), -73); // a typographic minus
    near(parseLevel('50 uV', 'carrier'), -73.01, 0.005); // docs/references.md: 50 uV = -73.01 dBm
    near(parseLevel('50µV', 'carrier'), -73.01, 0.005);
    near(parseLevel('7.07 V', 'carrier'), 30, 0.005); // docs/references.md: +30 dBm = 7.071 V rms
    near(parseLevel('1e-3 W', 'carrier'), 0, 1e-12);
    assert.equal(parseLevel('+10 dBW', 'carrier'), 40);
  });

  it('reads S-units with a scale', () => {
    assert.equal(parseLevel('S9+10', 'carrier', HF), -63); // IARU R.1 derived: S9+10 dB = -63 dBm
    assert.equal(parseLevel('s9 + 10 dB', 'carrier', HF), -63);
    assert.equal(parseLevel('S7', 'carrier', HF), -85); // IARU R.1: S9 - 2 x 6 dB
    assert.equal(parseLevel('S9', 'carrier', VHF), -93); // IARU R.1: S9 above 144 MHz
  });

  it('refuses S-units without a scale, and impossible S-readings', () => {
    const e = throwsBench(() => parseLevel('S9+10', 'carrier'), 'EINVAL', 'carrier');
    assert.match(e.message, /scale/);
    throwsBench(() => parseLevel('S7+10', 'carrier', HF), 'EINVAL', 'carrier');
    throwsBench(() => parseLevel('S12', 'carrier', HF), 'EINVAL', 'carrier');
    throwsBench(() => parseLevel('S9-6', 'carrier', HF), 'EINVAL', 'carrier');
  });

  it('refuses a bare number, an unknown unit and nonsense, naming the field', () => {
    const bare = throwsBench(() => parseLevel('-73', 'floor'), 'EINVAL', 'floor');
    assert.match(bare.message, /no unit/);
    const unit = throwsBench(() => parseLevel('-73 dBx', 'floor'), 'EINVAL', 'floor');
    assert.match(unit.message, /dBx/);
    throwsBench(() => parseLevel('loud', 'floor'), 'EINVAL', 'floor');
    throwsBench(() => parseLevel('', 'floor'), 'EINVAL', 'floor');
  });
});
