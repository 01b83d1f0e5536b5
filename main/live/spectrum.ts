// Runs in Node. The live spectrum: an SDR sample stream around the open session's carrier, averaged over
// its last frames, measured (carrier, tones, products, floor) and thinned to a trace after every frame, here
// on the main side so the page needs neither WebAssembly nor a looser content policy. `iqsim` starts our own SDR sample
// server fed by the simulated bench's transmitter, so the trimmers turned in the app move its carrier.
import { analysePath, rxToDut, validatePath } from '../../app/path';
import { BenchError, check } from '../../app/errors';
import { SlidingSpectrum } from '../../app/spectrum/sliding';
import { ROLE_LABELS, type ParsedArgs, type Session } from '../../app/api';
import type { SpectrumCallResults, SpectrumComponent, SpectrumFrame } from '../../app/api/spectrum';
import {
  defaultFftSize,
  isFftSize,
  measureSpectrum,
  SpectrumAverager,
  traceSpectrum,
  Window,
  type ComponentRole,
} from '../../app/spectrum';
import {
  dbfsToDbm,
  injectionDbfsCalibration,
  profileDbfsCalibration,
  type DbfsCalibration,
} from '../../app/spectrum/dbfs';
import { checkTwoToneParams } from '../../app/spectrum/measure';
import type { LiveBench } from './live';
import { IqTcpClient } from '../sources/iq/iqtcp';
import { IqSimServer } from '../sim/iqserver';
import { SimTransmitter } from '../sim/transmitter';
import { SIM_SDR_DBM_AT_FULL_SCALE, transmitterIqGenerator } from '../sim/txiq';
import { SimSource } from '../sources/sim';
import { parseIqSpec } from '../sources/iq/spec';

const ROLE_OF: Record<ComponentRole, SpectrumComponent['role']> = {
  carrier: 'carrier',
  upper: 'upper',
  lower: 'lower',
  imd3Upper: 'imd3u',
  imd3Lower: 'imd3l',
  imd5Upper: 'imd5u',
  imd5Lower: 'imd5l',
};

/** Points in the trace sent to the page: plenty for a chart a few hundred pixels wide. */
const TRACE_POINTS = 480;
/** The trace spans the carrier +/- this many tone spacings (IMD5 sits at 5). */
const SPAN_TONES = 6.5;
/** Share of 8-bit samples at 0 or 255 above which the SDR counts as overdriven (common practice: any clipping). */
const CLIP_SHARE = 1e-4;

/**
 * How far below the injected line every other measured line must lie for the calibration to be taken
 * (common practice: the reference must dominate its neighbours by far more than the level accuracy wanted).
 */
export const INJECTION_CLEAR_DB = 40;
export interface SpectrumStreamDeps {
  live: () => LiveBench | null;
  emit: (frame: SpectrumFrame) => void;
  /** An error that stopped the stream. */
  failed: (e: BenchError) => void;
}

/** The live SDR stream of the open session: start, stop, the dBm at 0 dBFS, and the latest frame. */
export class SpectrumStream {
  private client: IqTcpClient | null = null;
  private server: IqSimServer | null = null;
  private running: Promise<void> | null = null;
  private stopping = false;
  /** The IQ source spec the stream reads, while it runs. */
  source: string | null = null;
  private latest: SpectrumFrame | null = null;
  /** dBm at 0 dBFS per receiver (source spec), as set by the user or the sim's own figure. */
  private readonly calibrations = new Map<string, DbfsCalibration>();

  constructor(private readonly deps: SpectrumStreamDeps) {}

  state(): SpectrumCallResults['spectrumStart'] {
    return {
      running: this.running !== null,
      source: this.source,
      calibration: this.source ? (this.calibrations.get(this.source) ?? null) : null,
    };
  }

  /** The latest frame (tests and keep). */
  get frame(): SpectrumFrame | null {
    return this.latest;
  }

  requireSession(): { live: LiveBench; session: Session } {
    const live = this.deps.live();
    if (!live)
      throw new BenchError(
        'ECONFLICT',
        'no session is open: open a session before starting the spectrum',
        'session',
      );
    return { live, session: live.session };
  }

  async start(a: ParsedArgs<'spectrumStart'>): Promise<SpectrumCallResults['spectrumStart']> {
    const { session } = this.requireSession();
    const spec = parseIqSpec(a.source);
    await this.stop();
    const fs = a.sampleRate;
    // The carrier a tenth of the span above the centre: clear of the SDR's DC offset and its 1/f noise.
    const offsetHz = Math.round(fs / 10);
    const centerHz = session.carrierHz - offsetHz;
    const tone = session.toneHz;
    check(
      (SPAN_TONES + 1) * tone + offsetHz < fs / 2,
      'sampleRate',
      `${fs} samples/s cannot show the carrier +/- ${SPAN_TONES} tones of ${tone} Hz: raise the sample rate`,
    );
    const n = a.fftSize ?? defaultFftSize(fs, tone, 'flat-top', Infinity);
    check(isFftSize(n), 'fftSize', `must be a multiple of 16 with no prime factors but 2, 3 and 5, got ${n}`);
    const window = Window.byName('flat-top', n);
    // Refused here, before any connection, rather than by the first measurement in the loop.
    checkTwoToneParams({ sampleRate: fs, carrierHz: offsetHz, toneHz: tone }, n, window);
    let host = '127.0.0.1';
    let port: number;
    if (spec.sim) {
      const standalone = new SimTransmitter({
        carrierHz: session.carrierHz,
        toneHz: tone,
        pepDbm: session.txPepDbm,
      });
      const simOf = () => {
        const src = this.deps.live()?.source;
        return src instanceof SimSource ? src.bench : null;
      };
      const server = await IqSimServer.start({
        sampleRate: fs,
        centerHz,
        generator: transmitterIqGenerator({
          // The open session's simulated bench when it is one (its trimmers), else a board of our own.
          transmitter: () => {
            const tx = simOf()?.tx;
            if (tx) return tx;
            // A session on real hardware: our own board, its trimmers where the user says they stand.
            standalone.setTrims(this.deps.live()?.trims ?? {});
            return standalone;
          },
          pathLossDb: () => simOf()?.pathLossDb ?? analysePath(validatePath(session.path)).lossDb,
          dbmAtFullScale: SIM_SDR_DBM_AT_FULL_SCALE,
        }),
      });
      this.server = server;
      port = server.port;
      if (!this.calibrations.has(a.source))
        this.calibrations.set(a.source, profileDbfsCalibration(SIM_SDR_DBM_AT_FULL_SCALE, 0.5));
    } else {
      host = spec.host;
      port = spec.port;
    }
    const client = new IqTcpClient({ host, port });
    try {
      await client.connect();
      await client.setSampleRate(fs);
      await client.setFrequency(centerHz);
    } catch (e) {
      await client.close().catch(() => undefined);
      await this.server?.close();
      this.server = null;
      throw e;
    }
    const avg = await SpectrumAverager.create(window);
    this.client = client;
    this.source = a.source;
    this.stopping = false;
    this.latest = null;
    const ctx = { session, fs, centerHz, offsetHz, n, averages: a.averages, avg, client, source: a.source };
    this.running = this.loop(ctx).finally(() => avg.dispose());
    return this.state();
  }

  private async loop(c: {
    session: Session;
    fs: number;
    centerHz: number;
    offsetHz: number;
    n: number;
    averages: number;
    avg: SpectrumAverager;
    client: IqTcpClient;
    source: string;
  }): Promise<void> {
    const { n, fs, client, avg, session } = c;
    const tone = session.toneHz;
    try {
      // Samples already in flight belong to the old tuning.
      await client.discard(n);
      // A moving average of the last `averages` frames, a new picture after each frame; a step in the
      // carrier's power starts it afresh (app/spectrum/sliding.ts). The carrier is looked for within a
      // quarter tone of where it should be.
      const slide = new SlidingSpectrum(avg.window, c.averages);
      const k0 = Math.round((c.offsetHz / fs) * n);
      const half = Math.max(2, Math.round((tone / 4 / fs) * n));
      const clips: number[] = [];
      while (!this.stopping) {
        // Behind by more than one frame: drop whole frames so the picture stays live.
        const frameBytes = 2 * n;
        const behind = Math.floor(client.pendingBytes / frameBytes) - 1;
        if (behind > 0) await client.discard(behind * n);
        const b = await client.readBlock(n);
        let clipped = 0;
        for (let i = 0; i < b.length; i++) if (b[i] === 0 || b[i] === 255) clipped++;
        avg.reset();
        avg.pushU8(b, 0, client.zero);
        if (this.stopping) break;
        if (slide.push(avg.sums(), [k0 - half, k0 + half])) clips.length = 0;
        clips.push(clipped);
        if (clips.length > slide.averages) clips.shift();
        clipped = clips.reduce((x, y) => x + y, 0);
        const spectrum = slide.spectrum();
        const m = measureSpectrum(spectrum, { sampleRate: fs, carrierHz: c.offsetHz, toneHz: tone });
        const trace = traceSpectrum(
          spectrum,
          fs,
          c.offsetHz - SPAN_TONES * tone,
          c.offsetHz + SPAN_TONES * tone,
          TRACE_POINTS,
        );
        const cal = this.calibrations.get(c.source) ?? null;
        const path = validatePath(session.path);
        const components: SpectrumComponent[] = Object.values(m.components).map((x) => {
          let dbmDut: number | null = null;
          if (cal && x.dbfs !== null) dbmDut = rxToDut(dbfsToDbm(x.dbfs, 0, cal).dbm, 0, path).dbm;
          return {
            role: ROLE_OF[x.role],
            offsetHz: x.offsetHz - m.carrierHz,
            inBand: x.inBand,
            dbfs: x.dbfs,
            dbmDut,
            floorLimited: x.floorLimited,
            uDb: x.uDb,
          };
        });
        const frame: SpectrumFrame = {
          sessionId: session.id,
          source: c.source,
          t: Date.now(),
          centerHz: c.centerHz,
          carrierHz: c.centerHz + m.carrierHz,
          toneHz: m.toneHz,
          sampleRate: fs,
          fftSize: n,
          averages: m.averages,
          binHz: m.binHz,
          traceHz: Array.from(trace.hz, (h) => Math.round((h - c.offsetHz) * 10) / 10),
          traceDbfs: Array.from(trace.dbfs, (d) => Math.round(d * 100) / 100),
          components,
          noiseFloorDbfs: m.noiseFloorDbfs,
          suppression: m.suppression,
          imd3: m.imd3 ? { db: m.imd3.db, floorLimited: m.imd3.floorLimited, uDb: m.imd3.uDb } : null,
          overload: clipped > CLIP_SHARE * 2 * n * slide.averages,
          calibration: cal,
        };
        this.latest = frame;
        this.deps.emit(frame);
      }
    } catch (e) {
      if (!this.stopping)
        this.deps.failed(
          e instanceof BenchError
            ? e
            : new BenchError('EIO', e instanceof Error ? e.message : String(e), 'spectrum'),
        );
    } finally {
      this.running = null;
      if (!this.stopping) await this.release();
    }
  }

  private async release(): Promise<void> {
    const client = this.client;
    const server = this.server;
    this.client = null;
    this.server = null;
    await client?.close().catch(() => undefined);
    await server?.close().catch(() => undefined);
  }

  async stop(): Promise<SpectrumCallResults['spectrumStop']> {
    this.stopping = true;
    const running = this.running;
    // Closing the connection ends a read that waits for samples.
    await this.release();
    await running;
    this.stopping = false;
    this.latest = null;
    return this.state();
  }

  calibrate(a: ParsedArgs<'spectrumCalibrate'>): DbfsCalibration {
    const source = this.source;
    if (!source)
      throw new BenchError(
        'ECONFLICT',
        'start the spectrum first: the figure belongs to the SDR it reads',
        'source',
      );
    let cal: DbfsCalibration;
    if ('injection' in a) {
      const f = this.latest;
      const seen = (f?.components ?? []).filter((c) => c.dbfs !== null && !c.floorLimited);
      if (!f || seen.length === 0)
        throw new BenchError(
          'ENAVAIL',
          'no tone is seen above the noise: check the generator and the pad',
          'injection',
        );
      const strongest = seen.reduce((a, b) => ((b.dbfs as number) > (a.dbfs as number) ? b : a));
      if (f.overload)
        throw new BenchError(
          'EUNSAFE',
          'the SDR input clips: add attenuation ahead of it before calibrating (a clipped line reads low)',
          'injection',
        );
      // The injected line must stand alone: another line near it means a modulated transmitter or another
      // signal shares the input, and "the strongest line" would be a guess.
      const crowd = seen.filter(
        (c) => c !== strongest && (strongest.dbfs as number) - (c.dbfs as number) < INJECTION_CLEAR_DB,
      );
      if (crowd.length)
        throw new BenchError(
          'EINVAL',
          `the injected line must stand alone, but ${crowd
            .map((c) => `${ROLE_LABELS[c.role].toLowerCase()} (${(c.dbfs as number).toFixed(1)} dBFS)`)
            .join(
              ', ',
            )} stand${crowd.length === 1 ? 's' : ''} within ${INJECTION_CLEAR_DB} dB of the strongest, ` +
            `${ROLE_LABELS[strongest.role].toLowerCase()} at ${(strongest.dbfs as number).toFixed(1)} dBFS: a modulated ` +
            'transmitter or another signal is at the SDR input. Calibrate with the generator alone (transmitter off), ' +
            'then reconnect the transmitter.',
          'injection',
        );
      cal = injectionDbfsCalibration({
        ...a.injection,
        readDbfs: strongest.dbfs as number,
        readUDb: strongest.uDb ?? 0,
      });
    } else {
      cal = profileDbfsCalibration(a.dbmAtFullScale, a.uDb);
    }
    this.calibrations.set(source, cal);
    return cal;
  }
}
