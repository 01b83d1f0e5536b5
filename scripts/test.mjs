// Runs in Node. The one test command: every test file under test/ (or one group: unit, main, e2e, or test files
// and folders named by path) through node's built-in runner with tsx, then a plain closing line "N passed, N failed".
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, readdirSync, statSync, mkdirSync } from 'node:fs';
import { join } from 'node:path';

const groups = { unit: ['test/app'], main: ['test/main'], e2e: ['test/e2e'] };
const wants = process.argv.slice(2);
const isPath = (w) => w.startsWith('test/') && existsSync(w);
const unknown = wants.find((w) => !groups[w] && !isPath(w));
if (unknown) {
  console.error(
    `unknown test group or path "${unknown}"; use one of: ${Object.keys(groups).join(', ')}, or a path under test/`,
  );
  process.exit(2);
}
const roots = wants.length ? wants.flatMap((w) => groups[w] ?? [w]) : ['test/app', 'test/main', 'test/e2e'];

function walk(dir) {
  if (dir.endsWith('.test.ts')) return [dir];
  let out = [];
  let names = [];
  try {
    names = readdirSync(dir);
  } catch {
    return out;
  }
  for (const n of names.sort()) {
    const p = join(dir, n);
    if (statSync(p).isDirectory()) out = out.concat(walk(p));
    else if (n.endsWith('.test.ts')) out.push(p);
  }
  return out;
}

const files = roots.flatMap(walk);
// The e2e tests and the installed-command tests use the bundles in dist/: build them first (esbuild, seconds).
const built = spawnSync(process.execPath, ['scripts/build.mjs'], { stdio: 'inherit' });
if (built.status !== 0) {
  console.log('0 passed, 1 failed');
  process.exit(1);
}
mkdirSync('test-artifacts', { recursive: true });
// The support log of every program the tests start goes beside the other artefacts, not into the user's folder.
process.env.NULLBENCH_SUPPORT_LOG ??= join(process.cwd(), 'test-artifacts', 'support.jsonl');
// One seed for every property test (test/helpers/fuzz.ts): a fresh one each run unless FUZZ_SEED replays one.
if (!process.env.FUZZ_SEED) process.env.FUZZ_SEED = String(Math.floor(Math.random() * 2 ** 31));
const seedLine = `fuzz seed ${process.env.FUZZ_SEED} (replay this run's property tests: FUZZ_SEED=${process.env.FUZZ_SEED} npm test)`;
console.log(seedLine);
const args = ['--import', 'tsx', '--test', '--test-reporter=spec', '--test-concurrency=2', ...files];
const child = spawn(process.execPath, args, { stdio: ['ignore', 'pipe', 'inherit'] });
let pass = 0;
let fail = 0;
let skipped = 0;
let tail = '';
child.stdout.on('data', (buf) => {
  process.stdout.write(buf);
  tail = (tail + buf.toString()).slice(-4000);
});
child.on('close', (code) => {
  const m = (k) => Number((tail.match(new RegExp(`ℹ ${k} (\\d+)`)) || [])[1] || 0);
  pass = m('pass');
  fail = m('fail');
  skipped = m('skipped') + m('todo');
  if (code !== 0 && fail === 0) fail = 1;
  console.log(seedLine);
  console.log(`${pass} passed, ${fail} failed${skipped ? `, ${skipped} skipped` : ''}`);
  process.exit(code === 0 && fail === 0 && pass > 0 ? 0 : 1);
});
