// The one reader of typed numbers (app/numbers.ts): a decimal point or a decimal comma, never a guess.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import { parseLevel } from '../../app/levels';
import { normaliseDecimal, parseDecimal } from '../../app/numbers';

function refused(fn: () => unknown, pattern: RegExp): void {
  assert.throws(
    fn,
    (e: unknown) => e instanceof BenchError && e.code === 'EINVAL' && pattern.test(e.message),
  );
}

describe('parseDecimal', () => {
  it('reads a decimal point and a decimal comma alike', () => {
    assert.equal(parseDecimal('4.37', 'Balance R'), 4.37);
    assert.equal(parseDecimal('4,37', 'Balance R'), 4.37);
    assert.equal(parseDecimal(' 4,5 ', 'trimmer'), 4.5);
    assert.equal(parseDecimal(',5', 'x'), 0.5);
    assert.equal(parseDecimal('7,', 'x'), 7);
    assert.equal(parseDecimal('1e-3', 'x'), 0.001);
  });

  it('reads a typographic minus and a plus sign', () => {
    assert.equal(parseDecimal('\u221212,5', 'level'), -12.5);
    assert.equal(parseDecimal('-12.5', 'level'), -12.5);
    assert.equal(parseDecimal('+3', 'x'), 3);
  });

  it('never takes "4,37" for 437, and refuses thousands separators rather than guess', () => {
    assert.notEqual(parseDecimal('4,37', 'x'), 437);
    refused(() => parseDecimal('1,234.5', 'Carrier'), /Carrier: "1,234.5" is not a number.*thousands/);
    refused(() => parseDecimal('1.234,5', 'Carrier'), /thousands/);
    refused(() => parseDecimal('1,2,3', 'Carrier'), /not a number/);
  });

  it('says which field is wrong, and why', () => {
    refused(() => parseDecimal('', 'Balance R'), /^Balance R: is empty/);
    refused(() => parseDecimal('abc', 'Balance R'), /^Balance R: "abc" is not a number/);
    refused(() => parseDecimal('4,5', 'Steps', { integer: true }), /Steps: "4,5" must be a whole number/);
    refused(
      () => parseDecimal('12,5', 'Balance R', { min: 0, max: 10, unit: 'turns' }),
      /Balance R: 12.5 turns is above the highest allowed, 10 turns/,
    );
    refused(() => parseDecimal('-1', 'Pad', { min: 0 }), /below the lowest allowed, 0/);
    refused(() => parseDecimal('1e999', 'x'), /out of range/);
    const e = (() => {
      try {
        parseDecimal('x', 'Settle (ms)');
      } catch (x) {
        return x as BenchError;
      }
      return null;
    })();
    assert.equal(e?.field, 'Settle (ms)');
  });

  it('normalises without changing a plain number', () => {
    assert.equal(normaliseDecimal('10'), '10');
    assert.equal(normaliseDecimal('0,25'), '0.25');
    assert.equal(normaliseDecimal('1 000'), null);
  });
});

describe('levels in text take a decimal comma', () => {
  it('"−12,5 dBm" is −12.5 dBm, "3,5 uV" is 3.5 µV', () => {
    assert.equal(parseLevel('\u221212,5 dBm'), -12.5);
    assert.equal(parseLevel('-12,5dBm'), parseLevel('-12.5 dBm'));
    // 3.5 µV across 50 Ω: 20·log10(3.5e-6) − 10·log10(50·1e-3) = −96.1 dBm (P = V²/R; any RF handbook).
    assert.ok(Math.abs(parseLevel('3,5 uV') - parseLevel('3.5 uV')) < 1e-12);
    assert.ok(Math.abs(parseLevel('3,5 uV') - (20 * Math.log10(3.5e-6) - 10 * Math.log10(50e-3))) < 1e-9);
  });
});
