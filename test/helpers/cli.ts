// Test helpers: run the CLI in-process (fast) or as the installed command (real process, real exit code).
import { spawnSync } from 'node:child_process';
import { main } from '../../main/shells/cli/index';

export async function runCli(argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await main(argv, { out: (s) => (out += s), err: (s) => (err += s) });
  return { code, out, err };
}

/** Runs `npx nullbench ...` as a user would (needs the build in dist/). */
export function runBin(argv: string[], env: Record<string, string> = {}) {
  const r = spawnSync(process.execPath, ['bin/nullbench.js', ...argv], {
    encoding: 'utf8',
    env: { ...process.env, ...env },
    timeout: 120_000,
    maxBuffer: 256 * 1024 * 1024, // a whole bundle on standard output
  });
  return { code: r.status ?? -1, out: r.stdout, err: r.stderr };
}

/**
 * `log` on the fast simulated bench at `rateHz` with a safe set-up: 30 dBm PEP through a 50 dB pad is
 * -20 dBm into a receiver rated 10 dBm.
 */
export function fastLog(db: string, rateHz: number, ...more: string[]): string[] {
  return [
    'log',
    '--db',
    db,
    '--source',
    'sim:fast',
    '--rate-hz',
    String(rateHz),
    '--tx-pep-dbm',
    '30',
    '--max-input-dbm',
    '10',
    '--path',
    'pad:50',
    ...more,
  ];
}
