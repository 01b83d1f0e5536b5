// Runs in Node. The support log: one JSON object per line in the user's data folder, for later support (what
// happened on this bench, when): start and stop with the version, link faults and their recovery, notices, and
// every failed call with its code. Nothing secret goes in: access tokens are cut out of every message, and
// call arguments are never written. It rotates at SUPPORT_LOG_MAX_BYTES, keeping SUPPORT_LOG_KEEP old files.
// Writing it never breaks anything: a log that cannot be written is skipped.
import { appendFileSync, existsSync, mkdirSync, renameSync, rmSync, statSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { userDataDir } from '../paths';

export const SUPPORT_LOG_MAX_BYTES = 1_000_000;
export const SUPPORT_LOG_KEEP = 3;

/**
 * Where the support log goes: NULLBENCH_SUPPORT_LOG (a file, or "off"), else support.jsonl in the data folder.
 * Null when it is off.
 */
export function supportLogPath(): string | null {
  const env = process.env.NULLBENCH_SUPPORT_LOG;
  if (env === 'off') return null;
  return env && env.trim() ? env : join(userDataDir(), 'support.jsonl');
}

/** Takes anything that looks like a secret out of a text: access tokens, and a token in an address. */
export function scrub(text: string): string {
  return text.replace(/nbt_[A-Za-z0-9_-]+/g, 'nbt_[removed]').replace(/(token=)[^&\s"]+/gi, '$1[removed]');
}

export type SupportEvent =
  | { event: 'start'; version: string; mode: string; database: string }
  | { event: 'stop' }
  | { event: 'notice'; level: string; code: string | null; message: string }
  | { event: 'link-restored'; source: string | null }
  | { event: 'failure'; call: string; code: string; field: string | null; message: string };

export class SupportLog {
  constructor(readonly file: string | null = supportLogPath()) {}

  write(e: SupportEvent): void {
    const file = this.file;
    if (!file) return;
    try {
      const line =
        JSON.stringify({ t: new Date().toISOString(), pid: process.pid, ...e }, (k, v: unknown) =>
          typeof v === 'string' && k !== 't' ? scrub(v) : v,
        ) + '\n';
      mkdirSync(dirname(file), { recursive: true });
      if (existsSync(file) && statSync(file).size + line.length > SUPPORT_LOG_MAX_BYTES) this.rotate(file);
      appendFileSync(file, line);
    } catch {
      // A support log that cannot be written (a full disk, a read-only folder) is skipped, never fatal.
    }
  }

  /** support.jsonl -> support.jsonl.1 -> .2 ...; the oldest beyond SUPPORT_LOG_KEEP is dropped. */
  private rotate(file: string): void {
    rmSync(`${file}.${SUPPORT_LOG_KEEP}`, { force: true });
    for (let i = SUPPORT_LOG_KEEP - 1; i >= 1; i--)
      if (existsSync(`${file}.${i}`)) renameSync(`${file}.${i}`, `${file}.${i + 1}`);
    renameSync(file, `${file}.1`);
  }
}
