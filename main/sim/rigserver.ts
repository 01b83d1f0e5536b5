// Runs in Node (TCP, 127.0.0.1). A small server of our own speaking the network rig-control text protocol (the
// subset a level meter uses: F, f, M, m, l STRENGTH, l RAWSTR, l ?, q; plain and "+" extended replies), answering
// from the simulated bench or from a script of exact values, with faults on demand: garbage, a cut line,
// silence, a late answer, a refusal, a dropped connection. For tests, benchmarks and the demo.
import { createServer, type Server, type Socket } from 'node:net';
import type { SimBench } from './bench';

export type RigFault = 'garbage' | 'cut' | 'silence' | 'late' | 'reject' | 'disconnect';

export interface RigServerOptions {
  /** Readings come from this bench (its receiver is tuned by F). */
  bench?: SimBench;
  /** Or from this list of STRENGTH values, dB re S9, used in turn (the last one repeats). */
  script?: number[];
  /** Levels offered by "l ?" (default STRENGTH and RAWSTR). */
  levels?: string[];
  /** Delay before each level reply, ms (a rig behind the daemon takes time). */
  latencyMs?: number;
  /** For "late": how long the answer is held back, ms. */
  lateMs?: number;
}

/** RAWSTR of our invented receiver: 8-bit counts, 2 per dB, S9 at 120, clamped (an A/D of a log detector). */
export function rawCountsFromStrength(db: number): number {
  return Math.max(0, Math.min(255, Math.round(120 + 2 * db)));
}

export class RigServer {
  readonly server: Server;
  private readonly opts: RigServerOptions;
  private readonly sockets = new Set<Socket>();
  private faults: RigFault[] = [];
  private scriptIndex = 0;
  frequencyHz = 7_100_000;
  mode = 'USB';
  passbandHz = 2400;
  /** Every command received, in order (for tests). */
  readonly log: string[] = [];
  connections = 0;

  constructor(opts: RigServerOptions = {}) {
    this.opts = opts;
    if (opts.bench) this.frequencyHz = opts.bench.rx.frequencyHz;
    this.server = createServer((sock) => this.onConnection(sock));
  }

  /** Listens on 127.0.0.1; port 0 picks a free one. Resolves with the port. */
  listen(port = 0): Promise<number> {
    return new Promise((ok, fail) => {
      this.server.once('error', fail);
      this.server.listen(port, '127.0.0.1', () => {
        const a = this.server.address();
        ok(typeof a === 'object' && a ? a.port : port);
      });
    });
  }

  get port(): number {
    const a = this.server.address();
    return typeof a === 'object' && a ? a.port : 0;
  }

  async close(): Promise<void> {
    for (const s of this.sockets) s.destroy();
    await new Promise<void>((ok) => this.server.close(() => ok()));
  }

  /** Answers level queries from these STRENGTH values from now on (dB re S9, used in turn, the last repeating). */
  setScript(values: number[]): void {
    this.opts.script = values;
    this.scriptIndex = 0;
  }

  /** The next `count` level queries meet this fault. */
  inject(fault: RigFault, count = 1): void {
    for (let i = 0; i < count; i++) this.faults.push(fault);
  }

  /** Drops every open connection now (as a daemon that was killed). */
  dropAll(): void {
    for (const s of this.sockets) s.destroy();
  }

  private onConnection(sock: Socket): void {
    this.connections++;
    this.sockets.add(sock);
    sock.setNoDelay(true);
    let buf = '';
    sock.on('close', () => this.sockets.delete(sock));
    sock.on('error', () => undefined);
    sock.on('data', (b: Buffer) => {
      buf += b.toString('latin1');
      let nl: number;
      while ((nl = buf.indexOf('\n')) >= 0) {
        const line = buf.slice(0, nl).replace(/\r$/, '');
        buf = buf.slice(nl + 1);
        this.command(sock, line);
      }
    });
  }

  private strength(): number {
    if (this.opts.script && this.opts.script.length) {
      const s = this.opts.script;
      const v = s[Math.min(this.scriptIndex, s.length - 1)];
      this.scriptIndex++;
      return v;
    }
    if (this.opts.bench) return this.opts.bench.read().strengthDb;
    return -20;
  }

  private command(sock: Socket, raw: string): void {
    this.log.push(raw);
    const extended = raw.startsWith('+');
    const line = extended ? raw.slice(1).trim() : raw.trim();
    const [cmd, ...args] = line.split(/\s+/);
    const send = (text: string) => {
      if (!sock.destroyed) sock.write(text);
    };
    const ok = (echo: string) => send(extended ? `${echo}\nRPRT 0\n` : 'RPRT 0\n');
    const err = (echo: string, n: number) => send(extended ? `${echo}\nRPRT ${n}\n` : `RPRT ${n}\n`);
    const values = (echo: string, plain: string[], keyed: string[]) =>
      send(extended ? `${echo}\n${keyed.join('\n')}\nRPRT 0\n` : `${plain.join('\n')}\n`);
    switch (cmd) {
      case 'F': {
        const hz = Number(args[0]);
        if (!Number.isFinite(hz) || hz <= 0) return err(`set_freq: ${args.join(' ')}`, -1);
        this.frequencyHz = Math.round(hz);
        this.opts.bench?.rx.tune(this.frequencyHz);
        return ok(`set_freq: ${args[0]}`);
      }
      case 'f':
        return values('get_freq:', [String(this.frequencyHz)], [`Frequency: ${this.frequencyHz}`]);
      case 'M': {
        if (!args[0]) return err('set_mode:', -1);
        this.mode = args[0];
        this.passbandHz = Number(args[1] ?? 0) || this.passbandHz;
        return ok(`set_mode: ${args.join(' ')}`);
      }
      case 'm':
        return values(
          'get_mode:',
          [this.mode, String(this.passbandHz)],
          [`Mode: ${this.mode}`, `Passband: ${this.passbandHz}`],
        );
      case 'l': {
        const name = args[0] ?? '';
        const offered = this.opts.levels ?? ['STRENGTH', 'RAWSTR'];
        if (name === '?') return values('get_level: ?', [offered.join(' ') + ' '], [offered.join(' ') + ' ']);
        if (!offered.includes(name)) return err(`get_level: ${name}`, -1);
        const v = this.strength();
        const value = String(name === 'RAWSTR' ? rawCountsFromStrength(v) : v);
        const reply = extended ? `get_level: ${name}\n${value}\nRPRT 0\n` : `${value}\n`;
        const fault = this.faults.shift();
        const later = (ms: number, fn: () => void) => setTimeout(fn, ms).unref();
        const respond = () => {
          switch (fault) {
            case undefined:
              return send(reply);
            case 'garbage':
              return send(extended ? `get_level: ${name}\n\u00ff#?\u0007x!\nRPRT 0\n` : `\u00ff#?\u0007x!\n`);
            case 'cut':
              return send(reply.slice(0, Math.max(1, Math.floor(reply.length / 2))).replace(/\n$/, ''));
            case 'silence':
              return;
            case 'late':
              return later(this.opts.lateMs ?? 1500, () => send(reply));
            case 'reject':
              return err(`get_level: ${name}`, -9);
            case 'disconnect':
              return void sock.destroy();
          }
        };
        if (this.opts.latencyMs) later(this.opts.latencyMs, respond);
        else respond();
        return;
      }
      case 'q':
      case 'Q':
        return void sock.end();
      default:
        return err(line, -4);
    }
  }
}
