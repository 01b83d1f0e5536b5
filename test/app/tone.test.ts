// The null tone's pitch (app/tone.ts): a semitone per dB, lower is deeper, always within a small speaker's band.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { tonePitch } from '../../app/tone';

describe('tonePitch', () => {
  it('sits at 600 Hz at the reference and moves a semitone (2^(1/12), equal temperament) per dB', () => {
    assert.equal(tonePitch(-40, -40).hz, 600);
    assert.ok(Math.abs(tonePitch(-41, -40).hz - 600 / 2 ** (1 / 12)) < 1e-9);
    assert.ok(Math.abs(tonePitch(-28, -40).hz - 1200) < 1e-9, 'twelve dB up is one octave up');
  });

  it('goes down as the null deepens, monotonically within the band', () => {
    let last = Infinity;
    for (let l = -30; l >= -50; l -= 0.5) {
      const { hz } = tonePitch(l, -30);
      assert.ok(hz < last || hz === 200);
      last = hz;
    }
  });

  it('moves its reference with the level at the band edges, so it never leaves 200–1600 Hz', () => {
    let ref = -40;
    for (const l of [-40, -60, -80, -75, -20, 0]) {
      const p = tonePitch(l, ref);
      assert.ok(p.hz >= 200 - 1e-9 && p.hz <= 1600 + 1e-9, `${p.hz}`);
      ref = p.refDbm;
    }
    // After the deepest level the reference followed it: 5 dB up from there is 5 semitones up from 200 Hz.
    const deep = tonePitch(-80, -40);
    assert.ok(Math.abs(tonePitch(-75, deep.refDbm).hz - 200 * 2 ** (5 / 12)) < 1e-9);
  });
});
