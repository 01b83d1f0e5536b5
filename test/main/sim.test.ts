import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { SimBench } from '../../main/sim/bench';
import { SimReceiver } from '../../main/sim/receiver';
import { SimTransmitter } from '../../main/sim/transmitter';
import { parseSimSpec } from '../../main/sources/sim';
import { BenchError } from '../../app/errors';

describe('SimTransmitter', () => {
  it('puts each sideband of a one-tone DSB signal 6.02 dB below PEP', () => {
    const tx = new SimTransmitter({ pepDbm: 30, mode: 'dsb' });
    // docs/references.md § Modulation and power: DSB-SC with one tone, PEP = 4 x one tone's power.
    assert.ok(Math.abs(tx.sidebandDbm() - (30 - 6.0206)) < 1e-3);
  });

  it('nulls the carrier down to its leakage floor at the balance point', () => {
    const tx = new SimTransmitter({ leakageDbc: -64, balanceA: 4, balanceB: 6 });
    tx.setTrims({ A: 4, B: 6 });
    assert.ok(Math.abs(10 * Math.log10(tx.carrierRatio()) - -64) < 1e-9);
    tx.setTrims({ A: 5, B: 6 });
    assert.ok(10 * Math.log10(tx.carrierRatio()) > -40);
  });

  it('gives a residual carrier power quadratic in trimmer offset (the phasor model)', () => {
    const tx = new SimTransmitter({ leakageDbc: -200, balanceA: 4, balanceB: 6, gainA: 0.05 });
    tx.setTrims({ A: 4.2, B: 6 });
    const p1 = tx.carrierRatio();
    tx.setTrims({ A: 4.4, B: 6 });
    const p2 = tx.carrierRatio();
    assert.ok(Math.abs(p2 / p1 - 4) < 1e-9); // doubling the offset quadruples the power
  });
});

describe('SimReceiver', () => {
  it('has a noise floor of kTB + NF', () => {
    const rx = new SimReceiver({ bandwidthHz: 500, noiseFigureDb: 12 });
    // docs/references.md § Thermal noise: kTB at 500 Hz = -146.99 dBm (k from SI 2019), plus the noise figure.
    assert.ok(Math.abs(rx.noiseFloorDbm() - (-146.99 + 12)) < 0.01);
  });

  it('reads whole dB relative to S9 = -73 dBm (IARU R.1) for a steady strong signal', () => {
    const rx = new SimReceiver({ s9Dbm: -73 });
    rx.tune(7.1e6);
    let m = rx.read([{ freqHz: 7.1e6, dbm: -61.3 }], 0);
    for (let t = 100; t < 3000; t += 100) m = rx.read([{ freqHz: 7.1e6, dbm: -61.3 }], t);
    assert.equal(m.strengthDb, 12); // -61.3 dBm = S9 + 11.7 dB, shown as the nearest whole dB
  });

  it('rejects a line one tone away through its filter', () => {
    const rx = new SimReceiver({ bandwidthHz: 500, filterOrder: 8, stopbandDb: -95 });
    assert.ok(Math.abs(rx.responseDb(0)) < 1e-12);
    assert.ok(Math.abs(rx.responseDb(250) - -3.0103) < 1e-3); // -3 dB at the band edge by construction
    assert.ok(rx.responseDb(1000) <= -90);
  });

  it('reads low when the front end is overdriven', () => {
    const a = new SimReceiver({ compressionDbm: -5 });
    const b = new SimReceiver({ compressionDbm: -5 });
    const weak = a.read([{ freqHz: 7.1e6, dbm: -30 }], 0).trueInputDbm;
    const strong = b.read([{ freqHz: 7.1e6, dbm: 0 }], 0).trueInputDbm;
    assert.ok(Math.abs(weak - -30) < 0.1);
    assert.ok(strong < -3, `expected compression, read ${strong}`);
  });
});

describe('SimBench', () => {
  it('repeats exactly for the same seed', () => {
    const run = () => {
      const b = new SimBench({ seed: 42, virtualTime: true });
      return Array.from({ length: 20 }, () => b.read().strengthDb);
    };
    assert.deepEqual(run(), run());
  });

  it('draws a V-shaped null when trimmer A is swept through its balance point', () => {
    const b = new SimBench({ seed: 3, virtualTime: true, pathLossDb: 50 });
    const { A, B } = b.tx.trueBalance();
    b.tx.setTrims({ B });
    const levels: number[] = [];
    const xs = [-2, -1, -0.5, -0.2, 0, 0.2, 0.5, 1, 2].map((d) => A + d);
    for (const x of xs) {
      b.tx.setTrims({ A: x });
      let r = b.read();
      for (let i = 0; i < 80; i++) r = b.read(); // let the meter decay settle (R.1: decay >= 500 ms)
      levels.push(r.strengthDb);
    }
    const imin = levels.indexOf(Math.min(...levels));
    assert.equal(imin, 4, `deepest at the balance point: ${levels.join(', ')}`);
    for (let i = 0; i < imin; i++) assert.ok(levels[i] >= levels[i + 1]);
    for (let i = imin; i < levels.length - 1; i++) assert.ok(levels[i] <= levels[i + 1]);
    assert.ok(levels[0] - levels[imin] > 20);
  });
});

describe('parseSimSpec()', () => {
  it('reads seed, loss and the fast flag', () => {
    assert.deepEqual(parseSimSpec('sim:seed=7,loss=40,fast'), { seed: 7, lossDb: 40, virtualTime: true });
  });
  it('names the bad item', () => {
    assert.throws(
      () => parseSimSpec('sim:sead=7'),
      (e: unknown) => e instanceof BenchError && /item 1/.test(e.field ?? ''),
    );
    assert.throws(
      () => parseSimSpec('sim:loss=-5'),
      (e: unknown) => e instanceof BenchError && /0\.\.120/.test(e.message),
    );
  });
});
