// Runs in Node (TCP). The network rig-control text protocol, as the rig-control daemon serves it (default port
// 4532): one command per line, e.g. "F 7100000" (set frequency, answered "RPRT 0"), "f" (frequency in Hz),
// "l STRENGTH" (level in dB relative to S9), "l RAWSTR" (raw A/D counts), "M USB 2400" (mode and passband).
// A leading "+" asks for the extended form: an echo line "get_level: STRENGTH", the values, then "RPRT n".
// Errors come back as "RPRT -n" with the daemon's error numbers, mapped here to our vocabulary.
import { Socket } from 'node:net';
import { BenchError, type ErrorCode } from '../../app/errors';
import { LinkedSource } from './link';
import type { LevelSource, RawQuantity, RawSample, SourceCaps, SourceDriver } from './types';

export const DEFAULT_RIG_PORT = 4532;

/** The daemon's error numbers (include/hamlib/rig.h, enum rig_errcode_e) and what they mean for us. */
export const RPRT_CODES: Record<number, { name: string; code: ErrorCode; text: string }> = {
  1: { name: 'EINVAL', code: 'EREJECTED', text: 'invalid parameter' },
  2: { name: 'ECONF', code: 'EREJECTED', text: 'invalid configuration' },
  3: { name: 'ENOMEM', code: 'EIO', text: 'memory shortage in the daemon' },
  4: { name: 'ENIMPL', code: 'ENAVAIL', text: 'not implemented for this rig' },
  5: { name: 'ETIMEOUT', code: 'ETIMEOUT', text: 'the rig did not answer the daemon in time' },
  6: { name: 'EIO', code: 'EIO', text: 'I/O error between the daemon and the rig' },
  7: { name: 'EINTERNAL', code: 'EIO', text: 'internal error in the daemon' },
  8: { name: 'EPROTO', code: 'EPROTO', text: 'protocol error between the daemon and the rig' },
  9: { name: 'ERJCTED', code: 'EREJECTED', text: 'command rejected by the rig' },
  10: { name: 'ETRUNC', code: 'EPROTO', text: 'argument truncated' },
  11: { name: 'ENAVAIL', code: 'ENAVAIL', text: 'not available on this rig' },
  12: { name: 'ENTARGET', code: 'ENAVAIL', text: 'target VFO not accessible' },
  13: { name: 'BUSERROR', code: 'EIO', text: 'communication bus error' },
  14: { name: 'BUSBUSY', code: 'ETIMEOUT', text: 'communication bus collision' },
  15: { name: 'EARG', code: 'EREJECTED', text: 'invalid argument' },
  16: { name: 'EVFO', code: 'EREJECTED', text: 'invalid VFO' },
  17: { name: 'EDOM', code: 'EREJECTED', text: 'argument out of range' },
};

/** The extended form echoes a command by its long name. */
const LONG_NAMES: Record<string, string> = {
  F: 'set_freq',
  f: 'get_freq',
  l: 'get_level',
  M: 'set_mode',
  m: 'get_mode',
};

const RPRT_RE = /^RPRT (-?\d+)$/;
/** A line longer than this without an end is not this protocol. */
const MAX_LINE = 4096;
/** After a timeout or garbage, wait this long for stragglers and drop them before the next command, ms. */
const RESYNC_QUIET_MS = 60;

export interface RigNetSpec {
  host: string;
  port: number;
  /** Use the extended (+) response form (default) or the plain one. */
  extended: boolean;
  /** Which level to read: STRENGTH (dB re S9), RAWSTR (counts), or auto (STRENGTH when offered, else RAWSTR). */
  level: 'auto' | 'STRENGTH' | 'RAWSTR';
  /** Reply timeout per exchange, ms. */
  timeoutMs: number;
  /** Receive mode and passband to set on open, e.g. USB and 2400 Hz (0 = the rig's default passband). */
  mode: string | null;
  passbandHz: number;
}

const SYNTAX = 'net:HOST:PORT[,plain][,level=strength|raw][,mode=USB][,passband=HZ][,timeout=MS]';

/** Parses "net:127.0.0.1:4532", "net:[::1]:4532,plain", "net:rig.local:4532,level=raw,mode=CW,passband=500". */
export function parseRigNetSpec(spec: string): RigNetSpec {
  const s = spec.trim();
  if (!s.startsWith('net:')) throw new BenchError('EINVAL', `expected ${SYNTAX}, got "${spec}"`, 'source');
  const [addr, ...opts] = s.slice(4).split(',');
  let host: string;
  let portText: string | undefined;
  const v6 = /^\[([^\]]+)\](?::(.*))?$/.exec(addr);
  if (v6) {
    host = v6[1];
    portText = v6[2];
  } else {
    const parts = addr.split(':');
    if (parts.length > 2)
      throw new BenchError('EINVAL', `write an IPv6 address in brackets, e.g. net:[::1]:4532`, 'source');
    host = parts[0];
    portText = parts[1];
  }
  if (!host || !/^[A-Za-z0-9.\-:_]+$/.test(host))
    throw new BenchError(
      'EINVAL',
      `"${host}" is not a host name or address; expected ${SYNTAX}`,
      'source host',
    );
  const port = portText === undefined || portText === '' ? DEFAULT_RIG_PORT : Number(portText);
  if (!Number.isInteger(port) || port < 1 || port > 65535)
    throw new BenchError('EINVAL', `port must be 1..65535, got "${portText}"`, 'source port');
  const out: RigNetSpec = {
    host,
    port,
    extended: true,
    level: 'auto',
    timeoutMs: 1000,
    mode: null,
    passbandHz: 0,
  };
  opts.forEach((raw, i) => {
    const o = raw.trim();
    const where = `source option ${i + 1} ("${o}")`;
    if (o === 'plain') out.extended = false;
    else if (o === 'extended') out.extended = true;
    else {
      const [k, v] = o.split('=');
      if (v === undefined || v === '')
        throw new BenchError(
          'EINVAL',
          `expected plain, level=..., mode=..., passband=... or timeout=...`,
          where,
        );
      if (k === 'level') {
        const l = v.toLowerCase();
        if (l === 'strength') out.level = 'STRENGTH';
        else if (l === 'raw' || l === 'rawstr') out.level = 'RAWSTR';
        else if (l === 'auto') out.level = 'auto';
        else throw new BenchError('EINVAL', 'level must be strength, raw or auto', where);
      } else if (k === 'mode') {
        if (!/^[A-Z0-9]{1,12}$/i.test(v))
          throw new BenchError('EINVAL', 'mode must be a name like USB, LSB, CW, AM', where);
        out.mode = v.toUpperCase();
      } else if (k === 'passband') {
        const n = Number(v);
        if (!Number.isInteger(n) || n < 0 || n > 1e6)
          throw new BenchError(
            'EINVAL',
            'passband must be whole Hz, 0..1000000 (0 = the rig default)',
            where,
          );
        out.passbandHz = n;
      } else if (k === 'timeout') {
        const n = Number(v);
        if (!Number.isFinite(n) || n < 20 || n > 60000)
          throw new BenchError('EINVAL', 'timeout must be 20..60000 ms', where);
        out.timeoutMs = n;
      } else
        throw new BenchError(
          'EINVAL',
          `unknown option "${k}" (use plain, level, mode, passband, timeout)`,
          where,
        );
    }
  });
  return out;
}

export interface RigReply {
  /** Value lines, "Key: value" reduced to the value. */
  values: string[];
}

/**
 * The transaction helper of this protocol family: one command out, its whole reply in, framing checked,
 * errors mapped. Never two commands in flight; after a timeout or garbage, stale bytes are dropped first.
 */
export class RigNetLink {
  private socket: Socket | null = null;
  private lines: string[] = [];
  private partial = '';
  private waiter: (() => void) | null = null;
  private deadError: BenchError | null = null;
  private resync = false;
  readonly where: string;

  constructor(
    readonly host: string,
    readonly port: number,
    readonly timeoutMs: number,
  ) {
    this.where = `the rig-control daemon at ${host.includes(':') ? `[${host}]` : host}:${port}`;
  }

  get connected(): boolean {
    return this.socket !== null && this.deadError === null;
  }

  connect(): Promise<void> {
    this.close();
    this.lines = [];
    this.partial = '';
    this.deadError = null;
    this.resync = false;
    return new Promise((ok, fail) => {
      const sock = new Socket();
      let settled = false;
      const timer = setTimeout(
        () => {
          if (settled) return;
          settled = true;
          sock.destroy();
          fail(
            new BenchError('EIO', `cannot connect to ${this.where}: no answer within ${this.timeoutMs} ms`),
          );
        },
        Math.max(this.timeoutMs, 1000),
      );
      sock.setNoDelay(true);
      sock.on('data', (b: Buffer) => this.onData(b.toString('latin1')));
      sock.on('error', (e: NodeJS.ErrnoException) => {
        const err = new BenchError(
          'EIO',
          `${settled ? 'lost' : 'cannot connect to'} ${this.where}: ${socketReason(e)}`,
        );
        if (!settled) {
          settled = true;
          clearTimeout(timer);
          fail(err);
        } else this.die(err);
      });
      sock.on('close', () => this.die(new BenchError('EIO', `${this.where} closed the connection`)));
      sock.connect(this.port, this.host, () => {
        if (settled) return;
        settled = true;
        clearTimeout(timer);
        this.socket = sock;
        ok();
      });
    });
  }

  close(): void {
    const s = this.socket;
    this.socket = null;
    if (s) {
      s.removeAllListeners('close');
      s.on('error', () => undefined);
      s.destroy();
    }
    this.die(new BenchError('EIO', `the link to ${this.where} was closed`));
  }

  private die(err: BenchError): void {
    if (!this.deadError) this.deadError = err;
    this.socket = null;
    this.waiter?.();
  }

  private onData(text: string): void {
    const parts = (this.partial + text).split('\n');
    this.partial = parts.pop() ?? '';
    for (const p of parts) this.lines.push(p.replace(/\r$/, ''));
    if (this.partial.length > MAX_LINE) {
      this.partial = this.partial.slice(-MAX_LINE);
      this.lines.push('\u0000overlong');
    }
    this.waiter?.();
  }

  /** The next complete line before the deadline, or ETIMEOUT (with what arrived, if a reply was cut). */
  private async nextLine(cmd: string, deadline: number): Promise<string> {
    for (;;) {
      const l = this.lines.shift();
      if (l !== undefined) {
        if (l === '\u0000overlong')
          throw this.garbage(`a reply to "${cmd}" ran past ${MAX_LINE} characters without an end of line`);
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
            ? `cut reply from ${this.where} to "${cmd}": got ${JSON.stringify(cut)} and no end of line within ${this.timeoutMs} ms`
            : `no reply from ${this.where} to "${cmd}" within ${this.timeoutMs} ms`,
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

  private garbage(message: string): BenchError {
    this.resync = true;
    return new BenchError('EPROTO', `${this.where}: ${message}`);
  }

  /** Drops whatever is left of earlier replies (a late answer must not be taken for this command's). */
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
   * Sends one command and reads its reply.
   * @param cmd the short command, e.g. "l STRENGTH" or "F 7100000"
   * @param valueLines plain form only: how many value lines a successful reply has (0 for set commands)
   */
  async transact(cmd: string, extended: boolean, valueLines: number): Promise<RigReply> {
    if (this.deadError || !this.socket)
      throw this.deadError ?? new BenchError('EIO', `not connected to ${this.where}`);
    await this.drain();
    const sock = this.socket;
    if (!sock || this.deadError)
      throw this.deadError ?? new BenchError('EIO', `not connected to ${this.where}`);
    const deadline = Date.now() + this.timeoutMs;
    sock.write(`${extended ? '+' : ''}${cmd}\n`);
    return extended ? this.readExtended(cmd, deadline) : this.readPlain(cmd, valueLines, deadline);
  }

  private rprt(cmd: string, line: string): number | null {
    const m = RPRT_RE.exec(line.trim());
    return m ? Number(m[1]) : null;
  }

  private fail(cmd: string, n: number): BenchError {
    const k = RPRT_CODES[-n];
    return new BenchError(
      k?.code ?? 'EREJECTED',
      `${this.where} answered "${cmd}" with RPRT ${n} (${k ? `${k.name}: ${k.text}` : 'unknown error'})`,
    );
  }

  private async readPlain(cmd: string, valueLines: number, deadline: number): Promise<RigReply> {
    const values: string[] = [];
    for (;;) {
      const line = await this.nextLine(cmd, deadline);
      const n = this.rprt(cmd, line);
      if (n !== null) {
        if (n < 0) throw this.fail(cmd, n);
        if (values.length === valueLines) return { values };
        throw this.garbage(`answered "${cmd}" with RPRT ${n} after ${values.length} of ${valueLines} values`);
      }
      if (valueLines === 0)
        throw this.garbage(`answered "${cmd}" with ${JSON.stringify(line)}, expected RPRT`);
      values.push(line);
      if (values.length === valueLines) return { values };
    }
  }

  private async readExtended(cmd: string, deadline: number): Promise<RigReply> {
    const long = LONG_NAMES[cmd.split(' ')[0]] ?? cmd.split(' ')[0];
    const head = await this.nextLine(cmd, deadline);
    const early = this.rprt(cmd, head);
    if (early !== null) {
      if (early < 0) throw this.fail(cmd, early);
      throw this.garbage(`answered "+${cmd}" with RPRT ${early} and no "${long}:" line`);
    }
    if (!head.startsWith(`${long}:`))
      throw this.garbage(
        `answered "+${cmd}" with ${JSON.stringify(head)}, expected a line starting "${long}:"`,
      );
    const values: string[] = [];
    for (;;) {
      const line = await this.nextLine(cmd, deadline);
      const n = this.rprt(cmd, line);
      if (n !== null) {
        if (n < 0) throw this.fail(cmd, n);
        return { values };
      }
      const colon = line.indexOf(': ');
      values.push(colon >= 0 ? line.slice(colon + 2) : line);
      if (values.length > 64) throw this.garbage(`answered "+${cmd}" with more than 64 lines and no RPRT`);
    }
  }

  /** One number from a reply, or EPROTO showing what came instead. */
  number(cmd: string, reply: RigReply, index = 0): number {
    const text = (reply.values[index] ?? '').trim();
    const n = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/.test(text) ? Number(text) : NaN;
    if (!Number.isFinite(n))
      throw this.garbage(`answered "${cmd}" with ${JSON.stringify(reply.values[index] ?? '')}, not a number`);
    return n;
  }
}

function socketReason(e: NodeJS.ErrnoException): string {
  switch (e.code) {
    case 'ECONNREFUSED':
      return 'connection refused (is the daemon running, and on this port?)';
    case 'ECONNRESET':
      return 'connection reset by the daemon';
    case 'EPIPE':
      return 'the daemon closed the connection';
    case 'ENOTFOUND':
    case 'EAI_AGAIN':
      return 'host name not found';
    case 'EHOSTUNREACH':
    case 'ENETUNREACH':
      return 'host unreachable';
    default:
      return e.message;
  }
}

const CAPS: SourceCaps = { tune: true, trims: false, unbalance: false, mode: true, reconnect: true };

/** A receiver behind the network rig-control protocol, as a level source. */
export class RigNetSource implements LevelSource {
  readonly kind = 'net';
  readonly caps = CAPS;
  readonly link: RigNetLink;
  /** Levels the rig offers (from "l ?"), or null when the daemon would not say. */
  offered: string[] | null = null;
  private level: 'STRENGTH' | 'RAWSTR' = 'STRENGTH';
  private tunedHz = 0;

  constructor(
    readonly spec: string,
    readonly opts: RigNetSpec,
  ) {
    this.link = new RigNetLink(opts.host, opts.port, opts.timeoutMs);
  }

  get quantity(): RawQuantity {
    return this.level === 'RAWSTR' ? 'raw' : 'strength-db';
  }

  async open(): Promise<void> {
    const x = this.opts.extended;
    await this.link.connect();
    try {
      const r = await this.link.transact('l ?', x, 1);
      this.offered = r.values.join(' ').split(/\s+/).filter(Boolean);
    } catch (e) {
      if (e instanceof BenchError && e.code === 'EIO') throw e;
      this.offered = null;
    }
    const has = (l: string) => this.offered === null || this.offered.includes(l);
    if (this.opts.level === 'auto') {
      if (has('STRENGTH')) this.level = 'STRENGTH';
      else if (has('RAWSTR')) this.level = 'RAWSTR';
      else
        throw new BenchError(
          'ENAVAIL',
          `${this.link.where} offers neither STRENGTH nor RAWSTR (it offers ${this.offered!.join(' ') || 'no levels'})`,
          'source',
        );
    } else {
      if (!has(this.opts.level))
        throw new BenchError(
          'ENAVAIL',
          `${this.link.where} does not offer ${this.opts.level} (it offers ${this.offered!.join(' ')})`,
          'source',
        );
      this.level = this.opts.level;
    }
    if (this.opts.mode) await this.link.transact(`M ${this.opts.mode} ${this.opts.passbandHz}`, x, 0);
    this.tunedHz = this.link.number('f', await this.link.transact('f', x, 1));
  }

  async close(): Promise<void> {
    this.link.close();
  }

  /** Tunes, then reads the frequency back: a rig may round it to its own step. */
  async setFrequency(hz: number): Promise<void> {
    if (!(Number.isFinite(hz) && hz > 0))
      throw new BenchError('EINVAL', `must be a frequency above 0 Hz, got ${hz}`, 'freq_hz');
    const x = this.opts.extended;
    await this.link.transact(`F ${Math.round(hz)}`, x, 0);
    this.tunedHz = this.link.number('f', await this.link.transact('f', x, 1));
  }

  async read(): Promise<RawSample> {
    const cmd = `l ${this.level}`;
    const raw = this.link.number(cmd, await this.link.transact(cmd, this.opts.extended, 1));
    return { raw, quantity: this.quantity, freqHz: this.tunedHz, t: Date.now() };
  }

  now(): number {
    return Date.now();
  }

  sleep(ms: number): Promise<void> {
    return new Promise((r) => setTimeout(r, ms));
  }
}

export const rigNetDriver: SourceDriver = {
  kind: 'net',
  summary: 'a receiver behind the network rig-control protocol (the rig-control daemon, default port 4532)',
  syntax: SYNTAX,
  caps: CAPS,
  matches: (spec) => spec.startsWith('net:'),
  create: (spec) => new LinkedSource(new RigNetSource(spec, parseRigNetSpec(spec))),
  // "auto" reads STRENGTH whenever the rig offers it, which nearly every rig does.
  quantity: (spec) => (parseRigNetSpec(spec).level === 'RAWSTR' ? 'raw' : 'strength-db'),
};
