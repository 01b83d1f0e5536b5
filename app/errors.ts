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
  'EINVAL' | 'ENOTFOUND' | 'ETIMEOUT' | 'EIO' | 'EPROTO' | 'EREJECTED' | 'ENAVAIL' | 'EUNSAFE' | 'ECONFLICT';

export class BenchError extends Error {
  readonly code: ErrorCode;
  /** Dotted path of the offending field or input position, e.g. "path[1].db" or "line 3". */
  readonly field?: string;

  /** The message says what is wrong; the field, apart from it, says where (errorText joins them for people). */
  constructor(code: ErrorCode, message: string, field?: string) {
    super(message);
    this.name = 'BenchError';
    this.code = code;
    this.field = field;
  }

  /** "BenchError: field: message", so a log line or an assertion on the error says where as well as what. */
  override toString(): string {
    return `${this.name}: ${errorText(this)}`;
  }

  /** The BenchError a failed call carried across a process boundary. */
  static fromFailure(f: { code: string; message: string; field?: string }): BenchError {
    const code = (ERROR_CODES as readonly string[]).includes(f.code) ? (f.code as ErrorCode) : 'EIO';
    return new BenchError(code, f.message, f.field);
  }
}

/** Throw EINVAL naming the field unless `ok`. */
export function check(ok: boolean, field: string, message: string): asserts ok {
  if (!ok) throw new BenchError('EINVAL', message, field);
}

/** A finite number in [min, max], or EINVAL naming the field. */
export function finiteIn(value: number, field: string, min: number, max: number, unit = ''): number {
  const u = unit ? ` ${unit}` : '';
  check(
    typeof value === 'number' && Number.isFinite(value),
    field,
    `must be a finite number, got ${String(value)}`,
  );
  check(value >= min && value <= max, field, `must be between ${min} and ${max}${u}, got ${value}${u}`);
  return value;
}

export function isBenchError(e: unknown): e is BenchError {
  return e instanceof BenchError;
}

/** What a failed call carries across a process boundary: the code, the message and the field, apart. */
export interface Failure {
  ok: false;
  code: string;
  message: string;
  field?: string;
}

/** Every error code, for checks that a failure carries one of ours. */
export const ERROR_CODES: readonly ErrorCode[] = [
  'EINVAL',
  'ENOTFOUND',
  'ETIMEOUT',
  'EIO',
  'EPROTO',
  'EREJECTED',
  'ENAVAIL',
  'EUNSAFE',
  'ECONFLICT',
];

/** Any thrown value as a Failure; an error that is not ours is EIO with its message. */
export function toFailure(e: unknown): Failure {
  if (e instanceof BenchError)
    return { ok: false, code: e.code, message: e.message, ...(e.field ? { field: e.field } : {}) };
  return { ok: false, code: 'EIO', message: e instanceof Error ? e.message : String(e) };
}

/**
 * How a loop treats a failure, decided here once for every loop (link front end, live poller, plans, log):
 * - transient: the peer missed or garbled one exchange (ETIMEOUT, EPROTO); record a gap and go on;
 * - link-down: the link itself failed (EIO); reconnect with backoff, then go on;
 * - permanent: retrying cannot help (bad input, refused, unavailable, unsafe, conflict, not found); stop.
 */
export type ErrorClass = 'transient' | 'link-down' | 'permanent';

export function errorClass(code: string): ErrorClass {
  if (code === 'ETIMEOUT' || code === 'EPROTO') return 'transient';
  if (code === 'EIO') return 'link-down';
  return 'permanent';
}

/** An error as one line for a person: "field: message" when it names a field. */
export function errorText(e: unknown): string {
  if (e instanceof BenchError || (typeof e === 'object' && e !== null && 'code' in e && 'message' in e)) {
    const f = e as { message: string; field?: string };
    return f.field ? `${f.field}: ${f.message}` : f.message;
  }
  return e instanceof Error ? e.message : String(e);
}

const STORAGE_REASONS: Record<string, string> = {
  EACCES: 'permission denied',
  EPERM: 'operation not permitted',
  EROFS: 'the file system is read-only',
  ENOSPC: 'the disk is full',
  ENOENT: 'no such file or folder',
  EISDIR: 'it is a folder',
  SQLITE_CANTOPEN: 'SQLite cannot open it',
  SQLITE_READONLY: 'the database can only be read here',
  SQLITE_FULL: 'the disk is full',
  SQLITE_IOERR: 'an input/output error',
  SQLITE_BUSY: 'another program holds it locked',
};

/**
 * What a storage error's code means, in words: the system's errno names and SQLite's result codes, an extended
 * code (SQLITE_IOERR_WRITE) by its primary one. Null for a code not listed.
 */
export function storageReason(code: string): string | null {
  return STORAGE_REASONS[code] ?? STORAGE_REASONS[code.split('_').slice(0, 2).join('_')] ?? null;
}
