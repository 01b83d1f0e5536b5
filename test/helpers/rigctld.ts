// Test helpers: the real rig-control daemon from Debian (package libhamlib-utils) with its dummy rig (model 1),
// started inside a test on a free loopback port and ended by its process id.
import { spawn, type ChildProcess } from 'node:child_process';
import { createServer, Socket } from 'node:net';

export function freePort(): Promise<number> {
  return new Promise((ok, fail) => {
    const s = createServer();
    s.once('error', fail);
    s.listen(0, '127.0.0.1', () => {
      const a = s.address();
      const port = typeof a === 'object' && a ? a.port : 0;
      s.close(() => ok(port));
    });
  });
}

function canConnect(port: number): Promise<boolean> {
  return new Promise((ok) => {
    const s = new Socket();
    s.once('error', () => ok(false));
    s.connect(port, '127.0.0.1', () => {
      s.destroy();
      ok(true);
    });
  });
}

export interface Daemon {
  port: number;
  proc: ChildProcess;
  /** Kills the daemon (SIGKILL: as a crash) and waits for it to go. */
  kill(): Promise<void>;
  /** Starts it again on the same port. */
  restart(): Promise<void>;
}

/** Starts `rigctld -m 1 -T 127.0.0.1 -t PORT` and waits until it accepts connections. */
export async function startRigctld(port?: number): Promise<Daemon> {
  const p = port ?? (await freePort());
  const d: Daemon = {
    port: p,
    proc: null as unknown as ChildProcess,
    async kill() {
      const proc = d.proc;
      if (proc.exitCode !== null || proc.signalCode !== null) return;
      const gone = new Promise((r) => proc.once('exit', r));
      proc.kill('SIGKILL');
      await gone;
    },
    async restart() {
      d.proc = spawn('rigctld', ['-m', '1', '-T', '127.0.0.1', '-t', String(p)], { stdio: 'ignore' });
      const end = Date.now() + 10_000;
      while (!(await canConnect(p))) {
        if (d.proc.exitCode !== null) throw new Error(`rigctld exited with ${d.proc.exitCode}`);
        if (Date.now() > end) throw new Error('rigctld did not start listening within 10 s');
        await new Promise((r) => setTimeout(r, 50));
      }
    },
  };
  await d.restart();
  return d;
}
