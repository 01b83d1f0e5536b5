// Runs in Node, after `tsc` in `npm run typecheck`. The desktop shell is always type-checked against
// types/electron-subset.d.ts (so no Electron download is needed); where Electron's own package is installed
// (or ELECTRON_TYPES names its electron.d.ts), the shell is checked once more against the real declarations
// of that version, so the subset cannot drift from what the shipped Electron offers.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';

const root = resolve(import.meta.dirname, '..');
const dts = process.env.ELECTRON_TYPES
  ? resolve(process.env.ELECTRON_TYPES)
  : join(root, 'node_modules', 'electron', 'electron.d.ts');
if (!existsSync(dts)) {
  if (process.env.ELECTRON_TYPES) {
    console.error(`ELECTRON_TYPES names ${dts}, which does not exist`);
    process.exit(2);
  }
  console.log(
    "electron's package is not installed: the desktop shell was checked against types/electron-subset.d.ts",
  );
  process.exit(0);
}
const dir = mkdtempSync(join(tmpdir(), 'nullbench-tsc-'));
const config = join(dir, 'tsconfig.json');
const shell = ['main.ts', 'preload.ts', 'sheetpdf.ts'].map((f) =>
  join(root, 'main', 'shells', 'electron', f),
);
writeFileSync(
  config,
  JSON.stringify({
    extends: join(root, 'tsconfig.json'),
    compilerOptions: {
      baseUrl: root,
      typeRoots: [join(root, 'node_modules', '@types')],
      paths: { electron: [dts] },
    },
    include: [],
    files: [...shell, join(root, 'types', 'pffft-wasm.d.ts')],
  }),
);
const tsc = join(root, 'node_modules', 'typescript', 'bin', 'tsc');
const r = spawnSync(process.execPath, [tsc, '-p', config, '--noEmit'], { stdio: 'inherit' });
rmSync(dir, { recursive: true, force: true });
if (r.status === 0) console.log(`the desktop shell type-checks against ${dts}`);
process.exit(r.status ?? 1);
