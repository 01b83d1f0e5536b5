// Benchmark: how fast the CLI starts. `nullbench --version` and `--help` load only the command list (each
// command's code is its own chunk, loaded when it runs: main/shells/cli/index.ts), so they should start within
// 2× of bare Node. Runs each in turn, interleaved, and prints medians side by side with bare Node's.
// Needs the build (npm run build).
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';

const RUNS = Number(process.env.STARTUP_RUNS ?? 21);
const cases: [string, string[]][] = [
  ['bare Node (node -e 0)', ['-e', '0']],
  ['nullbench --version', ['bin/nullbench.js', '--version']],
  ['nullbench --help', ['bin/nullbench.js', '--help']],
  ['nullbench read --help', ['bin/nullbench.js', 'read', '--help']],
];

function once(args: string[]): number {
  const t0 = process.hrtime.bigint();
  const r = spawnSync(process.execPath, args, { stdio: ['ignore', 'ignore', 'inherit'] });
  const ms = Number(process.hrtime.bigint() - t0) / 1e6;
  if (r.status !== 0) throw new Error(`${args.join(' ')} exited with ${r.status}`);
  return ms;
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

if (!existsSync('dist/cli.js')) {
  console.error('startup bench: run "npm run build" first');
  process.exit(2);
}
const times = cases.map(() => [] as number[]);
for (let i = 0; i < RUNS; i++) cases.forEach(([, args], k) => times[k].push(once(args)));
const base = median(times[0]);
console.log(`${RUNS} runs each, interleaved; medians (and p90)`);
cases.forEach(([name], k) => {
  const m = median(times[k]);
  const p90 = [...times[k]].sort((a, b) => a - b)[Math.floor(0.9 * (RUNS - 1))];
  console.log(
    `  ${name.padEnd(26)} ${m.toFixed(0).padStart(5)} ms  (p90 ${p90.toFixed(0)} ms)  ${(m / base).toFixed(2)}× bare Node`,
  );
});
const ratio = median(times[1]) / base;
console.log(`--version: ${ratio.toFixed(2)}× bare Node (target ≤ 2×): ${ratio <= 2 ? 'met' : 'NOT met'}`);
