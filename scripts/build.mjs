// Runs in Node at install time ("prepare") and on `npm run build`: bundles the CLI, the renderer and the
// desktop shell with esbuild into dist/. Type checking is separate (npm run typecheck).
import { build } from 'esbuild';
import { cpSync, mkdirSync, rmSync } from 'node:fs';

const common = { bundle: true, sourcemap: true, logLevel: 'warning', target: 'es2022' };
// CommonJS bundles have no import.meta: give them the file URL of the bundle itself.
const cjsMeta = {
  banner: { js: "const __importMetaUrl = require('node:url').pathToFileURL(__filename).href;" },
  define: { 'import.meta.url': '__importMetaUrl' },
};

rmSync('dist', { recursive: true, force: true });
mkdirSync('dist/renderer', { recursive: true });

await Promise.all([
  build({
    ...common,
    // Split: each command is its own chunk, loaded when it runs (main/shells/cli/index.ts).
    entryPoints: { cli: 'main/shells/cli/run.ts' },
    outdir: 'dist',
    splitting: true,
    chunkNames: 'cli-chunks/[name]-[hash]',
    platform: 'node',
    format: 'esm',
    packages: 'external',
  }),
  build({
    ...common,
    entryPoints: ['renderer/main.ts'],
    outfile: 'dist/renderer/app.js',
    platform: 'browser',
    format: 'iife',
    minify: true,
  }),
  build({
    ...common,
    entryPoints: ['main/shells/electron/main.ts'],
    outfile: 'dist/electron/main.cjs',
    platform: 'node',
    format: 'cjs',
    ...cjsMeta,
    packages: 'external',
  }),
  build({
    ...common,
    entryPoints: ['main/shells/electron/preload.ts'],
    outfile: 'dist/electron/preload.cjs',
    platform: 'node',
    format: 'cjs',
    external: ['electron'],
  }),
]);
cpSync('renderer/index.html', 'dist/renderer/index.html');
cpSync('renderer/style.css', 'dist/renderer/style.css');
cpSync('renderer/icon.svg', 'dist/renderer/icon.svg');
// The test sheet's stylesheet (the app shows sheets with it; PDFs inline it) and the records views' own.
for (const f of ['sheet.css', 'records.css']) cpSync(`renderer/${f}`, `dist/renderer/${f}`);
