// Runs in Node. Measures the flake rate: runs the test command (scripts/test.mjs) N times in a row, each run with
// its own fuzz seed unless FUZZ_SEED is set, keeps each run's log, and prints passes, failures, the failing tests
// with the seed that replays them, and the slowest tests seen.
//   npm run test:repeat -- N [group | path under test/ ...]
import { spawn } from 'node:child_process';
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';

const [countArg, ...rest] = process.argv.slice(2);
const runs = Number(countArg);
if (!Number.isInteger(runs) || runs < 1 || runs > 1000) {
  console.error(
    `test:repeat: the first argument is how many runs (a whole number 1..1000), got "${countArg ?? ''}"\n` +
      'usage: npm run test:repeat -- N [unit | main | e2e | test/PATH ...]',
  );
  process.exit(2);
}
const logDir = join('test-artifacts', 'repeat');
mkdirSync(logDir, { recursive: true });

/** One run of the test command; resolves with its whole output and exit code. */
function once(seed) {
  return new Promise((resolve) => {
    const child = spawn(process.execPath, ['scripts/test.mjs', ...rest], {
      env: { ...process.env, FUZZ_SEED: seed },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let text = '';
    child.stdout.on('data', (b) => (text += b));
    child.stderr.on('data', (b) => (text += b));
    child.on('close', (code) => resolve({ text, code }));
  });
}

/** The failing tests of one run, from the reporter's closing "failing tests" list. */
function failingTests(text) {
  const at = text.lastIndexOf('✖ failing tests:');
  if (at < 0) return [];
  const out = [];
  let where = '';
  for (const line of text.slice(at).split('\n').slice(1)) {
    const loc = line.match(/^test at (\S+)/);
    if (loc) where = loc[1].replace(/^file:\/\/\S*?\/(test\/)/, '$1');
    const name = line.match(/^✖ (.+?)(?: \([\d.]+ms\))?$/);
    if (name) out.push(`${name[1]}${where ? ` (${where})` : ''}`);
  }
  return out;
}

/** Durations of every finished test and suite, by its name and nesting depth. */
function durations(text) {
  const out = [];
  const at = text.lastIndexOf('✖ failing tests:');
  for (const line of (at < 0 ? text : text.slice(0, at)).split('\n')) {
    const m = line.match(/^(\s*)[✔✖] (.+) \(([\d.]+)ms\)$/);
    if (m) out.push({ depth: m[1].length / 2, name: m[2], ms: Number(m[3]) });
  }
  return out;
}

const failures = [];
const slow = new Map();
let passedRuns = 0;
const started = Date.now();
for (let k = 1; k <= runs; k++) {
  const seed = process.env.FUZZ_SEED ?? String(Math.floor(Math.random() * 2 ** 31));
  const t0 = Date.now();
  const { text, code } = await once(seed);
  const log = join(logDir, `run-${k}.log`);
  writeFileSync(log, text);
  const closing = text.match(/^(\d+) passed, (\d+) failed/m);
  const ok = code === 0 && closing && closing[2] === '0';
  const s = ((Date.now() - t0) / 1000).toFixed(0);
  if (ok) passedRuns++;
  else failures.push({ run: k, seed, log, tests: failingTests(text) });
  for (const d of durations(text)) {
    const key = `${d.depth}\t${d.name}`;
    slow.set(key, Math.max(slow.get(key) ?? 0, d.ms));
  }
  console.log(
    `run ${k}/${runs}: ${ok ? 'passed' : 'FAILED'} (${closing ? closing[0] : `no closing line, exit ${code}`}) ` +
      `in ${s} s, fuzz seed ${seed}, log ${log}`,
  );
}

console.log('');
console.log('slowest suites and tests seen (longest run of each):');
const top = [...slow.entries()].sort((a, b) => b[1] - a[1]).slice(0, 12);
for (const [key, ms] of top) {
  const [depth, name] = key.split('\t');
  console.log(`  ${(ms / 1000).toFixed(1).padStart(6)} s  ${'  '.repeat(Number(depth))}${name}`);
}
console.log('');
for (const f of failures) {
  console.log(
    `run ${f.run} failed (replay: FUZZ_SEED=${f.seed} npm test -- ${rest.join(' ')}; log ${f.log}):`,
  );
  for (const t of f.tests.length ? f.tests : ['(no failing test named: see the log)'])
    console.log(`  ✖ ${t}`);
}
const minutes = ((Date.now() - started) / 60000).toFixed(1);
console.log(`${runs} runs of ${rest.length ? rest.join(' ') : 'the whole suite'} in ${minutes} min`);
console.log(`${passedRuns} passed, ${runs - passedRuns} failed`);
process.exit(passedRuns === runs ? 0 : 1);
