// Runs in Node (TCP). Client of the common SDR TCP sample protocol: after connecting, the server sends a
// 12-byte greeting ("RTL0", tuner type u32 BE, gain count u32 BE) and then an endless stream of unsigned
// 8-bit I,Q pairs; the client sends 5-byte commands (code u8, parameter u32 BE).
import { Socket } from 'node:net';
import { BenchError, check } from '../../../app/errors';

export const GREETING_MAGIC = 'RTL0';
export const GREETING_BYTES = 12;

/** Command codes (docs/references.md § SDR TCP stream). */
export const IqCommand = {
  frequency: 0x01,
  sampleRate: 0x02,
  gainMode: 0x03,
  gain: 0x04,
  frequencyCorrection: 0x05,
  ifGain: 0x06,
  digitalAgc: 0x08,
  directSampling: 0x09,
  offsetTuning: 0x0a,
  gainByIndex: 0x0d,
  biasTee: 0x0e,
} as const;

export interface IqTcpOptions {
  /** Default 127.0.0.1. */
  host?: string;
  /** Default 1234. */
  port?: number;
  /** For connecting, the greeting and each block, ms. Default 3000. */
  timeoutMs?: number;
  /** Byte value of 0.0 in the stream (127.5 by default; some tools use 127 or 127.4). */
  zero?: number;
  /** Stop reading from the socket when this many bytes wait unread (backpressure). Default 16 MiB. */
  maxBufferedBytes?: number;
}

/**
 * One connection to an SDR sample server. Samples arrive continuously; readBlock() takes the oldest
 * unread ones. After a retune, samples already in flight still belong to the old frequency:
 * discard() them before measuring.
 */
export class IqTcpClient {
  readonly host: string;
  readonly port: number;
  readonly timeoutMs: number;
  /** Byte value of 0.0; settable between reads. */
  zero: number;
  tunerType = 0;
  gainCount = 0;

  private socket: Socket | null = null;
  private chunks: Buffer[] = [];
  private buffered = 0;
  private closedError: BenchError | null = null;
  private waiter: (() => void) | null = null;
  private readonly maxBuffered: number;

  constructor(options: IqTcpOptions = {}) {
    this.host = options.host ?? '127.0.0.1';
    this.port = options.port ?? 1234;
    this.timeoutMs = options.timeoutMs ?? 3000;
    this.zero = options.zero ?? 127.5;
    this.maxBuffered = options.maxBufferedBytes ?? 16 << 20;
    check(
      Number.isInteger(this.port) && this.port > 0 && this.port < 65536,
      'port',
      `must be 1..65535, got ${String(this.port)}`,
    );
    check(this.timeoutMs > 0, 'timeoutMs', `must be positive, got ${this.timeoutMs}`);
    check(this.zero >= 0 && this.zero <= 255, 'zero', `must be 0..255, got ${this.zero}`);
  }

  /** Connects and checks the greeting; EIO when nothing listens, EPROTO when the greeting is not this protocol's. */
  async connect(): Promise<this> {
    if (this.socket) throw new BenchError('ECONFLICT', 'already connected', 'connect');
    const where = `${this.host}:${this.port}`;
    const socket = new Socket();
    this.socket = socket;
    this.closedError = null;
    socket.on('data', (b: Buffer) => {
      this.chunks.push(b);
      this.buffered += b.length;
      if (this.buffered >= this.maxBuffered) socket.pause();
      this.wake();
    });
    socket.on('error', (e) => {
      this.closedError ??= new BenchError('EIO', `connection to ${where} failed: ${e.message}`, 'connection');
      this.wake();
    });
    socket.on('close', () => {
      this.closedError ??= new BenchError(
        'EIO',
        `the server at ${where} closed the connection`,
        'connection',
      );
      this.wake();
    });
    try {
      await new Promise<void>((resolve, reject) => {
        const timer = setTimeout(() => {
          reject(
            new BenchError('ETIMEOUT', `no answer from ${where} within ${this.timeoutMs} ms`, 'connection'),
          );
        }, this.timeoutMs);
        socket.once('connect', () => {
          clearTimeout(timer);
          resolve();
        });
        socket.once('error', (e) => {
          clearTimeout(timer);
          reject(new BenchError('EIO', `cannot connect to ${where}: ${e.message}`, 'connection'));
        });
        socket.connect(this.port, this.host);
      });
      socket.setNoDelay(true);
      const g = await this.take(GREETING_BYTES, 'greeting').catch((e: unknown) => {
        if (e instanceof BenchError && e.code === 'EIO') {
          const got = this.buffered;
          throw new BenchError(
            'EPROTO',
            `${where} closed the connection after ${got} of the ${GREETING_BYTES} greeting bytes: not an SDR sample server`,
            'greeting',
          );
        }
        throw e;
      });
      const magic = g.subarray(0, 4).toString('latin1');
      if (magic !== GREETING_MAGIC) {
        const hex = [...g].map((b) => b.toString(16).padStart(2, '0')).join(' ');
        const text = g.toString('latin1').replace(/[^\x20-\x7e]/g, '.');
        throw new BenchError(
          'EPROTO',
          `${where} is not an SDR sample server: its greeting starts "${text}" (${hex}), expected "${GREETING_MAGIC}"`,
          'greeting',
        );
      }
      this.tunerType = g.readUInt32BE(4);
      this.gainCount = g.readUInt32BE(8);
      return this;
    } catch (e) {
      await this.close();
      throw e;
    }
  }

  private wake(): void {
    const w = this.waiter;
    this.waiter = null;
    if (w) w();
  }

  /** Waits for n bytes and removes them from the buffer. */
  private async take(n: number, what: string): Promise<Buffer> {
    const deadline = Date.now() + this.timeoutMs;
    while (this.buffered < n) {
      if (this.closedError) throw this.closedError;
      if (!this.socket) throw new BenchError('EIO', 'not connected', what);
      this.socket.resume();
      const left = deadline - Date.now();
      if (left <= 0) {
        throw new BenchError(
          'ETIMEOUT',
          `${this.buffered} of ${n} bytes arrived within ${this.timeoutMs} ms`,
          what,
        );
      }
      await new Promise<void>((resolve) => {
        const timer = setTimeout(resolve, left);
        this.waiter = () => {
          clearTimeout(timer);
          resolve();
        };
      });
    }
    const out = Buffer.allocUnsafe(n);
    let filled = 0;
    while (filled < n) {
      const c = this.chunks[0];
      const k = Math.min(c.length, n - filled);
      c.copy(out, filled, 0, k);
      filled += k;
      if (k === c.length) this.chunks.shift();
      else this.chunks[0] = c.subarray(k);
    }
    this.buffered -= n;
    if (this.socket && this.buffered < this.maxBuffered) this.socket.resume();
    return out;
  }

  private async send(code: number, value: number, field: string): Promise<void> {
    const s = this.socket;
    if (!s || this.closedError) throw this.closedError ?? new BenchError('EIO', 'not connected', field);
    const b = Buffer.alloc(5);
    b.writeUInt8(code, 0);
    b.writeUInt32BE(value >>> 0, 1);
    await new Promise<void>((resolve, reject) =>
      s.write(b, (e) =>
        e ? reject(new BenchError('EIO', `sending ${field} failed: ${e.message}`, field)) : resolve(),
      ),
    );
  }

  /** Tunes the centre frequency, Hz (0 .. 4294967295). */
  setFrequency(hz: number): Promise<void> {
    check(
      Number.isInteger(hz) && hz >= 0 && hz <= 0xffffffff,
      'frequencyHz',
      `must be a whole number of Hz, 0..4294967295, got ${String(hz)}`,
    );
    return this.send(IqCommand.frequency, hz, 'frequencyHz');
  }

  /** Sets the complex sample rate, samples/s. */
  setSampleRate(sps: number): Promise<void> {
    check(
      Number.isInteger(sps) && sps > 0 && sps <= 0xffffffff,
      'sampleRate',
      `must be a whole positive number of samples/s, got ${String(sps)}`,
    );
    return this.send(IqCommand.sampleRate, sps, 'sampleRate');
  }

  /** Sets a manual tuner gain in dB (sent in tenths), or 'auto' for automatic gain. */
  async setGain(db: number | 'auto'): Promise<void> {
    if (db === 'auto') return this.send(IqCommand.gainMode, 0, 'gain');
    check(
      Number.isFinite(db) && db >= 0 && db <= 100,
      'gain',
      `must be 0..100 dB or 'auto', got ${String(db)}`,
    );
    await this.send(IqCommand.gainMode, 1, 'gain');
    await this.send(IqCommand.gain, Math.round(db * 10), 'gain');
  }

  /** Frequency correction, ppm (may be negative). */
  setFrequencyCorrection(ppm: number): Promise<void> {
    check(
      Number.isInteger(ppm) && Math.abs(ppm) <= 1000,
      'ppm',
      `must be a whole number -1000..1000, got ${String(ppm)}`,
    );
    return this.send(IqCommand.frequencyCorrection, ppm, 'ppm');
  }

  setDigitalAgc(on: boolean): Promise<void> {
    return this.send(IqCommand.digitalAgc, on ? 1 : 0, 'digitalAgc');
  }

  /** Reads n complex samples as raw bytes (2n: I, Q, I, Q ...). */
  async readBlock(n: number): Promise<Uint8Array> {
    check(
      Number.isInteger(n) && n > 0 && n <= 1 << 24,
      'samples',
      `must be 1..16777216 complex samples, got ${String(n)}`,
    );
    const b = await this.take(2 * n, 'samples');
    return new Uint8Array(b.buffer, b.byteOffset, b.length);
  }

  /** Reads n complex samples as float32 I,Q, full scale 1.0, using the current zero offset. */
  async readFloat(n: number): Promise<Float32Array> {
    const b = await this.readBlock(n);
    const out = new Float32Array(b.length);
    const z = this.zero;
    const s = 1 / Math.max(z, 255 - z);
    for (let i = 0; i < b.length; i++) out[i] = (b[i] - z) * s;
    return out;
  }

  /** Throws away samples already received or in flight: n more samples (e.g. after a retune). */
  async discard(n: number): Promise<void> {
    await this.readBlock(n);
  }

  /** Bytes received and not yet read. */
  get pendingBytes(): number {
    return this.buffered;
  }

  async close(): Promise<void> {
    const s = this.socket;
    this.socket = null;
    this.chunks = [];
    this.buffered = 0;
    if (!s) return;
    this.closedError ??= new BenchError('EIO', 'the connection was closed', 'connection');
    if (s.destroyed) return;
    await new Promise<void>((resolve) => {
      s.once('close', () => resolve());
      s.destroy();
    });
  }

  toString(): string {
    return `IqTcpClient(${this.host}:${this.port}, tuner=${this.tunerType}, gains=${this.gainCount}, zero=${this.zero})`;
  }
}
