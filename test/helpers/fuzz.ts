// Test helpers for the property-based fuzz tests: what "a clear error" means, checked the same way everywhere.
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';

const CODES = new Set([
  'EINVAL',
  'ENOTFOUND',
  'ETIMEOUT',
  'EIO',
  'EPROTO',
  'EREJECTED',
  'ENAVAIL',
  'EUNSAFE',
  'ECONFLICT',
]);

/** Texts that betray a crash inside our code rather than an error written for the user. */
const LEAKS =
  /Cannot read propert|Cannot set propert|is not a function|is not iterable|undefined is not|of undefined|of null|\[object Object\]|Maximum call stack|Invalid array length|out of range index|RangeError|TypeError|SyntaxError: Invalid regular/;

/**
 * A clear error: one of ours, with a documented code, a message written for a person (no leaked engine
 * text), and, for bad input, the field or place it is about.
 */
export function assertClearError(e: unknown, allowed: string[], what: string): asserts e is BenchError {
  assert.ok(
    e instanceof BenchError,
    `${what}: threw ${e instanceof Error ? `${e.name}: ${e.message}` : String(e)}`,
  );
  assert.ok(CODES.has(e.code) && allowed.includes(e.code), `${what}: code ${e.code} (${e.message})`);
  assert.ok(e.message.trim().length >= 8, `${what}: a message too short to help: "${e.message}"`);
  assert.doesNotMatch(e.message, LEAKS, `${what}: the message leaks an internal error`);
  if (e.code === 'EINVAL')
    assert.ok(e.field && e.field.length > 0, `${what}: EINVAL without a field: ${e.message}`);
}

/** The same check for a failure that crossed the service boundary ({ ok: false, code, message, field }). */
export function assertClearFailure(
  r: { ok: false; code: string; message: string; field?: string },
  allowed: string[],
  what: string,
): void {
  assert.ok(CODES.has(r.code) && allowed.includes(r.code), `${what}: code ${r.code} (${r.message})`);
  assert.ok(typeof r.message === 'string' && r.message.trim().length >= 8, `${what}: message "${r.message}"`);
  assert.doesNotMatch(r.message, LEAKS, `${what}: the message leaks an internal error`);
  if (r.code === 'EINVAL')
    assert.ok(r.field && r.field.length > 0, `${what}: EINVAL without a field: ${r.message}`);
}

/** Numbers of every awkward kind, for fields that should hold a finite one. */
export const AWKWARD_NUMBERS = [
  0,
  -0,
  1,
  -1,
  0.5,
  1e-300,
  1e300,
  -1e300,
  Number.MAX_SAFE_INTEGER + 2,
  Number.NaN,
  Number.POSITIVE_INFINITY,
  Number.NEGATIVE_INFINITY,
];
