// Test helpers: the repository's root, and its source files walked in a stable order (for the tests that
// read the code itself: the house and the docs citations).
import { readdirSync, statSync } from 'node:fs';
import { join, resolve } from 'node:path';

export const ROOT = resolve(import.meta.dirname, '../..');

/** Every file under dir whose name matches, sorted, descending into folders. */
export function filesUnder(dir: string, name: RegExp): string[] {
  const out: string[] = [];
  for (const n of readdirSync(dir).sort()) {
    const p = join(dir, n);
    if (statSync(p).isDirectory()) out.push(...filesUnder(p, name));
    else if (name.test(n)) out.push(p);
  }
  return out;
}
