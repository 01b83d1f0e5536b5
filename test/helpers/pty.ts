// Test helpers: a pair of linked pseudo-terminals made by socat (Debian package socat), standing in for a serial
// cable: the app opens one end as its serial port, a simulated device opens the other.
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync } from 'node:fs';
import { join } from 'node:path';

export interface PtyPair {
  /** The app's end (the "serial port"). */
  a: string;
  /** The device's end. */
  b: string;
  /** Ends socat: both ends hang up, as an unplugged adapter. */
  kill(): Promise<void>;
  /** Starts socat again with the same link names (new pty devices behind them). */
  restart(): Promise<void>;
}

async function until(ok: () => boolean, ms: number, what: string): Promise<void> {
  const end = Date.now() + ms;
  while (!ok()) {
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 20));
  }
}

export async function ptyPair(dir: string, name = 'tty'): Promise<PtyPair> {
  const a = join(dir, `${name}-app`);
  const b = join(dir, `${name}-dev`);
  let proc: ChildProcess | null = null;
  const start = async () => {
    proc = spawn('socat', [`pty,raw,echo=0,link=${a}`, `pty,raw,echo=0,link=${b}`], { stdio: 'ignore' });
    await until(() => existsSync(a) && existsSync(b), 5000, 'socat to make the pty pair');
  };
  await start();
  return {
    a,
    b,
    async kill() {
      const p = proc;
      proc = null;
      if (!p || p.exitCode !== null) return;
      const gone = new Promise((r) => p.once('exit', r));
      p.kill('SIGTERM');
      await gone;
      await until(() => !existsSync(a), 2000, 'socat to remove its links');
    },
    restart: start,
  };
}
