// Runs in Node (tests app/, which is runtime-free). The contract's error for a misspelt argument: the
// unknown key named as the field, beside the nearest key the schema knows.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { z } from 'zod';
import { benchErrorFromZod, editDistance, keysAt, nearestKey } from '../../app/zodissue';
import { CALLS } from '../../app/api';

describe('editDistance()', () => {
  it('gives the textbook Levenshtein distances', () => {
    // Levenshtein distance, V. I. Levenshtein 1966; "kitten" -> "sitting" = 3 is the usual worked example
    // (two substitutions, one insertion).
    assert.equal(editDistance('kitten', 'sitting'), 3);
    assert.equal(editDistance('flaw', 'lawn'), 2);
    assert.equal(editDistance('', 'abc'), 3);
    assert.equal(editDistance('same', 'same'), 0);
  });
});

describe('nearestKey()', () => {
  it('finds the key a typo was meant to be, and nothing for a word far from every key', () => {
    assert.equal(nearestKey('waitSettle', ['note', 'waitSettled']), 'waitSettled');
    assert.equal(nearestKey('UNITID', ['unitId', 'designId']), 'unitId');
    assert.equal(nearestKey('colour', ['note', 'waitSettled']), null);
  });
});

describe('keysAt()', () => {
  it('reaches the object behind optional, default, arrays and unions', () => {
    const s = z.object({ a: z.array(z.object({ x: z.number(), y: z.number() })).default([]), b: z.string() });
    assert.deepEqual(keysAt(s, []), ['a', 'b']);
    assert.deepEqual(keysAt(s, ['a', 0]), ['x', 'y']);
    assert.deepEqual(keysAt(CALLS.spectrumCalibrate, []).sort(), ['dbmAtFullScale', 'injection', 'uDb']);
  });
});

describe('CALLS: strict arguments', () => {
  it('refuses a misspelt argument of every call, naming it and the nearest known one', () => {
    for (const [name, schema] of Object.entries(CALLS)) {
      const r = (schema as z.ZodType).safeParse({ zzUnknownKeyQq: 1 });
      assert.equal(r.success, false, `${name} took an unknown key`);
    }
    const r = CALLS.keep.safeParse({ waitSettle: true });
    assert.equal(r.success, false);
    if (r.success) return;
    const e = benchErrorFromZod(r.error, '', CALLS.keep);
    assert.equal(e.code, 'EINVAL');
    assert.equal(e.field, 'waitSettle');
    assert.match(e.message, /unknown key "waitSettle" \(did you mean "waitSettled"\?\)/);
  });
});
