import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import { traceSpectrum } from '../../app/spectrum/display';
import { Window } from '../../app/spectrum/window';

describe('traceSpectrum()', () => {
  const n = 1024;
  const power = new Float64Array(n).fill(1e-10);
  power[100] = 0.25; // a -6.02 dBFS tone at +100 bins
  power[n - 37] = 1e-4; // a -40 dBFS tone at -37 bins
  const spectrum = { power, averages: 1, window: Window.hann(n) };

  it('keeps every tone at its level and frequency however far it decimates', () => {
    const t = traceSpectrum(spectrum, 1024, -512, 511, 16);
    assert.equal(t.binsPerPoint, 64);
    assert.equal(t.hz.length, 16);
    const top = t.dbfs.indexOf(Math.max(...t.dbfs));
    assert.equal(t.hz[top], 100);
    assert.ok(Math.abs(t.dbfs[top] - 10 * Math.log10(0.25)) < 1e-5); // 20 log10(0.5) = -6.02 dB
    const i = [...t.hz].indexOf(-37);
    assert.ok(i >= 0 && Math.abs(t.dbfs[i] + 40) < 1e-5);
  });

  it('gives one point per bin when the span has fewer bins than points, and applies the scale', () => {
    const t = traceSpectrum({ ...spectrum, scale: 4 }, 1024, 90, 110, 100);
    assert.equal(t.binsPerPoint, 1);
    assert.equal(t.hz.length, 21);
    assert.equal(t.hz[10], 100);
    assert.ok(Math.abs(t.dbfs[10]) < 1e-6); // 0.25 x 4 = 1.0 = 0 dBFS
  });

  it('rejects a span outside the band or points out of range', () => {
    const bad = (f: () => unknown, field: string) =>
      assert.throws(f, (e: unknown) => e instanceof BenchError && e.code === 'EINVAL' && e.field === field);
    bad(() => traceSpectrum(spectrum, 1024, -600, 0, 10), 'span');
    bad(() => traceSpectrum(spectrum, 1024, 10, 5, 10), 'span');
    bad(() => traceSpectrum(spectrum, 1024, 0, 100, 1), 'points');
    bad(() => traceSpectrum(spectrum, 0, 0, 100, 10), 'sampleRate');
  });
});
