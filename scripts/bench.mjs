// Runs in Node. `npm run bench`: every benchmark under test/bench (*.bench.ts), one after another, each in its
// own process through tsx. Benchmarks print their figures side by side with what they are compared against.
import { spawnSync } from 'node:child_process';
import { readdirSync } from 'node:fs';
import { join } from 'node:path';

const dir = 'test/bench';
const only = process.argv[2];
const files = readdirSync(dir)
  .filter((f) => f.endsWith('.bench.ts') && (!only || f.includes(only)))
  .sort();
if (!files.length) {
  console.error(only ? `no benchmark matches "${only}"` : 'no benchmarks in test/bench');
  process.exit(2);
}
let failed = 0;
for (const f of files) {
  console.log(`\n== ${f}`);
  const r = spawnSync(process.execPath, ['--import', 'tsx', join(dir, f)], { stdio: 'inherit' });
  if (r.status !== 0) {
    failed++;
    console.log(`${f} exited with ${r.status ?? r.signal}`);
  }
}
process.exit(failed ? 1 : 0);
