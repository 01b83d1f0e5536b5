// Runs in Node. The one door to a Store's SQLite connection. Only the repositories in main/store/ (and tests
// that check what is on disk) open it: lint refuses an import of this module from any other floor of main/,
// so every SQL statement lives in main/store/ (docs/design.md § The house).
import type { Db } from './db';

const connections = new WeakMap<object, Db>();

/** Called once by the Store's constructor. */
export function registerConnection(store: object, db: Db): void {
  connections.set(store, db);
}

/** The connection under a store; throws if the object is not an open Store. */
export function connectionOf(store: object): Db {
  const db = connections.get(store);
  if (!db) throw new Error('connectionOf: not a Store');
  return db;
}
