// Test helpers: a fresh temporary folder/database per test, removed afterwards.
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

export function tempDir(prefix = 'nullbench-'): { dir: string; cleanup(): void } {
  const dir = mkdtempSync(join(tmpdir(), prefix));
  return { dir, cleanup: () => rmSync(dir, { recursive: true, force: true }) };
}

export function tempDb(): { file: string; cleanup(): void } {
  const t = tempDir();
  return { file: join(t.dir, 'test.db'), cleanup: t.cleanup };
}
