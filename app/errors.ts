// Runs anywhere (app/ is runtime-free). One error vocabulary for the whole engine.
// Callers branch on `code`, never on the message; `field` names what was wrong and where.

/**
 * EINVAL    invalid argument or input (the field says which)
 * ENOTFOUND a named record (session, unit, design...) does not exist
 * ETIMEOUT  a peer did not answer in time (soft: report and go on)
 * EIO       the link failed (needs a reconnect)
 * EPROTO    the peer answered something outside its protocol
 * EREJECTED the peer understood and refused
 * ENAVAIL   the operation is not available on this source or build
 * EUNSAFE   the set-up would put more power into the receiver than it is rated for
 * ECONFLICT the request conflicts with the current state (e.g. a plan already running)
 */
export type ErrorCode =
  | 'EINVAL'
  | 'ENOTFOUND'
  | 'ETIMEOUT'
  | 'EIO'
  | 'EPROTO'
  | 'EREJECTED'
  | 'ENAVAIL'
  | 'EUNSAFE'
  | 'ECONFLICT';

export class BenchError extends Error {
  readonly code: ErrorCode;
  /** Dotted path of the offending field or input position, e.g. "path[1].db" or "line 3". */
  readonly field?: string;

  constructor(code: ErrorCode, message: string, field?: string) {
    super(field ? `${field}: ${message}` : message);
    this.name = 'BenchError';
    this.code = code;
    this.field = field;
  }
}

/** Throw EINVAL naming the field unless `ok`. */
export function check(ok: boolean, field: string, message: string): asserts ok {
  if (!ok) throw new BenchError('EINVAL', message, field);
}

/** A finite number in [min, max], or EINVAL naming the field. */
export function finiteIn(value: number, field: string, min: number, max: number, unit = ''): number {
  const u = unit ? ` ${unit}` : '';
  check(typeof value === 'number' && Number.isFinite(value), field, `must be a finite number, got ${String(value)}`);
  check(value >= min && value <= max, field, `must be between ${min} and ${max}${u}, got ${value}${u}`);
  return value;
}

export function isBenchError(e: unknown): e is BenchError {
  return e instanceof BenchError;
}
