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
