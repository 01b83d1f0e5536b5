// Runs in Node. Where the program's own files are, and where the user's data goes by default.
import { existsSync } from 'node:fs';
import { homedir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

/** The repository (or installed package) root: the folder holding package.json and migrations/. */
export function appRoot(): string {
  if (process.env.NULLBENCH_ROOT) return resolve(process.env.NULLBENCH_ROOT);
  // Works from the TypeScript sources (main/) and from the bundles in dist/ alike.
  let dir = typeof __dirname === 'string' ? __dirname : dirname(fileURLToPath(import.meta.url));
  for (let i = 0; i < 6; i++) {
    if (existsSync(join(dir, 'migrations')) && existsSync(join(dir, 'package.json'))) return dir;
    dir = dirname(dir);
  }
  return process.cwd();
}

export function migrationsDir(): string {
  return join(appRoot(), 'migrations');
}

export function rendererDir(): string {
  return join(appRoot(), 'dist', 'renderer');
}

/** The user's data directory, per platform convention; NULLBENCH_HOME overrides it. */
export function userDataDir(): string {
  if (process.env.NULLBENCH_HOME) return resolve(process.env.NULLBENCH_HOME);
  const home = homedir();
  if (process.platform === 'win32')
    return join(process.env.APPDATA ?? join(home, 'AppData', 'Roaming'), 'Nullbench');
  if (process.platform === 'darwin') return join(home, 'Library', 'Application Support', 'Nullbench');
  return join(process.env.XDG_DATA_HOME ?? join(home, '.local', 'share'), 'nullbench');
}

export function defaultDbPath(): string {
  return join(userDataDir(), 'nullbench.db');
}
