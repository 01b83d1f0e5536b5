// Runs in Node. AccessTokenRepo: every SQL statement on the web mode's access_tokens table (schema 004).
// Hashes only: the token's text never reaches the store; hashing and checking stay in main/shells/access.ts.
import { BenchError } from '../../app/errors';
import type { Store } from './store';
import { connectionOf } from './connection';

export interface TokenInfo {
  id: number;
  label: string;
  createdAt: string;
  lastUsedAt: string | null;
}

export class AccessTokenRepo {
  constructor(private readonly store: Store) {
    const t = this.db
      .prepare("SELECT name FROM sqlite_master WHERE type = 'table' AND name = 'access_tokens'")
      .get();
    if (!t)
      throw new BenchError('ENAVAIL', 'this database has no access_tokens table (schema 4)', 'database');
  }

  private get db() {
    return connectionOf(this.store);
  }

  /** Revokes every active token and stores a new one's hash, in one transaction. */
  replace(hashHex: string, label: string, at: string): void {
    this.db
      .transaction(() => {
        this.db.prepare('UPDATE access_tokens SET revoked_at = ? WHERE revoked_at IS NULL').run(at);
        this.db
          .prepare('INSERT INTO access_tokens (hash, label, created_at) VALUES (?, ?, ?)')
          .run(hashHex, label, at);
      })
      .immediate();
  }

  /** The newest active token's record, or null when none has been issued. */
  active(): TokenInfo | null {
    const r = this.db
      .prepare(
        `SELECT id, label, created_at AS createdAt, last_used_at AS lastUsedAt FROM access_tokens
         WHERE revoked_at IS NULL ORDER BY id DESC LIMIT 1`,
      )
      .get() as TokenInfo | undefined;
    return r ?? null;
  }

  /** Id and hex hash of every token not revoked. */
  activeHashes(): { id: number; hash: string }[] {
    return this.db.prepare('SELECT id, hash FROM access_tokens WHERE revoked_at IS NULL').all() as {
      id: number;
      hash: string;
    }[];
  }

  markUsed(id: number, at: string): void {
    this.db.prepare('UPDATE access_tokens SET last_used_at = ? WHERE id = ?').run(at, id);
  }

  /** Revokes every active token; returns how many were. */
  revokeAll(at: string): number {
    return this.db.prepare('UPDATE access_tokens SET revoked_at = ? WHERE revoked_at IS NULL').run(at)
      .changes;
  }
}
