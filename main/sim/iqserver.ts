// Runs in Node (TCP, loopback only). Our own server speaking the SDR TCP sample protocol, for the demo
// and tests: sends the 12-byte greeting, obeys the 5-byte commands and streams unsigned 8-bit I,Q
// from a pluggable generator, paced in real time or as fast as the client reads.
import { createServer, type Server, type Socket } from 'node:net';
import { check } from '../../app/errors';
import { dsbGenerator, quantizeU8, type IqGenerator, type IqTuning } from './dsbsignal';

/** Tuner type reported in the greeting; 5 is the common silicon tuner id in the protocol's enum. */
const TUNER_TYPE = 5;
/** Number of gain steps reported in the greeting. */
const GAIN_COUNT = 29;

export interface IqServerOptions {
  /** TCP port on 127.0.0.1; 0 (default) picks a free one. */
  port?: number;
  /** Sample source; default a DSB signal 10 kHz above the initial centre with 40 dB suppression. */
  generator?: IqGenerator;
  /** Initial sample rate, samples/s. Default 2 048 000 (the protocol's usual default). */
  sampleRate?: number;
  /** Initial centre frequency, Hz. Default 7 090 000. */
  centerHz?: number;
  /** 'realtime' (default) sends samples at the sample rate; 'fast' as fast as the client takes them. */
  pace?: 'realtime' | 'fast';
  /** Samples per write. Default 16384. */
  blockSamples?: number;
  /** Byte value of 0.0. Default 127.5. */
  zero?: number;
  /** In real-time pacing, samples this many seconds late are dropped rather than sent. Default 0.5. */
  maxLagSeconds?: number;
}

/** What the server has been told, for tests and the demo's status line. */
export interface IqServerState extends IqTuning {
  ppm: number;
  digitalAgc: boolean;
  /** Every command received, in order: [code, parameter]. */
  commands: [number, number][];
}

export class IqSimServer {
  readonly state: IqServerState;
  private readonly clients = new Set<Socket>();

  private constructor(
    private readonly server: Server,
    readonly port: number,
    private readonly opts: Required<Omit<IqServerOptions, 'port'>>,
  ) {
    this.state = {
      sampleRate: opts.sampleRate,
      centerHz: opts.centerHz,
      gainTenthsDb: null,
      ppm: 0,
      digitalAgc: false,
      commands: [],
    };
  }

  /** Starts listening on 127.0.0.1. */
  static async start(options: IqServerOptions = {}): Promise<IqSimServer> {
    const sampleRate = options.sampleRate ?? 2_048_000;
    const centerHz = options.centerHz ?? 7_090_000;
    check(
      Number.isInteger(sampleRate) && sampleRate > 0,
      'sampleRate',
      `must be a whole positive number, got ${sampleRate}`,
    );
    const blockSamples = options.blockSamples ?? 16384;
    check(
      Number.isInteger(blockSamples) && blockSamples > 0,
      'blockSamples',
      `must be a whole positive number, got ${blockSamples}`,
    );
    const opts = {
      generator:
        options.generator ??
        dsbGenerator({
          carrierHz: centerHz + 10_000,
          toneHz: 1000,
          suppressionDb: 40,
          imd3Dbc: -35,
          toneDbfs: -10,
        }),
      sampleRate,
      centerHz,
      pace: options.pace ?? 'realtime',
      blockSamples,
      zero: options.zero ?? 127.5,
      maxLagSeconds: options.maxLagSeconds ?? 0.5,
    };
    const server = createServer();
    const port = await new Promise<number>((resolve, reject) => {
      server.once('error', reject);
      server.listen(options.port ?? 0, '127.0.0.1', () => {
        const a = server.address();
        resolve(typeof a === 'object' && a ? a.port : 0);
      });
    });
    const sim = new IqSimServer(server, port, opts);
    server.on('connection', (s) => sim.serve(s));
    return sim;
  }

  private serve(socket: Socket): void {
    this.clients.add(socket);
    socket.setNoDelay(true);
    const greeting = Buffer.alloc(12);
    greeting.write('RTL0', 0, 'latin1');
    greeting.writeUInt32BE(TUNER_TYPE, 4);
    greeting.writeUInt32BE(GAIN_COUNT, 8);
    socket.write(greeting);

    let pending = Buffer.alloc(0);
    socket.on('data', (b: Buffer) => {
      pending = Buffer.concat([pending, b]);
      while (pending.length >= 5) {
        this.command(pending.readUInt8(0), pending.readUInt32BE(1));
        pending = pending.subarray(5);
      }
    });

    const n = this.opts.blockSamples;
    const floats = new Float32Array(2 * n);
    let sent = 0;
    let rateAtStart = this.state.sampleRate;
    let t0 = performance.now();
    let sentAtT0 = 0;
    let timer: NodeJS.Timeout | null = null;
    let immediate: NodeJS.Immediate | null = null;
    let stopped = false;
    const stop = () => {
      stopped = true;
      if (timer) clearTimeout(timer);
      if (immediate) clearImmediate(immediate);
      this.clients.delete(socket);
    };
    socket.on('close', stop);
    socket.on('error', stop);

    const pump = () => {
      timer = null;
      immediate = null;
      if (stopped) return;
      if (this.state.sampleRate !== rateAtStart) {
        rateAtStart = this.state.sampleRate;
        t0 = performance.now();
        sentAtT0 = sent;
      }
      for (;;) {
        if (this.opts.pace === 'realtime') {
          const due = ((performance.now() - t0) / 1000) * this.state.sampleRate;
          // A client that fell behind loses samples, as with a real receiver whose buffer overflows;
          // the signal itself keeps running in real time.
          if (due - (sent - sentAtT0) > this.opts.maxLagSeconds * this.state.sampleRate)
            sent = sentAtT0 + Math.floor(due) - n;
          if (sent - sentAtT0 + n > due) {
            const waitMs = ((sent - sentAtT0 + n - due) / this.state.sampleRate) * 1000;
            timer = setTimeout(pump, Math.max(1, waitMs));
            return;
          }
        }
        this.opts.generator(floats, sent, this.state);
        const bytes = quantizeU8(floats, Buffer.allocUnsafe(2 * n), this.opts.zero);
        sent += n;
        if (!socket.write(bytes)) {
          socket.once('drain', pump);
          return;
        }
        if (this.opts.pace === 'fast') {
          // Let commands and other sockets in between blocks.
          immediate = setImmediate(pump);
          return;
        }
      }
    };
    pump();
  }

  private command(code: number, value: number): void {
    this.state.commands.push([code, value]);
    switch (code) {
      case 0x01:
        this.state.centerHz = value;
        break;
      case 0x02:
        if (value > 0) this.state.sampleRate = value;
        break;
      case 0x03:
        if (value === 0) this.state.gainTenthsDb = null;
        else this.state.gainTenthsDb ??= 0;
        break;
      case 0x04:
        this.state.gainTenthsDb = value | 0;
        break;
      case 0x05:
        this.state.ppm = value | 0;
        break;
      case 0x08:
        this.state.digitalAgc = value !== 0;
        break;
      default:
        // Other commands (IF gain, direct sampling, offset tuning, bias tee...) do not change the model.
        break;
    }
  }

  /** Connected clients. */
  get connections(): number {
    return this.clients.size;
  }

  /** Stops listening and drops every client. */
  async close(): Promise<void> {
    for (const s of this.clients) s.destroy();
    this.clients.clear();
    await new Promise<void>((resolve) => this.server.close(() => resolve()));
  }
}
