// Runs in Node. What the record-keeping commands share: opening the database with a service over it,
// finding a design or a unit by what the user typed, and writing an output file whole or not at all.
import { renameSync, rmSync, writeFileSync } from 'node:fs';
import { dirname, basename, join } from 'node:path';
import { BenchError } from '../../../app/errors';
import { defaultDbPath } from '../../paths';
import { Records } from '../../store/records';
import { Service } from '../../service';
import { Store } from '../../store/store';

export interface Opened {
  store: Store;
  service: Service;
  records: Records;
}

/** Opens the database (default: the user's) and runs fn with a service over it; always closes. */
export async function withRecords<T>(db: string | undefined, fn: (o: Opened) => Promise<T> | T): Promise<T> {
  return opened(new Store(db ?? defaultDbPath()), fn);
}

/**
 * withRecords for a command that only reads: the file is opened for reading (on read-only media too) and is
 * never created, upgraded or changed.
 */
export async function readRecords<T>(db: string | undefined, fn: (o: Opened) => Promise<T> | T): Promise<T> {
  return opened(new Store(db ?? defaultDbPath(), { readonly: true }), fn);
}

async function opened<T>(store: Store, fn: (o: Opened) => Promise<T> | T): Promise<T> {
  const service = new Service({ store, mode: 'cli' });
  try {
    return await fn({ store, service, records: new Records(store) });
  } finally {
    await service.close();
    store.close();
  }
}

/**
 * Writes a file whole: to a temporary name beside it, then renamed over, so a reader never sees half a
 * file and a failure leaves the old one in place.
 */
export function writeWhole(file: string, data: string | Uint8Array): void {
  const tmp = join(dirname(file), `.${basename(file)}.${process.pid}.tmp`);
  try {
    writeFileSync(tmp, data);
    renameSync(tmp, file);
  } catch (e) {
    rmSync(tmp, { force: true });
    const err = e as NodeJS.ErrnoException;
    throw new BenchError('EIO', `cannot write ${file}: ${err.code ?? err.message}`, '--out');
  }
}

export function requireOption(value: string | undefined, name: string, what: string): string {
  if (value === undefined || value.trim() === '')
    throw new BenchError('EINVAL', `is required: ${what}`, `--${name}`);
  return value;
}
