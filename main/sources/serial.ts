// Runs in Node (serial port). Receivers that answer short ASCII commands on a serial line, read through a
// command-set template (app/serialtemplate): the driver is one transaction helper; each receiver is a table.
// The port is opened with the serialport package, which sets baud, data bits, parity and stop bits through
// termios on Linux and macOS and through the comm API on Windows (COM ports), and reports an unplugged USB
// adapter as a closed port, which we turn into EIO and a reconnect.
import type { SerialPort } from 'serialport';
import { BenchError } from '../../app/errors';
import {
  STANDARD_BAUDS,
  ackMatches,
  builtinTemplate,
  formatSetFrequency,
  parseLevelReply,
  validateTemplate,
  type SerialTemplate,
} from '../../app/serialtemplate';
import { LinkedSource } from './link';
import type { LevelSource, RawSample, SourceCaps, SourceDriver, SourceEnv } from './types';

const SYNTAX = 'serial:/dev/PATH@BAUD[,template=NAME][,timeout=MS]';
/** After a timeout or garbage, wait this long for stragglers and drop them, ms. */
const RESYNC_QUIET_MS = 40;
const MAX_LINE = 1024;

export interface SerialSpec {
  path: string;
  baud: number;
  template: string | null;
  timeoutMs: number | null;
}

/** Parses "serial:/dev/ttyUSB0@38400", "serial:COM3@9600,template=db-over-s9". */
export function parseSerialSpec(spec: string): SerialSpec {
  const s = spec.trim();
  if (!s.startsWith('serial:')) throw new BenchError('EINVAL', `expected ${SYNTAX}, got "${spec}"`, 'source');
  const [portPart, ...opts] = s.slice(7).split(',');
  const at = portPart.lastIndexOf('@');
  if (at <= 0)
    throw new BenchError(
      'EINVAL',
      `needs the port and the baud rate, e.g. serial:/dev/ttyUSB0@38400 (got "${spec}")`,
      'source',
    );
  const path = portPart.slice(0, at);
  const baudText = portPart.slice(at + 1);
  const baud = Number(baudText);
  if (!(STANDARD_BAUDS as readonly number[]).includes(baud))
    throw new BenchError(
      'EINVAL',
      `baud rate "${baudText}" is not one of ${STANDARD_BAUDS.join(', ')}`,
      'source baud',
    );
  const out: SerialSpec = { path, baud, template: null, timeoutMs: null };
  opts.forEach((raw, i) => {
    const [k, v] = raw.trim().split('=');
    const where = `source option ${i + 1} ("${raw.trim()}")`;
    if (k === 'template' && v) out.template = v;
    else if (k === 'timeout' && v) {
      const n = Number(v);
      if (!Number.isFinite(n) || n < 20 || n > 10000)
        throw new BenchError('EINVAL', 'timeout must be 20..10000 ms', where);
      out.timeoutMs = n;
    } else throw new BenchError('EINVAL', 'expected template=NAME or timeout=MS', where);
  });
  return out;
}

function openReason(e: Error): string {
  const m = e.message;
  if (/No such file|ENOENT|cannot find/i.test(m))
    return 'no such port (is the adapter plugged in, and is this its name?)';
  if (/Permission denied|EACCES|Access denied/i.test(m))
    return 'permission denied (on Linux add your user to the "dialout" group and log in again)';
  if (/busy|EBUSY|Resource temporarily unavailable|lock/i.test(m)) return 'in use by another program';
  return m;
}

/**
 * The transaction helper of the serial family: one command out (terminator added), one reply line in
 * (split on the template's terminator), the template's inter-command delay kept, stale bytes dropped after a
 * fault. Never two commands in flight.
 */
export class SerialLink {
  private port: SerialPort | null = null;
  private lines: string[] = [];
  private partial = '';
  private waiter: (() => void) | null = null;
  private deadError: BenchError | null = null;
  private resync = false;
  private lastReplyAt = 0;
  /** Bytes written and read, for the link benchmark. */
  bytesOut = 0;
  bytesIn = 0;

  constructor(
    readonly path: string,
    readonly baud: number,
    readonly template: SerialTemplate,
    readonly timeoutMs: number,
  ) {}

  get where(): string {
    return `the receiver on ${this.path}`;
  }

  async open(): Promise<void> {
    await this.close();
    this.deadError = null;
    this.lines = [];
    this.partial = '';
    this.resync = false;
    const t = this.template;
    // Loaded on first use: the native module is needed only when a serial receiver is read.
    const { SerialPort } = await import('serialport');
    return new Promise((ok, fail) => {
      const port = new SerialPort({
        path: this.path,
        baudRate: this.baud,
        dataBits: t.dataBits,
        parity: t.parity,
        stopBits: t.stopBits,
        autoOpen: false,
        lock: true,
      });
      port.open((e) => {
        if (e) return fail(new BenchError('EIO', `cannot open ${this.path}: ${openReason(e)}`));
        this.port = port;
        port.on('data', (b: Buffer) => this.onData(b.toString('latin1')));
        port.on('close', (err?: Error & { disconnected?: boolean }) =>
          this.die(
            new BenchError(
              'EIO',
              err?.disconnected
                ? `${this.path} went away (adapter unplugged or the line closed)`
                : `${this.path} was closed`,
            ),
          ),
        );
        port.on('error', (err: Error) =>
          this.die(
            new BenchError(
              'EIO',
              /EIO|ENXIO|ENODEV|i\/o error|bad file descriptor/i.test(err.message)
                ? `${this.path} went away (adapter unplugged or the line closed): ${err.message}`
                : `${this.path}: ${err.message}`,
            ),
          ),
        );
        ok();
      });
    });
  }

  /** Closes the port; resolves once the system has let go of it (its lock too), so it can be opened again. */
  close(): Promise<void> {
    const p = this.port;
    this.port = null;
    this.die(new BenchError('EIO', `${this.path} was closed`));
    if (!p) return Promise.resolve();
    p.removeAllListeners('close');
    p.removeAllListeners('data');
    p.on('error', () => undefined);
    return new Promise((ok) => (p.isOpen ? p.close(() => ok()) : ok()));
  }

  private die(err: BenchError): void {
    if (!this.deadError) this.deadError = err;
    this.port = null;
    this.waiter?.();
  }

  private onData(text: string): void {
    this.bytesIn += text.length;
    const term = this.template.terminator;
    const parts = (this.partial + text).split(term);
    this.partial = parts.pop() ?? '';
    this.lines.push(...parts);
    if (this.partial.length > MAX_LINE) {
      this.partial = '';
      this.lines.push('\u0000overlong');
    }
    this.waiter?.();
  }

  private async nextLine(cmd: string, deadline: number): Promise<string> {
    for (;;) {
      const l = this.lines.shift();
      if (l !== undefined) {
        if (l === '\u0000overlong') {
          this.resync = true;
          throw new BenchError(
            'EPROTO',
            `${this.where} sent more than ${MAX_LINE} characters without the terminator`,
          );
        }
        return l;
      }
      if (this.deadError) throw this.deadError;
      const left = deadline - Date.now();
      if (left <= 0) {
        this.resync = true;
        const cut = this.partial;
        throw new BenchError(
          'ETIMEOUT',
          cut
            ? `cut reply from ${this.where} to ${JSON.stringify(cmd)}: got ${JSON.stringify(cut)} and no terminator within ${this.timeoutMs} ms`
            : `no reply from ${this.where} to ${JSON.stringify(cmd)} within ${this.timeoutMs} ms`,
        );
      }
      await new Promise<void>((ok) => {
        const t = setTimeout(ok, left);
        this.waiter = () => {
          clearTimeout(t);
          ok();
        };
      });
      this.waiter = null;
    }
  }

  /** The byte stream may be out of step (a reply that is not this command set): drop stale bytes first. */
  desync(): void {
    this.resync = true;
  }

  private async drain(): Promise<void> {
    if (this.resync) {
      this.resync = false;
      do {
        this.lines = [];
        this.partial = '';
        await new Promise((r) => setTimeout(r, RESYNC_QUIET_MS));
      } while (this.lines.length > 0 || this.partial !== '');
    }
    this.lines = [];
  }

  /**
   * Sends a command; returns its reply line, or null when `expectReply` is false.
   * @param optional a reply may or may not come (init commands): no timeout error
   */
  async transact(cmd: string, expectReply: boolean, optional = false): Promise<string | null> {
    if (this.deadError || !this.port)
      throw this.deadError ?? new BenchError('EIO', `${this.path} is not open`);
    await this.drain();
    const gap = this.template.interCommandDelayMs - (Date.now() - this.lastReplyAt);
    if (gap > 0) await new Promise((r) => setTimeout(r, gap));
    const port = this.port;
    if (!port || this.deadError) throw this.deadError ?? new BenchError('EIO', `${this.path} is not open`);
    const out = cmd + this.template.terminator;
    this.bytesOut += out.length;
    const deadline = Date.now() + this.timeoutMs;
    port.write(Buffer.from(out, 'latin1'));
    if (!expectReply) {
      // Nothing comes back: the command has left when the UART has sent it.
      await new Promise<void>((ok) => port.drain(() => ok()));
      this.lastReplyAt = Date.now();
      return null;
    }
    try {
      const line = await this.nextLine(cmd, deadline);
      this.lastReplyAt = Date.now();
      return line;
    } catch (e) {
      if (optional && e instanceof BenchError && e.code === 'ETIMEOUT') {
        this.resync = false;
        return null;
      }
      throw e;
    }
  }
}

/** A receiver on a serial line, read through a command-set template. */
export class SerialSource implements LevelSource {
  readonly kind = 'serial';
  readonly caps: SourceCaps;
  readonly link: SerialLink;
  readonly template: SerialTemplate;
  private tunedHz = 0;

  constructor(
    readonly spec: string,
    parsed: SerialSpec,
    template: SerialTemplate,
  ) {
    this.template = template;
    this.caps = { tune: template.setFrequency !== null, trims: false, unbalance: false, reconnect: true };
    this.link = new SerialLink(parsed.path, parsed.baud, template, parsed.timeoutMs ?? template.timeoutMs);
  }

  get quantity() {
    return this.template.quantity;
  }

  async open(): Promise<void> {
    await this.link.open();
    for (const c of this.template.init) await this.link.transact(c, true, true);
  }

  async close(): Promise<void> {
    await this.link.close();
  }

  /**
   * Retunes through the template's command. A template without one cannot tune: the frequency is then only
   * recorded as the one the operator has tuned to by hand (it selects the calibration band).
   */
  async setFrequency(hz: number): Promise<void> {
    if (!(Number.isFinite(hz) && hz > 0))
      throw new BenchError('EINVAL', `must be a frequency above 0 Hz, got ${hz}`, 'freq_hz');
    const sf = this.template.setFrequency;
    if (sf) {
      const cmd = formatSetFrequency(this.template, hz);
      const reply = await this.link.transact(cmd, sf.ack !== null);
      if (reply !== null && !ackMatches(this.template, reply))
        throw new BenchError(
          'EREJECTED',
          `${this.link.where} answered ${JSON.stringify(cmd)} with ${JSON.stringify(reply)}, not the acknowledgement ${JSON.stringify(sf.ack)}`,
        );
    }
    this.tunedHz = hz;
  }

  async read(): Promise<RawSample> {
    const line = await this.link.transact(this.template.query, true);
    let raw: number;
    try {
      raw = parseLevelReply(this.template, line ?? '');
    } catch (e) {
      // A reply that is not this command set means the byte stream may be out of step: resynchronise.
      this.link.desync();
      throw new BenchError('EPROTO', `${this.link.where}: ${(e as Error).message}`);
    }
    return { raw, quantity: this.template.quantity, freqHz: this.tunedHz, t: Date.now() };
  }

  now(): number {
    return Date.now();
  }

  sleep(ms: number): Promise<void> {
    return new Promise((r) => setTimeout(r, ms));
  }
}

/** The template for a spec: the one given (a stored template), else a built-in one named in the spec. */
export function resolveTemplate(parsed: SerialSpec, env?: SourceEnv): SerialTemplate {
  if (env?.template != null) {
    const t = validateTemplate(env.template, 'template');
    if (parsed.template && parsed.template !== t.name)
      throw new BenchError(
        'EINVAL',
        `the source names template "${parsed.template}" but "${t.name}" was given`,
        'template',
      );
    return t;
  }
  if (!parsed.template)
    throw new BenchError(
      'EINVAL',
      'a serial receiver needs a command-set template: --template NAME (see "nullbench templates list")',
      'template',
    );
  const b = builtinTemplate(parsed.template);
  if (!b)
    throw new BenchError(
      'EINVAL',
      `no template named "${parsed.template}" (see "nullbench templates list")`,
      'template',
    );
  return b;
}

export const serialDriver: SourceDriver = {
  kind: 'serial',
  summary: 'a receiver answering ASCII commands on a serial port, through a command-set template',
  syntax: SYNTAX,
  caps: { tune: true, trims: false, unbalance: false, reconnect: true, template: true },
  matches: (spec) => spec.startsWith('serial:'),
  create: (spec, env) => {
    const parsed = parseSerialSpec(spec);
    return new LinkedSource(new SerialSource(spec, parsed, resolveTemplate(parsed, env)));
  },
  quantity: (spec, env) => resolveTemplate(parseSerialSpec(spec), env).quantity,
};
