import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import {
  DEFAULT_PAD_TOL_DB,
  DEFAULT_RESISTOR_TOL_PCT,
  analysePath,
  assertReceiverSafe,
  dutToRx,
  formatPath,
  gammaFromVswr,
  mismatchLimitsDb,
  mismatchLossDb,
  padAttenuationDb,
  parsePathSpec,
  piPad,
  returnLossDb,
  rxToDut,
  tPad,
  validatePath,
  type PathElement,
} from '../../app/path';

function near(actual: number, expected: number, tol: number, what = ''): void {
  assert.ok(
    Math.abs(actual - expected) <= tol,
    `${what} expected ${expected} +/- ${tol}, got ${actual} (off by ${actual - expected})`,
  );
}

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

// docs/references.md § Attenuator pads: dB, pi shunt, pi series, T series, T shunt (printed to 5 significant digits)
const PAD_TABLE: [number, number, number, number, number][] = [
  [3, 292.4, 17.615, 8.55, 141.93],
  [6, 150.48, 37.352, 16.614, 66.931],
  [10, 96.248, 71.151, 25.975, 35.136],
  [20, 61.111, 247.5, 40.909, 10.101],
];

describe('path.piPad() / tPad()', () => {
  it('matches the computed pad table', () => {
    for (const [db, piShunt, piSeries, tSeries, tShunt] of PAD_TABLE) {
      // RF handbook attenuator formulas, computed values in docs/references.md (5 significant digits)
      const pi = piPad(db);
      const t = tPad(db);
      near(pi.shuntOhm, piShunt, piShunt * 6e-5, `${db} dB pi shunt`);
      near(pi.seriesOhm, piSeries, piSeries * 6e-5, `${db} dB pi series`);
      near(t.seriesOhm, tSeries, tSeries * 6e-5, `${db} dB T series`);
      near(t.shuntOhm, tShunt, tShunt * 6e-5, `${db} dB T shunt`);
    }
  });

  it('scales with the system impedance', () => {
    const p50 = piPad(10);
    const p75 = piPad(10, 75);
    near(p75.shuntOhm, p50.shuntOhm * 1.5, 1e-9);
    near(p75.seriesOhm, p50.seriesOhm * 1.5, 1e-9);
  });

  it('refuses 0 dB, negative and absurd pads', () => {
    throwsBench(() => piPad(0), 'EINVAL', 'db');
    throwsBench(() => tPad(-3), 'EINVAL', 'db');
    throwsBench(() => piPad(120), 'EINVAL', 'db');
    throwsBench(() => piPad(10, 0), 'EINVAL', 'z0');
  });
});

describe('path.padAttenuationDb()', () => {
  it('gives back the design value for pads from piPad and tPad', () => {
    for (const db of [0.5, 1, 3, 6, 10, 20, 30, 40, 60, 80]) {
      const pi = piPad(db);
      const t = tPad(db);
      near(padAttenuationDb('pi', pi.shuntOhm, pi.seriesOhm), db, 1e-9, `pi ${db} dB`);
      near(padAttenuationDb('t', t.shuntOhm, t.seriesOhm), db, 1e-9, `T ${db} dB`);
      const pi75 = piPad(db, 75);
      near(padAttenuationDb('pi', pi75.shuntOhm, pi75.seriesOhm, 75), db, 1e-9, `75 ohm pi ${db} dB`);
    }
  });

  it('gives about 20 dB for the rounded table values', () => {
    // RF handbook attenuator formulas, computed values in docs/references.md: 20 dB pi 61.111/247.50, T 40.909/10.101
    near(padAttenuationDb('pi', 61.111, 247.5), 20, 0.001);
    near(padAttenuationDb('t', 10.101, 40.909), 20, 0.001);
  });

  it('gives the true insertion loss of a pad built from nearest standard values', () => {
    // A 20 dB pi pad from E24 parts, 62 ohm shunts and a 240 ohm series resistor, checked by plain
    // voltage division (Ohm's law) between a 50 ohm source and a 50 ohm load, independent of the ABCD route:
    // IL = 20*log10((Vs/2) / Vload), Vs/2 being what a matched load sees with no pad.
    const par = (a: number, b: number) => (a * b) / (a + b);
    const z2 = par(62, 50);
    const z1 = par(62, 240 + z2);
    const vLoad = (z1 / (50 + z1)) * (z2 / (240 + z2));
    const expected = 20 * Math.log10(0.5 / vLoad);
    near(padAttenuationDb('pi', 62, 240), expected, 1e-9);
    near(expected, 19.68, 0.0005); // the same circuit evaluated in /usr/bin/python3: 19.6800
    // Unequal shunts (62 and 68 ohm): more loss than with two 62 ohm shunts, less than with two 68 ohm.
    const mixed = padAttenuationDb('pi', 62, 240, 50, 68);
    assert.ok(
      mixed < padAttenuationDb('pi', 62, 240) && mixed > padAttenuationDb('pi', 68, 240),
      String(mixed),
    );
  });

  it('reduces to plain series resistance when the shunt is open', () => {
    // An open shunt leaves two series resistors in a 50 ohm line: IL = 20*log10(1 + Rtotal/100).
    near(padAttenuationDb('t', 1e12, 25), 20 * Math.log10(1 + 50 / 100), 1e-6);
    // A T pad's second series arm can differ.
    near(padAttenuationDb('t', 1e12, 25, 50, 75), 20 * Math.log10(1 + 100 / 100), 1e-6);
  });

  it('refuses a bad topology or resistor naming it', () => {
    throwsBench(() => padAttenuationDb('x' as 'pi', 61, 247), 'EINVAL', 'topology');
    throwsBench(() => padAttenuationDb('pi', 0, 247), 'EINVAL', 'shuntOhm');
    throwsBench(() => padAttenuationDb('pi', 61, -1), 'EINVAL', 'seriesOhm');
    throwsBench(() => padAttenuationDb('t', 10, 40, 50, NaN), 'EINVAL', 'series2Ohm');
  });
});

describe('path.gammaFromVswr() / returnLossDb() / mismatchLossDb()', () => {
  it('matches the computed values in docs/references.md § Mismatch', () => {
    // Pozar, Microwave Engineering, ch. 2; computed values in docs/references.md
    near(gammaFromVswr(1.1), 0.0476, 0.00005);
    near(returnLossDb(1.1), 26.44, 0.005);
    near(mismatchLossDb(1.1), 0.0099, 0.00005);
    near(gammaFromVswr(1.5), 0.2, 1e-12);
    near(returnLossDb(1.5), 13.98, 0.005);
    near(mismatchLossDb(1.5), 0.177, 0.0005);
    near(gammaFromVswr(2), 0.333, 0.0005);
    near(returnLossDb(2), 9.54, 0.005);
    near(mismatchLossDb(2), 0.51, 0.005);
  });

  it('gives a perfect match zero reflection', () => {
    assert.equal(gammaFromVswr(1), 0);
    assert.equal(returnLossDb(1), Infinity);
    assert.equal(mismatchLossDb(1), 0);
  });

  it('refuses a VSWR below 1', () => {
    throwsBench(() => gammaFromVswr(0.9), 'EINVAL', 'vswr');
  });
});

describe('path.mismatchLimitsDb()', () => {
  it('matches the example in docs/references.md', () => {
    // common practice in RF metrology: 20*log10(1 +/- |Gs||GL|); example computed in docs/references.md
    const { plusDb, minusDb } = mismatchLimitsDb(1.5, 1.2);
    near(plusDb, 0.157, 0.0005);
    near(minusDb, -0.159, 0.0005);
  });

  it('vanishes when either side is matched', () => {
    assert.deepEqual(mismatchLimitsDb(1, 3), { plusDb: 0, minusDb: 0 });
  });

  it('names the bad side', () => {
    throwsBench(() => mismatchLimitsDb(1.5, 0), 'EINVAL', 'loadVswr');
    throwsBench(() => mismatchLimitsDb(-2, 1.2), 'EINVAL', 'sourceVswr');
  });
});

describe('path.analysePath()', () => {
  it('sums losses and combines uncertainties root-sum-square', () => {
    const a = analysePath([
      { kind: 'pad', db: 20, tolDb: 0.3 },
      { kind: 'cable', lossDb: 0.4, tolDb: 0.1 },
      { kind: 'offset', db: -1.5, tolDb: 0.2 },
    ]);
    near(a.lossDb, 18.9, 1e-12);
    // rectangular limits: u = tol / sqrt(3) each (GUM 4.3.7), combined root-sum-square
    near(a.uDb, Math.sqrt((0.3 ** 2 + 0.1 ** 2 + 0.2 ** 2) / 3), 1e-12);
    assert.deepEqual(
      a.terms.map((t) => t.label),
      ['20 dB pad', '0.4 dB cable', '-1.5 dB offset'],
    );
    near(a.terms[0].uDb, 0.3 / Math.sqrt(3), 1e-12);
    near(a.minLossDb, 18.9 - 0.6, 1e-12);
    near(a.maxLossDb, 18.9 + 0.6, 1e-12);
  });

  it('uses the default pad tolerance when none is given', () => {
    const a = analysePath([{ kind: 'pad', db: 10 }]);
    near(a.uDb, DEFAULT_PAD_TOL_DB / Math.sqrt(3), 1e-12);
  });

  it('adds a coupler at its coupling factor', () => {
    const a = analysePath([{ kind: 'coupler', couplingDb: 30, tolDb: 0.5, label: 'line sampler' }]);
    assert.equal(a.lossDb, 30);
    assert.equal(a.terms[0].label, '30 dB coupler "line sampler"');
  });

  it('counts mismatch as a U-shaped term with no nominal loss', () => {
    const a = analysePath([{ kind: 'mismatch', sourceVswr: 1.5, loadVswr: 1.2 }]);
    assert.equal(a.lossDb, 0);
    // U-shaped distribution: u = half-width / sqrt(2), half-width from the docs/references.md example (+0.157/-0.159 dB)
    near(a.uDb, 0.158 / Math.SQRT2, 0.0005);
    near(a.minLossDb, -0.159, 0.0005);
  });

  it('computes a measured pad and propagates its resistor tolerance', () => {
    const pi = piPad(20);
    const exact = analysePath([
      { kind: 'pad-measured', topology: 'pi', shuntOhm: pi.shuntOhm, seriesOhm: pi.seriesOhm },
    ]);
    near(exact.lossDb, 20, 1e-9);
    // Check the propagated uncertainty against a brute-force Monte Carlo over the three resistors,
    // each uniform within +/-1 % (the default), using the same exact network loss.
    // mulberry32, a small seeded generator, so the test is deterministic
    let seed = 12345;
    const rand = () => {
      seed = (seed + 0x6d2b79f5) | 0;
      let t = Math.imul(seed ^ (seed >>> 15), 1 | seed);
      t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
      return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
    };
    const tol = DEFAULT_RESISTOR_TOL_PCT / 100;
    const n = 40000;
    let s = 0;
    let s2 = 0;
    for (let i = 0; i < n; i++) {
      const r = (v: number) => v * (1 + tol * (2 * rand() - 1));
      const l = padAttenuationDb('pi', r(pi.shuntOhm), r(pi.seriesOhm), 50, r(pi.shuntOhm));
      s += l;
      s2 += l * l;
    }
    const sd = Math.sqrt(s2 / n - (s / n) ** 2);
    near(exact.uDb, sd, sd * 0.05, 'propagated u vs Monte Carlo');
    assert.ok(exact.uDb > 0.03 && exact.uDb < 0.1, `1 % resistors on a 20 dB pad: ${exact.uDb} dB`);
    const tight = analysePath([
      { kind: 'pad-measured', topology: 'pi', shuntOhm: pi.shuntOhm, seriesOhm: pi.seriesOhm, tolPct: 0.1 },
    ]);
    near(tight.uDb, exact.uDb / 10, 1e-6);
  });

  it('reports a non-ideal measured pad at its true loss', () => {
    const a = analysePath([{ kind: 'pad-measured', topology: 'pi', shuntOhm: 62, seriesOhm: 240 }]);
    near(a.lossDb, padAttenuationDb('pi', 62, 240), 1e-12);
    assert.equal(a.terms[0].label, '19.68 dB pi pad (measured 62/240 Ω)');
  });

  it('gives an empty path no loss and no uncertainty', () => {
    assert.deepEqual(analysePath([]), { lossDb: 0, uDb: 0, terms: [], minLossDb: 0, maxLossDb: 0 });
  });

  it('validates what it is given', () => {
    throwsBench(() => analysePath([{ kind: 'pad', db: -20 }] as PathElement[]), 'EINVAL', 'path[0].db');
  });
});

describe('path.rxToDut() / dutToRx()', () => {
  const path: PathElement[] = [
    { kind: 'pad', db: 20, tolDb: 0.3 },
    { kind: 'cable', lossDb: 0.4, tolDb: 0.1 },
  ];

  it('adds the path loss and combines the receiver uncertainty root-sum-square', () => {
    const r = rxToDut(-30, 0.5, path);
    near(r.dbm, -9.6, 1e-12);
    near(r.uDb, Math.sqrt(0.25 + (0.09 + 0.01) / 3), 1e-12);
  });

  it('is the inverse of dutToRx', () => {
    near(dutToRx(40, path), 19.6, 1e-12);
    near(rxToDut(dutToRx(40, path), 0, path).dbm, 40, 1e-12);
  });

  it('refuses a negative uncertainty', () => {
    throwsBench(() => rxToDut(-30, -1, path), 'EINVAL', 'uDb');
  });
});

describe('path.assertReceiverSafe()', () => {
  it('passes a safe set-up and returns nominal and worst-case levels', () => {
    const r = assertReceiverSafe(40, [{ kind: 'pad', db: 40, tolDb: 0.5 }], 10);
    near(r.rxDbm, 0, 1e-12);
    near(r.worstRxDbm, 0.5, 1e-12);
  });

  it('refuses 100 W into a receiver through only 20 dB, saying how much more is needed', () => {
    const e = throwsBench(() => assertReceiverSafe(50, [{ kind: 'pad', db: 20 }], 10), 'EUNSAFE', 'path');
    assert.match(e.message, /at least 20\.3 dB more attenuation/);
  });

  it('counts the tolerance against the receiver', () => {
    // nominal 10 dBm is at the limit; the low end of the tolerance (19.5 dB) gives 10.5 dBm
    const e = throwsBench(
      () => assertReceiverSafe(30, [{ kind: 'pad', db: 20, tolDb: 0.5 }], 10),
      'EUNSAFE',
      'path',
    );
    assert.match(e.message, /up to 10\.5 dBm/);
  });
});

describe('path.parsePathSpec()', () => {
  it('reads every element kind', () => {
    const p = parsePathSpec('pad:20,cable:0.4,coupler:30,offset:-1.5,pi:61.1/247.5,t:40.9/10.1,vswr:1.5/1.2');
    assert.deepEqual(p, [
      { kind: 'pad', db: 20 },
      { kind: 'cable', lossDb: 0.4 },
      { kind: 'coupler', couplingDb: 30 },
      { kind: 'offset', db: -1.5 },
      { kind: 'pad-measured', topology: 'pi', shuntOhm: 61.1, seriesOhm: 247.5 },
      { kind: 'pad-measured', topology: 't', shuntOhm: 10.1, seriesOhm: 40.9 },
      { kind: 'mismatch', sourceVswr: 1.5, loadVswr: 1.2 },
    ]);
  });

  it('reads tolerances, units and spacing', () => {
    assert.deepEqual(
      parsePathSpec(' pad:20dB/0.5 , cable: 0.4 dB / 0.05, pi:61.1ohm/247.5/0.5%, vswr:1.5:1/1.2:1 '),
      [
        { kind: 'pad', db: 20, tolDb: 0.5 },
        { kind: 'cable', lossDb: 0.4, tolDb: 0.05 },
        { kind: 'pad-measured', topology: 'pi', shuntOhm: 61.1, seriesOhm: 247.5, tolPct: 0.5 },
        { kind: 'mismatch', sourceVswr: 1.5, loadVswr: 1.2 },
      ],
    );
  });

  it('reads an unequal pad only when the third value says it is a resistor, never as a tolerance', () => {
    // pi:61.9/249/49.9 once read the second shunt as a 49.9 % tolerance: now a bare third value is refused.
    const bare = throwsBench(
      () => parsePathSpec('pi:61.9/249/49.9'),
      'EINVAL',
      '--path item 1 ("pi:61.9/249/49.9")',
    );
    assert.match(bare.message, /could be a tolerance or the second shunt: write "49.9%" .* or "49.9ohm"/);
    assert.deepEqual(parsePathSpec('pi:61.9/249/49.9ohm'), [
      { kind: 'pad-measured', topology: 'pi', shuntOhm: 61.9, seriesOhm: 249, shunt2Ohm: 49.9 },
    ]);
    assert.deepEqual(parsePathSpec('t:40.9/10.1/41.2 Ω/1%'), [
      { kind: 'pad-measured', topology: 't', shuntOhm: 10.1, seriesOhm: 40.9, series2Ohm: 41.2, tolPct: 1 },
    ]);
    assert.deepEqual(parsePathSpec('pi:61.9/249/49.9/0.5'), [
      { kind: 'pad-measured', topology: 'pi', shuntOhm: 61.9, seriesOhm: 249, shunt2Ohm: 49.9, tolPct: 0.5 },
    ]);
    // The loss is the unequal circuit's: voltage division between 50 ohm source and load (Ohm's law), as above.
    const par = (x: number, y: number) => (x * y) / (x + y);
    const z2 = par(49.9, 50);
    const z1 = par(61.9, 249 + z2);
    const vLoad = (z1 / (50 + z1)) * (z2 / (249 + z2));
    const [e] = validatePath(parsePathSpec('pi:61.9/249/49.9ohm'));
    near(padAttenuationDb('pi', 61.9, 249, 50, 49.9), 20 * Math.log10(0.5 / vLoad), 1e-9);
    // The text form reads back as the same pad.
    assert.deepEqual(parsePathSpec(`pi:${formatPath([e]).match(/measured (.*) Ω/)![1]}ohm`), [e]);
  });

  it('gives an empty path for empty text', () => {
    assert.deepEqual(parsePathSpec(''), []);
    assert.deepEqual(parsePathSpec('   '), []);
  });

  it('names the bad item and says what is expected', () => {
    const unknown = throwsBench(
      () => parsePathSpec('pad:20,cabel:0.4'),
      'EINVAL',
      '--path item 2 ("cabel:0.4")',
    );
    assert.match(unknown.message, /unknown element "cabel".*cable:dB/);
    const nan = throwsBench(() => parsePathSpec('pad:twenty'), 'EINVAL', '--path item 1 ("pad:twenty")');
    assert.match(nan.message, /"twenty" is not a number/);
    const range = throwsBench(() => parsePathSpec('pad:20,pad:-3'), 'EINVAL', '--path item 2 ("pad:-3")');
    assert.match(range.message, /db must be > 0/);
    throwsBench(() => parsePathSpec('pad:20,,cable:1'), 'EINVAL', '--path item 2 ("")');
    throwsBench(() => parsePathSpec('20'), 'EINVAL', '--path item 1 ("20")');
    const count = throwsBench(() => parsePathSpec('vswr:1.5'), 'EINVAL', '--path item 1 ("vswr:1.5")');
    assert.match(count.message, /vswr:source\/load/);
    throwsBench(() => parsePathSpec('pi:61.1'), 'EINVAL', '--path item 1 ("pi:61.1")');
    throwsBench(() => parsePathSpec('cable:50'), 'EINVAL', '--path item 1 ("cable:50")');
    throwsBench(() => parsePathSpec('vswr:0.5/1'), 'EINVAL', '--path item 1 ("vswr:0.5/1")');
    throwsBench(() => parsePathSpec('t:1000/0.001'), 'EINVAL', '--path item 1 ("t:1000/0.001")');
  });

  it('names another option when asked', () => {
    throwsBench(() => parsePathSpec('x:1', 'path'), 'EINVAL', 'path item 1 ("x:1")');
  });
});

describe('path.formatPath()', () => {
  it('writes a short human text', () => {
    assert.equal(
      formatPath([
        { kind: 'pad', db: 20 },
        { kind: 'cable', lossDb: 0.4 },
      ]),
      '20 dB pad + 0.4 dB cable',
    );
    assert.equal(
      formatPath(parsePathSpec('coupler:30,offset:-1.5,vswr:1.5/1.2')),
      '30 dB coupler + -1.5 dB offset + mismatch 1.5:1/1.2:1',
    );
    assert.equal(formatPath(parsePathSpec('t:40.909/10.101')), '20 dB T pad (measured 40.9/10.1 Ω)');
    assert.equal(formatPath([]), 'direct (no elements)');
  });
});

describe('path.validatePath()', () => {
  it('returns a valid path unchanged', () => {
    const p = [
      { kind: 'pad', db: 20, label: 'bench pad' },
      { kind: 'mismatch', sourceVswr: 1.3, loadVswr: 1.1 },
    ];
    assert.deepEqual(validatePath(p), p);
  });

  it('names the field of the first problem', () => {
    throwsBench(
      () =>
        validatePath([
          { kind: 'pad', db: 20 },
          { kind: 'pad', db: 200 },
        ]),
      'EINVAL',
      'path[1].db',
    );
    throwsBench(() => validatePath([{ kind: 'cable', lossDb: -1 }]), 'EINVAL', 'path[0].lossDb');
    throwsBench(() => validatePath([{ kind: 'coupler', couplingDb: 0 }]), 'EINVAL', 'path[0].couplingDb');
    throwsBench(() => validatePath([{ kind: 'offset', db: 41 }]), 'EINVAL', 'path[0].db');
    throwsBench(
      () => validatePath([{ kind: 'mismatch', sourceVswr: 0.5, loadVswr: 1 }]),
      'EINVAL',
      'path[0].sourceVswr',
    );
    throwsBench(() => validatePath([{ kind: 'pad', db: '20' }]), 'EINVAL', 'path[0].db');
    throwsBench(() => validatePath('pad:20'), 'EINVAL', 'path');
  });

  it('lists the kinds for an unknown kind', () => {
    const e = throwsBench(() => validatePath([{ kind: 'cabel', lossDb: 1 }]), 'EINVAL', 'path[0].kind');
    assert.match(e.message, /pad, pad-measured, cable, coupler, offset, mismatch/);
  });

  it('catches a misspelled key', () => {
    const e = throwsBench(() => validatePath([{ kind: 'pad', db: 20, tol: 0.5 }]), 'EINVAL', 'path[0]');
    assert.match(e.message, /"tol"/);
  });

  it('keeps the second arm with its topology', () => {
    throwsBench(
      () =>
        validatePath([
          { kind: 'pad-measured', topology: 'pi', shuntOhm: 61, seriesOhm: 247, series2Ohm: 250 },
        ]),
      'EINVAL',
      'path[0].series2Ohm',
    );
    assert.equal(
      validatePath([{ kind: 'pad-measured', topology: 'pi', shuntOhm: 61, seriesOhm: 247, shunt2Ohm: 62 }])
        .length,
      1,
    );
  });
});
