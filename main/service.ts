// Runs in Node. The one implementation of the service contract (app/api), over the store, the sources
// and the live bench. Both shells (desktop IPC and the local web server) and the CLI call into this.
import { EventEmitter } from 'node:events';
import { z } from 'zod';
import {
  CALLS,
  isCallName,
  type CallName,
  type CallResult,
  type CallResults,
  type EventPayloads,
  type ParsedArgs,
  type Session,
  type Status,
} from '../app/api';
import { BenchError } from '../app/errors';
import { assertReceiverSafe, validatePath } from '../app/path';
import { benchErrorFromZod } from '../app/zodissue';
import { validateCalibration } from '../app/calibration';
import { LiveBench, type LiveOptions } from './bench/live';
import { recordHandlers } from './records/handlers';
import { nullHandlers } from './nullguide';
import { chromiumPdf, type PdfRenderer } from './sheet/pdf';
import { seedDemo } from './demo';
import { PlanDesk } from './plans';
import { SpectrumDesk } from './bench/spectrum-live';
import { ReceiverDesk } from './receivers';
import { createSource, findDriver } from './sources';
import type { LevelSource, SourceEnv } from './sources/types';
import type { Store } from './store/store';
import { sessionSeries } from './store/series';

export const VERSION = '0.1.0';

/** The usual cautions, shown wherever the app refuses or warns about receiver input power. */
export const RF_CAUTION =
  'Never connect a transmitter to a receiver without enough attenuation; check the pad and sampler power ratings, ' +
  'transmit into a dummy load, mind RF exposure and mains safety, and follow your licence and local regulations.';

export interface ServiceOptions {
  store: Store;
  mode: Status['mode'];
  live?: LiveOptions;
  /** Overrides how sources are made (tests inject fakes). */
  createSource?: (spec: string, env?: SourceEnv) => LevelSource;
  /** Prints a test sheet to PDF: headless Chromium by default; the desktop shell passes its own. */
  pdf?: PdfRenderer;
}

export type Handlers = { [K in CallName]: (args: ParsedArgs<K>) => Promise<CallResults[K]> | CallResults[K] };

export class Service {
  readonly store: Store;
  private readonly mode: Status['mode'];
  private readonly liveOpts: LiveOptions;
  private readonly makeSource: (spec: string, env?: SourceEnv) => LevelSource;
  private readonly events = new EventEmitter();
  private live: LiveBench | null = null;
  private readonly handlers: Handlers;
  readonly receivers: ReceiverDesk;
  readonly plans: PlanDesk;
  readonly spectrum: SpectrumDesk;
  private lastOverloadWarning = 0;

  constructor(opts: ServiceOptions) {
    this.store = opts.store;
    this.mode = opts.mode;
    this.liveOpts = opts.live ?? {};
    this.makeSource = opts.createSource ?? createSource;
    this.events.setMaxListeners(100);
    this.receivers = new ReceiverDesk({
      store: this.store,
      makeSource: this.makeSource,
      busySource: () => this.live?.source.spec ?? null,
    });
    this.plans = new PlanDesk({
      store: this.store,
      live: () => this.live,
      open: (id) => this.openSession(id),
      progress: (p) => this.emit('progress', p),
      notice: (n) => this.emit('notice', n),
      caution: RF_CAUTION,
    });
    this.spectrum = new SpectrumDesk({
      store: this.store,
      live: () => this.live,
      emit: (f) => this.emit('spectrum', f),
      failed: (e) => this.emit('notice', { level: 'error', code: e.code, message: `spectrum: ${e.message}` }),
    });
    const pdf = opts.pdf ?? chromiumPdf;
    this.handlers = {
      ...recordHandlers(this.store, () => pdf),
      status: () => this.status(),
      tree: () => this.store.tree(),
      createDesign: (a) => this.store.createDesign(a),
      createRevision: (a) => this.store.createRevision(a),
      createUnit: (a) => this.store.createUnit(a),
      createSession: (a) => this.createSession(a),
      listSessions: (a) => this.store.listSessions(a.unitId),
      getSession: (a) => this.store.getSession(a.sessionId),
      openSession: (a) => this.openSession(a.sessionId),
      closeSession: () => this.closeSession(),
      tune: async (a) => {
        if (this.plans.active)
          throw new BenchError(
            'ECONFLICT',
            'a plan is stepping the receiver: cancel it before tuning by hand',
            'role',
          );
        await this.requireLive().tune(a.role);
        return this.status();
      },
      setTrims: async (a) => {
        await this.requireLive().setTrims(a.trims);
        return this.status();
      },
      keep: async (a) => {
        const live = this.requireLive();
        if (a.waitSettled) await live.nextReading(true);
        return live.keep(a.note);
      },
      sweep: (a) => this.sweep(a),
      readings: (a) => this.store.readings(a.sessionId, { keptOnly: a.keptOnly, limit: a.limit }),
      series: (a) => sessionSeries(this.store, a),
      loadDemo: () => seedDemo(this.store),
      ...this.receivers.handlers(),
      ...this.plans.handlers(),
      ...nullHandlers(this.store, () => this.live),
      ...this.spectrum.handlers(),
    };
  }

  /** Parses the arguments with the contract's schema, runs the call, and never throws. */
  async call(name: string, rawArgs: unknown): Promise<CallResult<unknown>> {
    try {
      if (!isCallName(name)) throw new BenchError('EINVAL', `unknown call "${name}"`, 'call');
      const parsed = CALLS[name].safeParse(rawArgs ?? {});
      if (!parsed.success) throw benchErrorFromZod(parsed.error, '');
      const value = await (this.handlers[name] as (a: unknown) => unknown)(parsed.data);
      return { ok: true, value };
    } catch (e) {
      return toFailure(e);
    }
  }

  /** Direct typed call for in-process users (CLI, tests); throws BenchError. */
  async invoke<K extends CallName>(name: K, args: z.input<(typeof CALLS)[K]>): Promise<CallResults[K]> {
    const r = await this.call(name, args);
    if (!r.ok)
      throw new BenchError(
        r.code as BenchError['code'],
        r.message.replace(r.field ? `${r.field}: ` : '', ''),
        r.field,
      );
    return r.value as CallResults[K];
  }

  listen<E extends keyof EventPayloads>(event: E, cb: (payload: EventPayloads[E]) => void): () => void {
    this.events.on(event, cb as (p: unknown) => void);
    return () => this.events.off(event, cb as (p: unknown) => void);
  }

  private emit<E extends keyof EventPayloads>(event: E, payload: EventPayloads[E]): void {
    this.events.emit(event, payload);
  }

  status(): Status {
    const l = this.live;
    return {
      version: VERSION,
      mode: this.mode,
      dbPath: this.store.file,
      activeSessionId: l?.session.id ?? null,
      live: l?.isRunning ?? false,
      source: l?.source.spec ?? null,
      tunedRole: l?.role ?? null,
      trims: l?.trims ?? {},
      lastError: l?.lastError ?? null,
    };
  }

  private createSession(a: ParsedArgs<'createSession'>): Session {
    const path = validatePath(a.path);
    if (a.receiver.calibration != null) validateCalibration(a.receiver.calibration);
    findDriver(a.receiver.source);
    // The template is copied in full and the calibration made explicit for what the source reports.
    const receiver = this.receivers.resolveSessionReceiver(a.receiver);
    a.trims.forEach((t, i) => {
      if (!(t.min < t.max))
        throw new BenchError('EINVAL', `min (${t.min}) must be below max (${t.max})`, `trims[${i}]`);
    });
    if (new Set(a.trims.map((t) => t.key)).size !== a.trims.length)
      throw new BenchError('EINVAL', 'each trimmer needs its own key', 'trims');
    let rxPepDbm: number;
    try {
      // Worst case over the path's tolerances: the least loss the pads and couplers may really have.
      rxPepDbm = assertReceiverSafe(a.txPepDbm, path, a.receiver.maxInputDbm).rxDbm;
    } catch (e) {
      if (e instanceof BenchError && e.code === 'EUNSAFE')
        throw new BenchError('EUNSAFE', `refused: ${e.message} ${RF_CAUTION}`, 'path');
      throw e;
    }
    return this.store.createSession({ ...a, receiver, path, rxPepDbm });
  }

  private async openSession(id: string): Promise<Session> {
    const session = this.store.getSession(id);
    await this.closeSession();
    const tpl = session.receiver.template;
    const source = this.makeSource(session.receiver.source, tpl ? { template: tpl } : {});
    const last = this.store.readings(id, { limit: 1 })[0];
    // A real receiver is polled about 20 times a second: its meter cannot move faster, and the database
    // keeps every reading.
    const intervalMs = this.liveOpts.intervalMs ?? (source.caps.reconnect ? 50 : 0);
    const live = new LiveBench(this.store, session, source, {
      ...this.liveOpts,
      intervalMs,
      initialTrims: last?.trims,
    });
    // The link state (fault, then reading again) reaches the UI through status events.
    let faulted = false;
    live.on('reading', (r) => {
      this.emit('reading', r);
      if (faulted) {
        faulted = false;
        this.emit('status', this.status());
      }
      if (r.overload) this.warnOverload(r.dbmRx, session);
    });
    live.on('error', (e) => {
      this.emit('notice', { level: 'error', code: e.code, message: e.message });
      faulted = true;
      this.emit('status', this.status());
    });
    live.on('state', () => this.emit('status', this.status()));
    this.live = live;
    try {
      await live.start();
    } catch (e) {
      this.live = null;
      live.removeAllListeners();
      await source.close().catch(() => undefined);
      this.emit('status', this.status());
      throw e;
    }
    if (session.rxPepDbm > session.receiver.maxInputDbm - 10) {
      this.emit('notice', {
        level: 'warn',
        code: 'EUNSAFE',
        message: `receiver input at PEP is ${session.rxPepDbm.toFixed(1)} dBm, within 10 dB of its rated maximum: readings may compress. ${RF_CAUTION}`,
      });
    }
    this.emit('status', this.status());
    return session;
  }

  /** At most one warning in 30 s: the reading flags stay on every stored reading. */
  private warnOverload(dbmRx: number, session: Session): void {
    const now = Date.now();
    if (now - this.lastOverloadWarning < 30_000) return;
    this.lastOverloadWarning = now;
    this.emit('notice', {
      level: 'warn',
      code: 'EUNSAFE',
      message:
        `the receiver reads ${dbmRx.toFixed(1)} dBm at its input, within 10 dB of its rated maximum ` +
        `(${session.receiver.maxInputDbm} dBm): it may be compressing and reading low. Add attenuation. ${RF_CAUTION}`,
    });
  }

  private async closeSession(): Promise<null> {
    await this.plans.stopAll();
    await this.spectrum.stop();
    const l = this.live;
    this.live = null;
    if (l) {
      await l.stop();
      l.removeAllListeners();
    }
    this.emit('status', this.status());
    return null;
  }

  private requireLive(): LiveBench {
    if (!this.live)
      throw new BenchError('ECONFLICT', 'no session is open: open or create a session first', 'session');
    return this.live;
  }

  private async sweep(a: ParsedArgs<'sweep'>): Promise<CallResults['sweep']> {
    const live = this.requireLive();
    if (!live.source.caps.trims) {
      throw new BenchError(
        'ENAVAIL',
        'only the simulated bench turns its own trimmers; on real hardware set each position by hand and keep',
        'sweep',
      );
    }
    if (!live.session.trims.some((t) => t.key === a.trim))
      throw new BenchError('EINVAL', `no trimmer "${a.trim}" in this session`, 'trim');
    const out = [];
    for (let i = 0; i < a.steps; i++) {
      const x = a.from + ((a.to - a.from) * i) / (a.steps - 1);
      await live.setTrims({ [a.trim]: Number(x.toFixed(6)) });
      await live.dwell();
      await live.nextReading(true);
      out.push(live.keep(`sweep ${i + 1}/${a.steps}`));
      this.emit('progress', {
        task: 'sweep',
        done: i + 1,
        total: a.steps,
        message: `${a.trim} = ${x.toFixed(3)}`,
      });
    }
    return { readings: out };
  }

  async close(): Promise<void> {
    await this.closeSession();
  }
}

export function toFailure(e: unknown): { ok: false; code: string; message: string; field?: string } {
  if (e instanceof BenchError)
    return { ok: false, code: e.code, message: e.message, ...(e.field ? { field: e.field } : {}) };
  if (e instanceof z.ZodError) return toFailure(benchErrorFromZod(e));
  return { ok: false, code: 'EIO', message: e instanceof Error ? e.message : String(e) };
}
