// Runs in Node. The session calls (app/api/session.ts): designs, revisions, units and sessions in the store,
// the one open session's live bench (tune, trimmers, keep, sweep) and its readings. A session is set up by
// names in one call: every check runs before anything is written, so a refused set-up leaves no row.
import type { ParsedArgs, Session, SessionInput, SessionSetupSchema, Status } from '../../app/api';
import type { SessionCallResults } from '../../app/api/session';
import { RF_CAUTION } from '../../app/caution';
import { validateCalibration } from '../../app/calibration';
import { BenchError } from '../../app/errors';
import { analysePath, refuseUnsafeSetup, validatePath } from '../../app/path';
import { LiveBench } from '../live/live';
import { findDriver } from '../sources';
import { describeHolder, HEARTBEAT_MS, LeaseRepo } from '../store/leases';
import { sessionSeries } from '../store/series';
import { seedDemo, type DemoServiceFactory } from './demo';
import type { GroupHandlers, ServiceContext } from './handlers';
import type { ReceiverCalls } from './receivers';
import type { z } from 'zod';

export const VERSION = '0.1.0';

type SessionCallName = keyof SessionCallResults;

/** How a lease names the program holding it, by the shell it runs in. */
const PROGRAMS: Record<ServiceContext['mode'], string> = {
  cli: 'nullbench on the command line',
  web: 'the web server',
  desktop: 'the desktop app',
};

export interface SessionHooks {
  receivers: ReceiverCalls;
  /** Why the receiver may not be tuned by hand now (a plan steps it), or null. */
  tuneRefusal: () => string | null;
  /** Builds the scratch service the demo runs its simulated sessions on (a virtual clock of its own). */
  makeService: DemoServiceFactory;
  /** Stopped before a session closes: plans, the spectrum stream. */
  beforeClose: () => Promise<void>;
}

export class SessionCalls {
  private live: LiveBench | null = null;
  /** An ended session opened for review: shown, never written. */
  private reviewing: Session | null = null;
  /** The lease this process holds on the live session, renewed while it reads. */
  private lease: { sessionId: string; timer: NodeJS.Timeout } | null = null;
  private lastOverloadWarning = 0;

  constructor(
    private readonly ctx: ServiceContext,
    private readonly hooks: SessionHooks,
  ) {}

  get bench(): LiveBench | null {
    return this.live;
  }

  handlers(): GroupHandlers<SessionCallName> {
    const store = this.ctx.store;
    return {
      status: () => this.status(),
      tree: () => store.tree(),
      createDesign: (a) => store.createDesign(a),
      createRevision: (a) => store.createRevision(a),
      createUnit: (a) => store.createUnit(a),
      createSession: (a) => {
        const checked = this.checkSetup(a);
        return store.createSession({ ...a, ...checked });
      },
      startSession: (a) => this.startSession(a),
      listSessions: (a) => store.listSessions(a.unitId),
      getSession: (a) => store.getSession(a.sessionId),
      openSession: (a) => this.open(a.sessionId),
      closeSession: () => this.close(),
      endSession: () => this.end(),
      continueSession: async (a) => {
        const s = this.ctx.store.getSession(a.sessionId);
        if (s.endedAt === null)
          throw new BenchError('ECONFLICT', 'this session has not ended: open it instead', 'sessionId');
        this.ctx.store.continueSession(a.sessionId);
        return this.open(a.sessionId);
      },
      endSessionById: (a) => this.endById(a.sessionId),
      repeatSession: (a) => this.repeat(a.sessionId),
      tune: async (a) => {
        const refusal = this.hooks.tuneRefusal();
        if (refusal) throw new BenchError('ECONFLICT', refusal, 'role');
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
      readings: (a) => store.readings(a.sessionId, { keptOnly: a.keptOnly, limit: a.limit }),
      series: (a) => sessionSeries(store, a),
      loadDemo: () => seedDemo(store, this.hooks.makeService),
    };
  }

  status(): Status {
    const l = this.live;
    return {
      version: VERSION,
      mode: this.ctx.mode,
      dbPath: this.ctx.store.file,
      activeSessionId: l?.session.id ?? this.reviewing?.id ?? null,
      sessionEnded: !l && this.reviewing !== null,
      live: l?.isRunning ?? false,
      source: l?.source.spec ?? null,
      tunedRole: l?.role ?? null,
      trims: l?.trims ?? {},
      lastError: l?.lastError ?? null,
      unattendedStopS: this.ctx.unattendedStopS,
      pausedSessionId: this.paused,
      sourceCaps: l
        ? {
            tune: l.source.caps.tune,
            trims: l.source.caps.trims,
            unbalance: l.source.caps.unbalance,
            template: l.source.caps.template === true,
            simulated: l.source.caps.simulated === true,
          }
        : null,
    };
  }

  /**
   * Every check of a session's set-up, before anything is written: the path, the calibration, the receiver
   * (its driver and template), the trimmers, and the receiver safety at the declared PEP.
   */
  private checkSetup(a: z.output<typeof SessionSetupSchema>): Pick<SessionInput, 'receiver' | 'path'> & {
    rxPepDbm: number;
  } {
    const path = validatePath(a.path);
    if (a.receiver.calibration != null) validateCalibration(a.receiver.calibration);
    findDriver(a.receiver.source);
    // The template is copied in full and the calibration made explicit for what the source reports.
    const receiver = this.hooks.receivers.resolveSessionReceiver(a.receiver);
    a.trims.forEach((t, i) => {
      if (!(t.min < t.max))
        throw new BenchError('EINVAL', `min (${t.min}) must be below max (${t.max})`, `trims[${i}]`);
    });
    if (new Set(a.trims.map((t) => t.key)).size !== a.trims.length)
      throw new BenchError('EINVAL', 'each trimmer needs its own key', 'trims');
    // Worst case over the path's tolerances: the least loss the pads and couplers may really have.
    const rxPepDbm = refuseUnsafeSetup(a.txPepDbm, path, a.receiver.maxInputDbm, 'path').rxDbm;
    return { receiver, path, rxPepDbm };
  }

  private async startSession(a: ParsedArgs<'startSession'>): Promise<Session> {
    const { design, revision, serial, open, ...setup } = a;
    const checked = this.checkSetup(setup);
    const store = this.ctx.store;
    const session = store.tx(() => {
      const unit = store.findOrCreateUnitByNames({ design, revision, serial });
      return store.createSession({ ...setup, ...checked, unitId: unit.id });
    });
    return open ? this.open(session.id) : session;
  }

  async open(id: string): Promise<Session> {
    // A session opened by hand replaces whatever the unattended-stop rule was keeping to resume.
    this.paused = null;
    const { store, emit } = this.ctx;
    const session = store.getSession(id);
    await this.close();
    if (session.endedAt !== null) {
      // Review only: the status says so (sessionEnded), and every call that would read or keep is refused.
      this.reviewing = session;
      emit('status', this.status());
      return session;
    }
    // Every session is checked again before its receiver is read live, however it came into the database.
    refuseUnsafeSetup(session.txPepDbm, validatePath(session.path), session.receiver.maxInputDbm, 'path');
    if (!store.readonly) this.takeLease(session.id);
    const tpl = session.receiver.template;
    const source = this.ctx.makeSource(session.receiver.source, tpl ? { template: tpl } : {});
    source.declareSetup?.({
      pathLossDb: analysePath(validatePath(session.path)).lossDb,
      txPepDbm: session.txPepDbm,
      carrierHz: session.carrierHz,
      toneHz: session.toneHz,
    });
    const last = store.readings(id, { limit: 1 })[0];
    // A real receiver is polled about 20 times a second: its meter cannot move faster, and the database
    // keeps every reading.
    const intervalMs = this.ctx.liveOptions.intervalMs ?? (source.caps.reconnect ? 50 : 0);
    const live = new LiveBench(store, session, source, {
      ...this.ctx.liveOptions,
      intervalMs,
      initialTrims: last?.trims,
    });
    // The link state (fault, then reading again) reaches the UI through status events.
    let faulted = false;
    live.on('reading', (r) => {
      emit('reading', r);
      if (faulted) {
        faulted = false;
        emit('status', this.status());
      }
      if (r.overload) this.warnOverload(r.dbmRx, session);
    });
    live.on('error', (e) => {
      emit('notice', { level: 'error', code: e.code, message: e.message });
      faulted = true;
      emit('status', this.status());
    });
    live.on('state', () => emit('status', this.status()));
    this.live = live;
    try {
      await live.start();
    } catch (e) {
      this.live = null;
      live.removeAllListeners();
      await source.close().catch(() => undefined);
      this.releaseLease();
      emit('status', this.status());
      throw e;
    }
    if (session.rxPepDbm > session.receiver.maxInputDbm - 10) {
      emit('notice', {
        level: 'warn',
        code: 'EUNSAFE',
        message: `receiver input at PEP is ${session.rxPepDbm.toFixed(1)} dBm, within 10 dB of its rated maximum: readings may compress. ${RF_CAUTION}`,
      });
    }
    emit('status', this.status());
    return session;
  }

  /** At most one warning in 30 s: the reading flags stay on every stored reading. */
  private warnOverload(dbmRx: number, session: Session): void {
    const now = Date.now();
    if (now - this.lastOverloadWarning < 30_000) return;
    this.lastOverloadWarning = now;
    this.ctx.emit('notice', {
      level: 'warn',
      code: 'EUNSAFE',
      message:
        `the receiver reads ${dbmRx.toFixed(1)} dBm at its input, within 10 dB of its rated maximum ` +
        `(${session.receiver.maxInputDbm} dBm): it may be compressing and reading low. Add attenuation. ${RF_CAUTION}`,
    });
  }

  /** The session whose reading the unattended-stop rule stopped, until a window comes back. */
  private paused: string | null = null;

  /**
   * The unattended-stop rule: reading stops (the session stays open, nothing is ended) and the session is
   * remembered, so the next window resumes it. True when something was reading.
   */
  async pauseUnattended(): Promise<boolean> {
    const l = this.live;
    if (!l) return false;
    const id = l.session.id;
    await this.close();
    this.paused = id;
    this.ctx.emit('status', this.status());
    return true;
  }

  /** A window is back: the session the rule stopped reads again. Null when nothing was paused. */
  async resumeUnattended(): Promise<string | null> {
    const id = this.paused;
    if (!id || this.live) return (this.paused = null);
    this.paused = null;
    await this.open(id);
    this.ctx.emit('notice', {
      level: 'info',
      code: 'RESUMED',
      message: `Reading resumed: it had stopped after ${this.ctx.unattendedStopS} s with no window open; nothing was stored meanwhile.`,
    });
    return id;
  }

  async close(): Promise<null> {
    await this.hooks.beforeClose();
    const l = this.live;
    this.live = null;
    this.reviewing = null;
    if (l) {
      await l.stop();
      l.removeAllListeners();
    }
    this.releaseLease();
    this.ctx.emit('status', this.status());
    return null;
  }

  /** Ends the open session for good: reading stops, its end is recorded, its readings stay. */
  private async end(): Promise<Session> {
    const id = this.live?.session.id ?? this.reviewing?.id;
    if (!id) throw new BenchError('ECONFLICT', 'no session is open: there is nothing to end', 'session');
    await this.close();
    this.ctx.store.endSession(id);
    return this.ctx.store.getSession(id);
  }

  /** Ends a session by id: this service's own open one through end(), another only if nobody reads it. */
  private async endById(id: string): Promise<Session> {
    const s = this.ctx.store.getSession(id);
    if (s.endedAt !== null)
      throw new BenchError('ECONFLICT', `this session already ended ${s.endedAt}`, 'sessionId');
    if (this.live?.session.id === id || this.reviewing?.id === id) return this.end();
    const leases = new LeaseRepo(this.ctx.store);
    const holder = leases.holder(id);
    if (holder && leases.alive(holder))
      throw new BenchError(
        'ECONFLICT',
        `${describeHolder(holder)} is reading this session: end it there`,
        'sessionId',
      );
    this.ctx.store.endSession(id);
    return this.ctx.store.getSession(id);
  }

  /** A new session with an earlier one's set-up, checked again as any new set-up is, then opened. */
  private async repeat(sessionId: string): Promise<Session> {
    const s = this.ctx.store.getSession(sessionId);
    const setup = {
      receiver: s.receiver,
      path: s.path,
      carrierHz: s.carrierHz,
      toneHz: s.toneHz,
      txPepDbm: s.txPepDbm,
      operator: s.operator,
      notes: '',
      trims: s.trims,
    };
    const checked = this.checkSetup(setup as z.output<typeof SessionSetupSchema>);
    const created = this.ctx.store.createSession({ ...setup, ...checked, unitId: s.unitId });
    return this.open(created.id);
  }

  /** Takes the session's lease (refused while another living program holds it) and keeps it fresh. */
  private takeLease(sessionId: string): void {
    const leases = new LeaseRepo(this.ctx.store);
    const was = leases.take(sessionId, PROGRAMS[this.ctx.mode]);
    if (was)
      this.ctx.emit('notice', {
        level: 'warn',
        code: 'ECONFLICT',
        message: `took this session over from ${describeHolder(was)}, which is no longer running`,
      });
    const timer = setInterval(() => {
      try {
        leases.beat(sessionId);
      } catch {
        // A heartbeat that cannot be written (a full disk) is retried at the next beat; the readings'
        // own writes report the fault.
      }
    }, HEARTBEAT_MS);
    timer.unref();
    this.lease = { sessionId, timer };
  }

  private releaseLease(): void {
    const l = this.lease;
    if (!l) return;
    this.lease = null;
    clearInterval(l.timer);
    try {
      new LeaseRepo(this.ctx.store).release(l.sessionId);
    } catch {
      // Left behind, the lease is taken over once this process has gone.
    }
  }

  private requireLive(): LiveBench {
    if (!this.live && this.reviewing)
      throw new BenchError(
        'ECONFLICT',
        `this session ended at ${this.reviewing.endedAt}: nothing new is stored in it; start a new session like it`,
        'session',
      );
    if (!this.live)
      throw new BenchError('ECONFLICT', 'no session is open: open or create a session first', 'session');
    return this.live;
  }

  private async sweep(a: ParsedArgs<'sweep'>): Promise<SessionCallResults['sweep']> {
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
      this.ctx.emit('progress', {
        task: 'sweep',
        done: i + 1,
        total: a.steps,
        message: `${a.trim} = ${x.toFixed(3)}`,
      });
    }
    return { readings: out };
  }
}
