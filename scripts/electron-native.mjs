// Runs in Node. Builds better-sqlite3 for Electron's ABI into build/electron-native/, leaving the Node build
// in node_modules untouched (so `npm test` on Node keeps working). Needs Electron installed and its headers
// reachable; the desktop shell passes the result to better-sqlite3 as its nativeBinding.
import { spawnSync } from 'node:child_process';
import { cpSync, mkdirSync, mkdtempSync, rmSync, existsSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

const require = createRequire(import.meta.url);
let electronVersion;
try {
  electronVersion = require('electron/package.json').version;
} catch {
  console.error(
    'electron:native: Electron is not installed (it is an optional dependency); nothing to build.',
  );
  process.exit(1);
}
const src = join('node_modules', 'better-sqlite3');
const work = mkdtempSync(join(tmpdir(), 'nb-native-'));
cpSync(src, work, { recursive: true });
rmSync(join(work, 'build'), { recursive: true, force: true });
const gyp = require.resolve('node-gyp/bin/node-gyp.js');
const r = spawnSync(
  process.execPath,
  [
    gyp,
    'rebuild',
    '--release',
    `--target=${electronVersion}`,
    '--runtime=electron',
    '--dist-url=https://electronjs.org/headers',
  ],
  { cwd: work, stdio: 'inherit' },
);
if (r.status !== 0) process.exit(r.status ?? 1);
const out = join('build', 'electron-native');
mkdirSync(out, { recursive: true });
const built = join(work, 'build', 'Release', 'better_sqlite3.node');
if (!existsSync(built)) {
  console.error('electron:native: build finished without better_sqlite3.node');
  process.exit(1);
}
cpSync(built, join(out, 'better_sqlite3.node'));
rmSync(work, { recursive: true, force: true });
console.log(`electron:native: ${join(out, 'better_sqlite3.node')} built for Electron ${electronVersion}`);
