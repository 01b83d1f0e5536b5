// Runs in Node. Who may use the web mode when it listens on a network: one access token (256 random bits,
// shown once when issued, stored only as its SHA-256), exchanged for a session cookie by the sign-in page.
// A fast hash is right here: the token is random, not a password a person chose, so no guessing list exists.
import { createHash, randomBytes, timingSafeEqual } from 'node:crypto';
import type { IncomingMessage } from 'node:http';
import { AccessTokenRepo, type TokenInfo } from '../store/access';
import type { Store } from '../store/store';

/** Prefix of every token, so a user (or a secret scanner) can tell what the string is. */
export const TOKEN_PREFIX = 'nbt_';
const TOKEN_TEXT = /^nbt_[A-Za-z0-9_-]{43}$/;

export const COOKIE_NAME = 'nullbench_session';
/** A browser session lasts this long from sign-in, ms (a long bench evening). */
export const SESSION_MS = 12 * 3600_000;
/** Wrong tokens a client address may try within FAIL_WINDOW_MS before every check it makes is held back. */
export const MAX_FAILURES = 3;
export const FAIL_WINDOW_MS = 5 * 60_000;
/** The hold after the first wrong tries past MAX_FAILURES, doubling with each more, up to GUESS_MAX_DELAY_MS. */
export const GUESS_BASE_DELAY_MS = 250;
export const GUESS_MAX_DELAY_MS = 8_000;

function sha256(text: string): Buffer {
  return createHash('sha256').update(text, 'utf8').digest();
}

export type { TokenInfo } from '../store/access';

/** The web mode's access token: issued, shown once, checked by hash; the rows live in AccessTokenRepo. */
export class AccessTokens {
  private readonly repo: AccessTokenRepo;

  constructor(store: Store) {
    this.repo = new AccessTokenRepo(store);
  }

  /** Revokes every active token and issues a new one; returns its text, the only time it is seen. */
  issue(label = 'web mode'): string {
    const token = TOKEN_PREFIX + randomBytes(32).toString('base64url');
    this.repo.replace(sha256(token).toString('hex'), label, new Date().toISOString());
    return token;
  }

  /** The active token's record (never its text), or null when none has been issued. */
  active(): TokenInfo | null {
    return this.repo.active();
  }

  /** True when `token` is the active token. Compares hashes in constant time. */
  verify(token: unknown): boolean {
    if (typeof token !== 'string' || !TOKEN_TEXT.test(token)) return false;
    const given = sha256(token);
    for (const r of this.repo.activeHashes()) {
      const stored = Buffer.from(r.hash, 'hex');
      if (stored.length === given.length && timingSafeEqual(stored, given)) {
        this.repo.markUsed(r.id, new Date().toISOString());
        return true;
      }
    }
    return false;
  }

  revokeAll(): number {
    return this.repo.revokeAll(new Date().toISOString());
  }
}

export type LoginResult = { ok: true; cookie: string } | { ok: false; status: 401; message: string };

/**
 * The gate in front of the web shell: signs browsers in (token -> cookie), checks each request's cookie or
 * bearer token, and slows down a client that keeps guessing. One limiter covers every token check, sign-in
 * and bearer alike: past MAX_FAILURES wrong tokens in FAIL_WINDOW_MS, each check from that address waits its
 * turn behind a growing delay (one at a time, so parallel guesses gain nothing). The right token is never
 * refused, only answered after the wait. Browser sessions live in memory only: a restarted server asks
 * everyone to sign in again.
 */
export class WebAccess {
  private readonly sessions = new Map<string, number>();
  private readonly failures = new Map<string, number[]>();
  /** Per client: when its next token check may run (checks from one address queue behind each other). */
  private readonly nextCheck = new Map<string, number>();

  constructor(
    readonly tokens: AccessTokens,
    private readonly clock: () => number = Date.now,
    private readonly wait: (ms: number) => Promise<void> = (ms) => new Promise((r) => setTimeout(r, ms)),
  ) {}

  /** How long a check from this client is held now, ms: 0 until it has guessed wrong MAX_FAILURES times. */
  holdMs(client: string): number {
    const now = this.clock();
    const n = (this.failures.get(client) ?? []).filter((t) => now - t < FAIL_WINDOW_MS).length;
    return n < MAX_FAILURES ? 0 : Math.min(GUESS_MAX_DELAY_MS, GUESS_BASE_DELAY_MS * 2 ** (n - MAX_FAILURES));
  }

  /** Checks a token from a client, after the client's hold; a wrong one lengthens the hold. */
  private async check(token: unknown, client: string): Promise<boolean> {
    const hold = this.holdMs(client);
    if (hold > 0) {
      const now = this.clock();
      const at = Math.max(now, this.nextCheck.get(client) ?? 0) + hold;
      this.nextCheck.set(client, at);
      await this.wait(at - now);
    }
    if (this.tokens.verify(token)) {
      this.failures.delete(client);
      this.nextCheck.delete(client);
      return true;
    }
    const now = this.clock();
    const recent = (this.failures.get(client) ?? []).filter((t) => now - t < FAIL_WINDOW_MS);
    recent.push(now);
    // A scan from many addresses cannot grow the table without end.
    if (this.failures.size > 10_000) {
      this.failures.clear();
      this.nextCheck.clear();
    }
    this.failures.set(client, recent);
    return false;
  }

  async login(token: unknown, client: string): Promise<LoginResult> {
    if (!(await this.check(token, client))) {
      const hold = this.holdMs(client);
      return {
        ok: false,
        status: 401,
        message:
          'that is not the access token of this server' +
          (hold > 0 ? `; the next try from ${client} is answered after ${(hold / 1000).toFixed(2)} s` : ''),
      };
    }
    const now = this.clock();
    this.prune(now);
    const id = randomBytes(32).toString('base64url');
    this.sessions.set(id, now + SESSION_MS);
    return { ok: true, cookie: id };
  }

  logout(req: IncomingMessage): void {
    const id = cookieOf(req);
    if (id) this.sessions.delete(id);
  }

  /** True when the request carries a live session cookie or the active token as a bearer token. */
  async allows(req: IncomingMessage): Promise<boolean> {
    const id = cookieOf(req);
    if (id) {
      const until = this.sessions.get(id);
      if (until !== undefined && until > this.clock()) return true;
      if (until !== undefined) this.sessions.delete(id);
    }
    const auth = req.headers.authorization;
    if (typeof auth === 'string' && auth.startsWith('Bearer '))
      return this.check(auth.slice(7).trim(), req.socket.remoteAddress ?? 'unknown');
    return false;
  }

  /** Ends every browser session (when the token is replaced). */
  dropSessions(): void {
    this.sessions.clear();
  }

  private prune(now: number): void {
    for (const [id, until] of this.sessions) if (until <= now) this.sessions.delete(id);
  }
}

/** The session cookie's value, when the request has exactly one well-formed one. */
function cookieOf(req: IncomingMessage): string | null {
  const header = req.headers.cookie;
  if (!header) return null;
  const found = header
    .split(';')
    .map((p) => p.trim())
    .filter((p) => p.startsWith(`${COOKIE_NAME}=`))
    .map((p) => p.slice(COOKIE_NAME.length + 1));
  return found.length === 1 && /^[A-Za-z0-9_-]{43}$/.test(found[0]) ? found[0] : null;
}

/** The Set-Cookie header for a new session: not readable by scripts, never sent by another site. */
export function sessionCookie(id: string): string {
  return `${COOKIE_NAME}=${id}; HttpOnly; SameSite=Strict; Path=/; Max-Age=${SESSION_MS / 1000}`;
}

export function clearedCookie(): string {
  return `${COOKIE_NAME}=; HttpOnly; SameSite=Strict; Path=/; Max-Age=0`;
}

/** True for addresses only this machine can reach: 127.0.0.0/8, ::1, localhost. */
export function isLoopback(host: string): boolean {
  const h = host
    .trim()
    .toLowerCase()
    .replace(/^\[|\]$/g, '');
  return (
    h === 'localhost' || h === '::1' || /^127\.\d{1,3}\.\d{1,3}\.\d{1,3}$/.test(h) || h === '::ffff:127.0.0.1'
  );
}
