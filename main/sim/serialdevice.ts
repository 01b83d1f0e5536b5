// Runs in Node (serial port). A simulated receiver on the far end of a serial line (in tests, one end of a pty
// pair made by socat), speaking the command set of one of our built-in templates and reading its levels from
// the simulated bench or from a script of exact values. Faults on demand; optionally it keeps the timing of
// a real UART at a given baud rate, since a pty passes bytes at once. It opens its end as a terminal stream
// (event-driven, no thread-pool hop per read or write), as close as software gets to a device's own UART.
import { closeSync, openSync } from 'node:fs';
import { ReadStream, WriteStream } from 'node:tty';
import { bitsPerCharacter, builtinTemplate, type SerialTemplate } from '../../app/serialtemplate';
import type { SimBench } from './bench';

export type SerialFault = 'garbage' | 'cut' | 'silence' | 'late' | 'refuse';

/** The personality of a simulated device: how it answers, per built-in command set. */
interface Personality {
  level(strengthDb: number): string;
  /** Parses a set-frequency command; returns Hz or null when the line is not one. */
  tune(cmd: string): number | null;
  /** The acknowledgement after tuning, or null for none. */
  ack: string | null;
  refusal: string;
}

/** hex-counts: 12-bit counts of a log detector, 20 counts per dB, S9 at 2048 (our invented receiver). */
export function hexCountsFromStrength(db: number): number {
  return Math.max(0, Math.min(4095, Math.round(2048 + 20 * db)));
}

/** s-point: S-units, 6 dB each (IARU R.1), S9 at 0 dB re S9; below S0 reads 0. */
export function sUnitsFromStrength(db: number): number {
  return Math.max(0, 9 + db / 6);
}

const PERSONALITIES: Record<string, Personality> = {
  'db-over-s9': {
    level: (db) => `LVL ${db.toFixed(1)}`,
    tune: (cmd) => {
      const m = /^FRQ (\d+)$/.exec(cmd);
      return m ? Number(m[1]) : null;
    },
    ack: 'OK',
    refusal: 'ERR',
  },
  'hex-counts': {
    level: (db) => `=${hexCountsFromStrength(db).toString(16).toUpperCase().padStart(4, '0')}`,
    tune: (cmd) => {
      const m = /^T(\d+(?:\.\d+)?)$/.exec(cmd);
      return m ? Math.round(Number(m[1]) * 1000) : null;
    },
    ack: null,
    refusal: '?',
  },
  's-point': {
    level: (db) => `S ${sUnitsFromStrength(db).toFixed(1)}`,
    tune: () => null,
    ack: null,
    refusal: 'E',
  },
};

export interface SerialDeviceOptions {
  /** The device's end of the line, e.g. the second pty of a socat pair. */
  path: string;
  /** Name of a built-in template: the command set this device speaks. */
  commandSet: string;
  bench?: SimBench;
  /** Exact strength values, dB re S9, used in turn (the last one repeats). */
  script?: number[];
  /** Keep a real UART's timing at this baud: each reply completes when query and reply would have crossed the wire. */
  wireBaud?: number;
  lateMs?: number;
}

export class SimSerialDevice {
  readonly template: SerialTemplate;
  private readonly personality: Personality;
  private readonly opts: SerialDeviceOptions;
  private fd: number | null = null;
  private rs: ReadStream | null = null;
  private ws: WriteStream | null = null;
  private buf = '';
  private faults: SerialFault[] = [];
  private scriptIndex = 0;
  frequencyHz = 7_100_000;
  readonly log: string[] = [];

  constructor(opts: SerialDeviceOptions) {
    const t = builtinTemplate(opts.commandSet);
    const p = PERSONALITIES[opts.commandSet];
    if (!t || !p) throw new Error(`no simulated device for command set "${opts.commandSet}"`);
    this.template = t;
    this.personality = p;
    this.opts = opts;
    if (opts.bench) this.frequencyHz = opts.bench.rx.frequencyHz;
  }

  /** Opens the device's end of the line (a terminal: the pty socat made, already raw). */
  async start(): Promise<void> {
    const fd = openSync(this.opts.path, 'r+');
    this.fd = fd;
    this.rs = new ReadStream(fd);
    this.rs.setRawMode(true);
    this.ws = new WriteStream(fd);
    this.rs.on('data', (b: Buffer) => this.onData(b.toString('latin1')));
    this.rs.on('error', () => undefined);
    this.ws.on('error', () => undefined);
  }

  async stop(): Promise<void> {
    const { rs, ws, fd } = this;
    this.rs = this.ws = null;
    this.fd = null;
    rs?.removeAllListeners('data');
    rs?.destroy();
    ws?.destroy();
    if (fd !== null) {
      try {
        closeSync(fd);
      } catch {
        // the streams may have closed it already
      }
    }
  }

  inject(fault: SerialFault, count = 1): void {
    for (let i = 0; i < count; i++) this.faults.push(fault);
  }

  private strength(): number {
    const s = this.opts.script;
    if (s && s.length) return s[Math.min(this.scriptIndex++, s.length - 1)];
    if (this.opts.bench) return this.opts.bench.read().strengthDb;
    return -20;
  }

  private onData(text: string): void {
    const arrived = performance.now();
    this.buf += text;
    const term = this.template.terminator;
    let i: number;
    while ((i = this.buf.indexOf(term)) >= 0) {
      const cmd = this.buf.slice(0, i);
      this.buf = this.buf.slice(i + term.length);
      this.command(cmd, arrived);
    }
  }

  private send(text: string, queryBytes: number, arrived: number): void {
    const ws = this.ws;
    if (!ws) return;
    const write = () => {
      if (this.ws === ws) ws.write(Buffer.from(text, 'latin1'));
    };
    const baud = this.opts.wireBaud;
    if (!baud) return write();
    // On a real line the query takes queryBytes characters to arrive and the reply its own length to go back.
    const due = arrived + ((queryBytes + text.length) * bitsPerCharacter(this.template) * 1000) / baud;
    const fire = () => {
      if (performance.now() >= due) write();
      else setImmediate(fire);
    };
    // Timers are good to a millisecond at best, a quarter of an exchange at 38400 baud: sleep until shortly
    // before, then poll the clock.
    const coarse = due - performance.now() - 2;
    if (coarse >= 1) setTimeout(fire, coarse);
    else fire();
  }

  private command(cmd: string, arrived: number): void {
    this.log.push(cmd);
    const t = this.template;
    const term = t.terminator;
    const qBytes = cmd.length + term.length;
    if (cmd === t.query) {
      const reply = this.personality.level(this.strength()) + term;
      const fault = this.faults.shift();
      switch (fault) {
        case undefined:
          return this.send(reply, qBytes, arrived);
        case 'garbage':
          return this.send(`\u00ff~?%#${term}`, qBytes, arrived);
        case 'cut':
          return this.send(reply.slice(0, Math.max(1, Math.floor(reply.length / 2))), qBytes, arrived);
        case 'silence':
          return;
        case 'late':
          setTimeout(() => this.send(reply, 0, performance.now()), this.opts.lateMs ?? 1500).unref();
          return;
        case 'refuse':
          return this.send(this.personality.refusal + term, qBytes, arrived);
      }
    }
    const hz = this.personality.tune(cmd);
    if (hz !== null) {
      this.frequencyHz = hz;
      this.opts.bench?.rx.tune(hz);
      if (this.personality.ack !== null) this.send(this.personality.ack + term, qBytes, arrived);
      return;
    }
    this.send(this.personality.refusal + term, qBytes, arrived);
  }
}
