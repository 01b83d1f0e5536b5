// The corrector's flags at the two ends of a calibrated scale: a meter at its bottom is a floor, at its top a
// pegged needle; neither may be quoted as a measured level.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { Corrector } from '../../main/live/correct';

const at = (raw: number) => ({ raw, quantity: 'strength-db' as const, freqHz: 7.1e6, t: 0 });

describe('Corrector at the ends of the scale', () => {
  // The default table is IARU R.1 (docs/references.md): S9 = -73 dBm below 30 MHz, S9+60 dB = -13 dBm at its top.
  const c = new Corrector({ calibration: null, path: [{ kind: 'pad', db: 40 }] });

  it('flags a reading at or beyond the top of the table as overload, and one just below as a measurement', () => {
    const top = c.correct(at(60));
    assert.equal(top.dbmRx, -13);
    assert.deepEqual([top.overload, top.floorLimited], [true, false]);
    assert.equal(c.correct(at(75)).overload, true);
    const below = c.correct(at(59));
    assert.equal(below.dbmRx, -14);
    assert.deepEqual([below.overload, below.floorLimited], [false, false]);
  });

  it('flags a reading at the bottom of the table as floor limited, not as overload', () => {
    const bottom = c.correct(at(-54));
    assert.equal(bottom.dbmRx, -127);
    assert.deepEqual([bottom.overload, bottom.floorLimited], [false, true]);
  });
});
