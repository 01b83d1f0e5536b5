// The simulated bench's meters and trimmers of issue 16: S-unit, 1 dB and 0.1 dB meters, trimmer play and a
// grainy wiper, set through the source spec; and the guide's reading uncertainty that follows the meter.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { meterStep } from '../../main/sim/receiver';
import { SimTransmitter } from '../../main/sim/transmitter';
import { parseSimSpec, SimSource } from '../../main/sources/sim';
import { meterUDb } from '../../app/nullfit/guide';
import { BenchError } from '../../app/errors';
import { serviceWithSession } from '../helpers/session';

describe('simulated meters', () => {
  it('reads in S-units: 6 dB steps below S9, 10 dB above', () => {
    // docs/references.md § S-meter scale: one S-unit is 6 dB (IARU Region 1 R.1); 10 dB steps above S9 are common
    // practice. The meter shows the unit the level has reached: S8 from −6 dB re S9 up to S9.
    const s = { meterScale: 's-units' as const, quantDb: 1 };
    assert.equal(meterStep(-0.1, s), -6);
    assert.equal(meterStep(0, s), 0);
    assert.equal(meterStep(9.9, s), 0);
    assert.equal(meterStep(10, s), 10);
    assert.equal(meterStep(-47.9, s), -48); // S1
    assert.equal(meterStep(-48.1, s), -54); // S0
    assert.equal(meterStep(-12, s), -12); // exactly S7
  });

  it('reads in 1 dB and 0.1 dB steps with whole numbers of steps', () => {
    assert.equal(meterStep(-12.4, { meterScale: 'db', quantDb: 1 }), -12);
    assert.equal(meterStep(0.26, { meterScale: 'db', quantDb: 0.1 }), 0.3);
    assert.equal(meterStep(-17.04, { meterScale: 'db', quantDb: 0.1 }), -17);
  });

  it('takes the meter and trimmer models from the source spec, and refuses bad values by item', () => {
    assert.deepEqual(parseSimSpec('sim:meter=s,play=0.02,grain=0.002,decay=2000,fast'), {
      seed: 1,
      virtualTime: true,
      meter: 's-units',
      playTurns: 0.02,
      grainTurns: 0.002,
      decayMs: 2000,
    });
    assert.equal(parseSimSpec('sim:meter=0.1').meter, 0.1);
    for (const [spec, item, msg] of [
      ['sim:meter=q', 'source item 1 ("meter=q")', /meter=s/],
      ['sim:seed=2,meter=20', 'source item 2 ("meter=20")', /0\.01\.\.10 dB/],
      ['sim:play=2', 'source item 1 ("play=2")', /0\.\.1 turn/],
      ['sim:decay=0', 'source item 1 ("decay=0")', /1\.\.60000 ms/],
    ] as const) {
      assert.throws(
        () => parseSimSpec(spec),
        (e: unknown) => e instanceof BenchError && e.field === item && msg.test(e.message),
        spec,
      );
    }
    const src = (spec: string) => new SimSource(spec, parseSimSpec(spec));
    assert.equal(src('sim').meterStepDb, 1);
    assert.equal(src('sim:meter=s').meterStepDb, 6);
    assert.equal(src('sim:meter=0.1').meterStepDb, 0.1);
    assert.equal(src('sim:meter=s,decay=2000').bench.rx.cfg.decayMs, 2000);
    assert.equal(src('sim:play=0.02').bench.tx.cfg.backlashTurns, 0.02);
  });

  it("gives the guide the meter's step as a uniform uncertainty, never below its default", () => {
    // GUM 4.3.7: a value known to lie within a step s has standard uncertainty s/√12 (docs/references.md § Uncertainty).
    assert.ok(Math.abs(meterUDb(6) - 1.732) < 1e-3);
    assert.equal(meterUDb(1), 0.3);
    assert.equal(meterUDb(0.1), 0.3);
    assert.equal(meterUDb(undefined), 0.3);
  });
});

describe('simulated trimmers', () => {
  it('have play: the wiper follows the shaft only once half the play is taken up on a turn back', () => {
    const tx = new SimTransmitter({ backlashTurns: 0.02 });
    tx.setTrims({ A: 5 });
    assert.ok(Math.abs(tx.wiperPositions().A - 4.99) < 1e-12, 'turned up: the wiper lags by half the play');
    tx.setTrims({ A: 4.985 });
    assert.ok(Math.abs(tx.wiperPositions().A - 4.99) < 1e-12, 'back within the play: the wiper stays');
    tx.setTrims({ A: 4.9 });
    assert.ok(Math.abs(tx.wiperPositions().A - 4.91) < 1e-12, 'further back: it lags the other way');
    // Past and back up, as the guide says: the same wiper position as coming up from below.
    tx.setTrims({ A: 4.8 });
    tx.setTrims({ A: 5 });
    assert.ok(Math.abs(tx.wiperPositions().A - 4.99) < 1e-12);
    assert.deepEqual(tx.getTrims().A, 5, 'the shaft is where it was set');
  });

  it('rest on a grainy track at whole steps of the grain', () => {
    const tx = new SimTransmitter({ wiperStepTurns: 0.01 });
    tx.setTrims({ A: 4.3749 });
    assert.ok(Math.abs(tx.wiperPositions().A - 4.37) < 1e-9);
    const ideal = new SimTransmitter();
    ideal.setTrims({ A: 4.3749 });
    assert.equal(ideal.wiperPositions().A, 4.3749);
  });
});

describe("a reading's uncertainty on the meter it was read with", () => {
  it('carries the declared meter step as step/√12, in quadrature with the rest', async () => {
    // GUM 4.3.7 (docs/references.md § Uncertainty): a value known only to a step s adds s/√12. The same bench
    // read on a 1 dB meter and on an S-unit meter differs by exactly that term: √((6² − 1²)/12) = 1.708 dB.
    const u = async (source: string) => {
      const b = await serviceWithSession({ source });
      try {
        await b.service.invoke('openSession', { sessionId: b.session.id });
        const r = await b.service.invoke('keep', { note: '', waitSettled: false });
        return r.uDb;
      } finally {
        await b.cleanup();
      }
    };
    const fine = await u('sim:seed=5');
    const coarse = await u('sim:seed=5,meter=s');
    assert.ok(
      Math.abs(Math.sqrt(coarse ** 2 - fine ** 2) - Math.sqrt(35 / 12)) < 1e-9,
      `${fine} → ${coarse}`,
    );
  });
});
