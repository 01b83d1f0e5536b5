// Runs in Node. Finds a Chromium-based browser on this machine and drives it headless over the DevTools
// protocol through --remote-debugging-pipe (file descriptors 3 and 4, messages of JSON ended by a NUL byte),
// so printing needs no browser-automation package. The web mode and the CLI print sheets with it
// (docs/design.md § Desktop shell and printing).
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, posix, win32 } from 'node:path';
import type { Readable, Writable } from 'node:stream';
import { BenchError } from '../../app/errors';

/** What the finder looks at: the platform, the environment, and whether a file exists. */
export interface FinderHost {
  platform: NodeJS.Platform;
  env: Record<string, string | undefined>;
  exists(path: string): boolean;
}

const nodeHost = (): FinderHost => ({ platform: process.platform, env: process.env, exists: existsSync });

/**
 * Chromium's program names on Linux, searched on PATH after /usr/bin/chromium. Another Chromium-based
 * browser is named by CHROMIUM_PATH (the code names no vendor's product).
 */
export const LINUX_NAMES = ['chromium', 'chromium-browser'];

/** Chromium's standard install path under the Windows program folders (its program file is chrome.exe). */
const WINDOWS_TAILS = [['Chromium', 'Application', 'chrome.exe']];

/** Chromium's app bundle on macOS (in /Applications or ~/Applications). */
const MAC_BUNDLES = ['Chromium.app/Contents/MacOS/Chromium'];

/** Every place looked at, in order (CHROMIUM_PATH first when set). */
export function chromiumCandidates(host: FinderHost = nodeHost()): string[] {
  const { env } = host;
  const out: string[] = [];
  if (env.CHROMIUM_PATH) out.push(env.CHROMIUM_PATH);
  if (host.platform === 'win32') {
    const roots = [env.PROGRAMFILES, env['PROGRAMFILES(X86)'], env.LOCALAPPDATA].filter(
      (r): r is string => !!r,
    );
    for (const tail of WINDOWS_TAILS) for (const root of roots) out.push(win32.join(root, ...tail));
  } else if (host.platform === 'darwin') {
    const roots = ['/Applications', ...(env.HOME ? [posix.join(env.HOME, 'Applications')] : [])];
    for (const b of MAC_BUNDLES) for (const root of roots) out.push(posix.join(root, b));
  } else {
    out.push('/usr/bin/chromium');
    const dirs = (env.PATH ?? '').split(':').filter((d) => d.startsWith('/'));
    for (const name of LINUX_NAMES) for (const dir of dirs) out.push(posix.join(dir, name));
  }
  return [...new Set(out)];
}

/**
 * The browser to print with: CHROMIUM_PATH when set (and then only it: a wrong setting is reported, not
 * passed over), else the first of chromiumCandidates that exists. ENAVAIL says where it looked.
 */
export function findChromium(host: FinderHost = nodeHost()): string {
  const set = host.env.CHROMIUM_PATH;
  if (set) {
    if (host.exists(set)) return set;
    throw new BenchError(
      'ENAVAIL',
      `headless Chromium was not found at ${set}, which CHROMIUM_PATH names: correct CHROMIUM_PATH or unset it to search the usual places`,
      'chromium',
    );
  }
  const all = chromiumCandidates(host);
  const found = all.find((p) => host.exists(p));
  if (found) return found;
  const hint =
    host.platform === 'linux' ? 'install Chromium (Debian: apt install chromium)' : 'install Chromium';
  throw new BenchError(
    'ENAVAIL',
    `headless Chromium was not found to print with (looked at ${all.slice(0, 4).join(', ')}${all.length > 4 ? ', …' : ''}): ${hint} or set CHROMIUM_PATH to any Chromium-based browser`,
    'chromium',
  );
}

type Pending = { resolve(v: Record<string, unknown>): void; reject(e: Error): void; method: string };
type EventHandler = (params: Record<string, unknown>, sessionId: string | undefined) => void;

/**
 * One headless Chromium on a DevTools pipe. `send` answers with the result or rejects with the protocol's
 * error; everything pending fails with ENAVAIL when the process goes away. `close` ends the browser and
 * removes its throw-away profile; `kill` ends it at once.
 */
export class ChromiumPipe {
  private nextId = 1;
  private readonly pending = new Map<number, Pending>();
  private readonly handlers = new Map<string, EventHandler[]>();
  private buffered: Buffer[] = [];
  private stderrTail = '';
  private exited: Error | null = null;
  private readonly exit: Promise<void>;

  private constructor(
    private readonly child: ChildProcess,
    private readonly profile: string,
  ) {
    const out = child.stdio[3] as Writable;
    const input = child.stdio[4] as Readable;
    out.on('error', () => undefined); // a broken pipe shows as the process's exit below
    input.on('data', (chunk: Buffer) => this.onData(chunk));
    child.stderr?.on('data', (b: Buffer) => (this.stderrTail = (this.stderrTail + b.toString()).slice(-600)));
    this.exit = new Promise<void>((done) => {
      const gone = (why: string) => {
        if (!this.exited) {
          const last = this.stderrTail.trim().split('\n').pop() ?? '';
          this.exited = new BenchError(
            'ENAVAIL',
            `headless Chromium ${why}${last ? ` (${last})` : ''}`,
            'chromium',
          );
          for (const p of this.pending.values()) p.reject(this.exited);
          this.pending.clear();
        }
        done();
      };
      child.once('error', (e) => gone(`could not be started: ${e.message}`));
      child.once('exit', (code, signal) => gone(`ended (${signal ?? `exit code ${code}`})`));
    });
  }

  /** Starts `exe` headless with `flags`, a fresh profile folder and the DevTools pipe. */
  static launch(exe: string, flags: readonly string[]): ChromiumPipe {
    const profile = mkdtempSync(join(tmpdir(), 'nullbench-print-'));
    const child = spawn(
      exe,
      [
        ...flags,
        '--remote-debugging-pipe',
        `--user-data-dir=${profile}`,
        '--no-default-browser-check',
        'about:blank',
      ],
      { stdio: ['ignore', 'ignore', 'pipe', 'pipe', 'pipe'], windowsHide: true },
    );
    return new ChromiumPipe(child, profile);
  }

  private onData(chunk: Buffer): void {
    let start = 0;
    for (let i = chunk.indexOf(0); i >= 0; i = chunk.indexOf(0, start)) {
      this.buffered.push(chunk.subarray(start, i));
      const text = Buffer.concat(this.buffered).toString('utf8');
      this.buffered = [];
      start = i + 1;
      this.onMessage(text);
    }
    if (start < chunk.length) this.buffered.push(chunk.subarray(start));
  }

  private onMessage(text: string): void {
    let msg: {
      id?: number;
      method?: string;
      params?: Record<string, unknown>;
      result?: Record<string, unknown>;
      error?: { message?: string };
      sessionId?: string;
    };
    try {
      msg = JSON.parse(text);
    } catch {
      return; // not ours to judge: the browser's messages are JSON; a stray one is skipped
    }
    if (typeof msg.id === 'number') {
      const p = this.pending.get(msg.id);
      if (!p) return;
      this.pending.delete(msg.id);
      if (msg.error)
        p.reject(
          new BenchError(
            'ENAVAIL',
            `headless Chromium refused ${p.method}: ${msg.error.message}`,
            'chromium',
          ),
        );
      else p.resolve(msg.result ?? {});
    } else if (msg.method) {
      for (const h of this.handlers.get(msg.method) ?? []) h(msg.params ?? {}, msg.sessionId);
    }
  }

  /** Calls a protocol method (on a page when sessionId is given). */
  send(
    method: string,
    params: Record<string, unknown> = {},
    sessionId?: string,
  ): Promise<Record<string, unknown>> {
    if (this.exited) return Promise.reject(this.exited);
    const id = this.nextId++;
    const out = this.child.stdio[3] as Writable;
    return new Promise((resolve, reject) => {
      this.pending.set(id, { resolve, reject, method });
      out.write(JSON.stringify({ id, method, params, ...(sessionId ? { sessionId } : {}) }) + '\0');
    });
  }

  on(method: string, handler: EventHandler): void {
    this.handlers.set(method, [...(this.handlers.get(method) ?? []), handler]);
  }

  /** Ends the browser: Browser.close, then a kill if it has not gone within `graceMs`; removes the profile. */
  async close(graceMs = 5000): Promise<void> {
    if (!this.exited) {
      void this.send('Browser.close').catch(() => undefined);
      const timer = setTimeout(() => this.kill(), graceMs);
      await this.exit;
      clearTimeout(timer);
    }
    await this.exit;
    rmSync(this.profile, { recursive: true, force: true, maxRetries: 3 });
  }

  /** Ends the browser at once (a print that ran out of time). */
  kill(): void {
    if (this.child.exitCode === null && this.child.signalCode === null) this.child.kill('SIGKILL');
  }

  /** The process's id (tests check that it is gone afterwards). */
  get pid(): number | undefined {
    return this.child.pid;
  }
}
