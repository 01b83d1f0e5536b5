// Runs in Node. The Service: parses every call with the contract's schema (app/api), dispatches it to its
// call group (one file here per file of app/api: session, receivers, plans, records, nullfit, spectrum) and
// emits the events. It holds no call logic of its own. Both shells (desktop IPC and the local web server)
// and the CLI call into this.
import { EventEmitter } from 'node:events';
import {
  CALLS,
  isCallName,
  type CallResult,
  type CallResults,
  type EventPayloads,
  type Status,
} from '../../app/api';
import { BenchError, toFailure } from '../../app/errors';
import { benchErrorFromZod } from '../../app/zodissue';
import { chromiumPdf } from '../sheet/pdf';
import type { Store } from '../store/store';
import { createSource } from '../sources';
import type { Handlers, Invoke, ServiceContext, ServiceOptions } from './handlers';
import { NullfitCalls } from './nullfit';
import { PlanCalls } from './plans';
import { ReceiverCalls } from './receivers';
import { RecordCalls } from './records';
import { SessionCalls } from './session';
import { SpectrumCalls } from './spectrum';
import { SupportLog } from './supportlog';
import { VERSION } from './session';

export { VERSION } from './session';
export type { Handlers, Invoke, ServiceOptions } from './handlers';

export class Service {
  readonly store: Store;
  private readonly events = new EventEmitter();
  private readonly handlers: Handlers;
  readonly session: SessionCalls;
  readonly receivers: ReceiverCalls;
  readonly plans: PlanCalls;
  readonly spectrum: SpectrumCalls;

  private readonly log: SupportLog;
  private linkFaulted = false;

  constructor(opts: ServiceOptions) {
    this.store = opts.store;
    this.events.setMaxListeners(100);
    // A scratch database in memory (the demo's, a test's) leaves nothing for support to read.
    this.log = opts.supportLog ?? new SupportLog(opts.store.file === ':memory:' ? null : undefined);
    this.log.write({ event: 'start', version: VERSION, mode: opts.mode, database: opts.store.file });
    const pdf = opts.pdf ?? chromiumPdf;
    const ctx: ServiceContext = {
      store: opts.store,
      mode: opts.mode,
      unattendedStopS: opts.unattendedStopS ?? null,
      liveOptions: opts.live ?? {},
      makeSource: opts.createSource ?? createSource,
      pdf: () => pdf,
      live: () => this.session.bench,
      emit: (event, payload) => {
        this.record(event, payload);
        return this.events.emit(event, payload);
      },
    };
    this.receivers = new ReceiverCalls(ctx);
    this.spectrum = new SpectrumCalls(ctx);
    this.plans = new PlanCalls(ctx, (id) => this.session.open(id));
    this.session = new SessionCalls(ctx, {
      receivers: this.receivers,
      tuneRefusal: () =>
        this.plans.active ? 'a plan is stepping the receiver: cancel it before tuning by hand' : null,
      makeService: (o) => new Service(o),
      beforeClose: async () => {
        await this.plans.stopAll();
        await this.spectrum.stream.stop();
      },
    });
    this.handlers = {
      ...this.session.handlers(),
      ...this.receivers.handlers(),
      ...this.plans.handlers(),
      ...new RecordCalls(ctx).handlers(),
      ...new NullfitCalls(ctx).handlers(),
      ...this.spectrum.handlers(),
    };
  }

  /** Parses the arguments with the contract's schema, runs the call, and never throws. */
  async call(name: string, rawArgs: unknown): Promise<CallResult<unknown>> {
    try {
      if (!isCallName(name)) throw new BenchError('EINVAL', `unknown call "${name}"`, 'call');
      const parsed = CALLS[name].safeParse(rawArgs ?? {});
      if (!parsed.success) throw benchErrorFromZod(parsed.error, '', CALLS[name]);
      const value = await (this.handlers[name] as (a: unknown) => unknown)(parsed.data);
      return { ok: true, value };
    } catch (e) {
      const f = toFailure(e);
      this.log.write({
        event: 'failure',
        call: name,
        code: f.code,
        field: f.field ?? null,
        message: f.message,
      });
      return f;
    }
  }

  /** What support needs from the events: every notice, and a link that comes back after a fault. */
  private record(event: string, payload: unknown): void {
    if (event === 'notice') {
      const n = payload as { level: string; code?: string | null; message: string };
      this.log.write({ event: 'notice', level: n.level, code: n.code ?? null, message: n.message });
    } else if (event === 'status') {
      const s = payload as Status;
      if (s.lastError) this.linkFaulted = true;
      else if (this.linkFaulted && s.live) {
        this.linkFaulted = false;
        this.log.write({ event: 'link-restored', source: s.source });
      }
    }
  }

  /** Direct typed call for in-process users (CLI, demo, tests); throws BenchError. */
  readonly invoke: Invoke = async (name, args) => {
    const r = await this.call(name, args);
    if (!r.ok) throw BenchError.fromFailure(r);
    return r.value as CallResults[typeof name];
  };

  listen<E extends keyof EventPayloads>(event: E, cb: (payload: EventPayloads[E]) => void): () => void {
    this.events.on(event, cb as (p: unknown) => void);
    return () => this.events.off(event, cb as (p: unknown) => void);
  }

  status(): Status {
    return this.session.status();
  }

  async close(): Promise<void> {
    await this.session.close();
    this.log.write({ event: 'stop' });
  }
}
