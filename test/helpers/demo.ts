// Test helpers: the demo scenario seeded once per test process into a template database, and a fresh copy
// of it for each test that changes it.
import { copyFileSync } from 'node:fs';
import { join } from 'node:path';
import { Service } from '../../main/service';
import { Store } from '../../main/store/store';
import { tempDir } from './tmp';

let template: { file: string; cleanup(): void } | null = null;

async function seeded(): Promise<string> {
  if (!template) {
    const t = tempDir('nullbench-demo-');
    const file = join(t.dir, 'demo.db');
    const store = new Store(file);
    await new Service({ store, mode: 'cli' }).invoke('loadDemo', {});
    store.close(); // closing checkpoints the WAL into the main file, so a plain copy is whole
    template = { file, cleanup: t.cleanup };
    process.once('exit', () => template?.cleanup());
  }
  return template.file;
}

/** A copy of the demo database in its own temporary folder. */
export async function demoDb(): Promise<{ file: string; dir: string; cleanup(): void }> {
  const src = await seeded();
  const t = tempDir();
  const file = join(t.dir, 'demo.db');
  copyFileSync(src, file);
  return { file, dir: t.dir, cleanup: t.cleanup };
}
