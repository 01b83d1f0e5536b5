#!/usr/bin/env node
// Runs in Node. The installed command: loads the built CLI (npm install builds it through "prepare").
import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const built = join(root, 'dist', 'cli.js');
if (!existsSync(built)) {
  process.stderr.write('nullbench: the CLI is not built yet; run "npm run build" in ' + root + '\n');
  process.exit(1);
}
await import(built);
