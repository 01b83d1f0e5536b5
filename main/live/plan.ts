// Runs in Node. Runs a frequency-stepped plan on the open session's live bench: for each point retune, wait
// for the meter to settle, average N readings (each of them stored by the live bench as an ordinary reading)
// and store the point's result with the ids of the readings it was made of. Progress is reported after every
// step; a run can be cancelled and resumed, and survives link faults: a fault during a point restarts that
// point once the link is back, so no average spans a gap.
import type { LiveReading, PointRole, ProgressEvent } from '../../app/api';
import { ROLE_LABELS } from '../../app/api';
import { BenchError, errorClass } from '../../app/errors';
import { averagePoint, type PlanRun, type PlanSpec } from '../../app/plan';
import type { LiveBench } from './live';
import type { PlanRecorder } from './sink';

/** A manual step the operator must do and confirm (the source cannot do it itself). */
export interface OperatorStep {
  runId: string;
  /** What to do, in words, with the usual cautions where they apply. */
  prompt: string;
  role: PointRole;
  freqHz: number;
}

export interface PlanHost {
  live: LiveBench;
  plans: PlanRecorder;
  progress(p: ProgressEvent): void;
  notice(level: 'info' | 'warn' | 'error', code: string, message: string): void;
  /** Resolves when the operator has done the step; rejects to stop the plan. */
  operator(step: OperatorStep): Promise<void>;
}

const UNBALANCE_PROMPT =
  'Unbalance the modulator (turn a balance trimmer well off its null) until the carrier reads about as strong as ' +
  'one tone, and no stronger: the plan was checked as safe for the receiver only up to that. Then continue.';
const REBALANCE_PROMPT =
  'Return the balance trimmers to their null (the carrier should drop again), then continue.';

class Cancelled extends Error {}

export class PlanRunner {
  readonly runId: string;
  readonly done: Promise<PlanRun>;
  private readonly host: PlanHost;
  private cancelled = false;
  private wakeAll = new Set<() => void>();
  /** What the runner is doing now, for status lines. */
  stage = 'starting';

  constructor(host: PlanHost, runId: string) {
    this.host = host;
    this.runId = runId;
    this.done = this.run();
  }

  cancel(): void {
    this.cancelled = true;
    for (const w of this.wakeAll) w();
  }

  get isCancelled(): boolean {
    return this.cancelled;
  }

  private guard(): void {
    if (this.cancelled) throw new Cancelled();
  }

  private sleep(ms: number): Promise<void> {
    return new Promise((ok) => {
      const w = () => {
        clearTimeout(t);
        this.wakeAll.delete(w);
        ok();
      };
      const t = setTimeout(w, ms);
      this.wakeAll.add(w);
    });
  }

  private async run(): Promise<PlanRun> {
    const { plans, live } = this.host;
    const run0 = plans.getRun(this.runId);
    const spec = run0.spec;
    const total = run0.points.length;
    const label = (role: PointRole, hz: number) => `${ROLE_LABELS[role]} (${(hz / 1e6).toFixed(6)} MHz)`;
    plans.setState(this.runId, 'running', '');
    // Resumed after the reference was read by hand: the modulator may still be unbalanced, so ask first.
    let manualUnbalanced =
      !live.source.caps.unbalance && run0.points.some((p) => p.role === 'reference' && p.state === 'done');
    try {
      for (const p of run0.points) {
        if (p.state === 'done') continue;
        this.guard();
        const caps = live.source.caps;
        if (p.role === 'reference' && !caps.unbalance && !manualUnbalanced) {
          await this.ask({ runId: this.runId, prompt: UNBALANCE_PROMPT, role: p.role, freqHz: p.freqHz });
          manualUnbalanced = true;
        }
        if (p.role !== 'reference' && manualUnbalanced) {
          await this.ask({ runId: this.runId, prompt: REBALANCE_PROMPT, role: p.role, freqHz: p.freqHz });
          manualUnbalanced = false;
        }
        if (!caps.tune)
          await this.ask({
            runId: this.runId,
            prompt: `Tune the receiver to ${(p.freqHz / 1e6).toFixed(6)} MHz (${ROLE_LABELS[p.role]}), then continue.`,
            role: p.role,
            freqHz: p.freqHz,
          });
        const doneBefore = plans.getRun(this.runId).points.filter((x) => x.state === 'done').length;
        this.host.progress({
          task: `plan:${this.runId}`,
          done: doneBefore,
          total,
          message: `reading ${label(p.role, p.freqHz)}`,
        });
        const got = await this.point(p.role, p.idx, spec);
        plans.completePoint(this.runId, p.idx, got.avg, got.ids, got.t0, got.t1);
        if (got.avg.overload)
          this.host.notice(
            'warn',
            'EUNSAFE',
            `${ROLE_LABELS[p.role]}: the receiver reads within 10 dB of its rated maximum input and may be compressing ` +
              '(the level may read low); add attenuation before going on.',
          );
        this.host.progress({
          task: `plan:${this.runId}`,
          done: doneBefore + 1,
          total,
          message: `${label(p.role, p.freqHz)}: ${got.avg.floorLimited ? 'at most ' : ''}${got.avg.dbmDut.toFixed(1)} dBm`,
        });
      }
      if (manualUnbalanced)
        await this.ask({ runId: this.runId, prompt: REBALANCE_PROMPT, role: 'carrier', freqHz: 0 }).catch(
          () => undefined,
        );
      // Leave the receiver on the carrier, as the bench view expects.
      await live.tune('carrier').catch(() => undefined);
      plans.setState(this.runId, 'done', '');
    } catch (e) {
      if (e instanceof Cancelled)
        plans.setState(
          this.runId,
          'cancelled',
          'cancelled by the operator; resume to finish the remaining points',
        );
      else {
        const msg = e instanceof Error ? e.message : String(e);
        plans.setState(this.runId, 'failed', msg);
        this.host.notice('error', e instanceof BenchError ? e.code : 'EIO', `plan stopped: ${msg}`);
      }
    }
    const final = plans.getRun(this.runId);
    this.host.progress({
      task: `plan:${this.runId}`,
      done: final.points.filter((x) => x.state === 'done').length,
      total,
      message:
        final.state === 'done'
          ? 'plan complete'
          : `plan ${final.state}${final.message ? `: ${final.message}` : ''}`,
    });
    return final;
  }

  private async ask(step: OperatorStep): Promise<void> {
    this.stage = 'waiting for the operator';
    this.guard();
    let w: () => void = () => undefined;
    const cancelled = new Promise<never>((_ok, fail) => {
      w = () => fail(new Cancelled());
      this.wakeAll.add(w);
    });
    try {
      await Promise.race([this.host.operator(step), cancelled]);
    } catch {
      // The operator declined the step (or cancelled the plan): stop here, resumable.
      throw new Cancelled();
    } finally {
      this.wakeAll.delete(w);
    }
    this.guard();
  }

  /**
   * One point: tune, wait out settleMs on the source's clock and for the settle detector (or its timeout),
   * then average `average` readings. A link fault restarts the point after the link is back.
   */
  private async point(
    role: PointRole,
    idx: number,
    spec: PlanSpec,
  ): Promise<{ avg: ReturnType<typeof averagePoint>; ids: number[]; t0: number; t1: number }> {
    const { live } = this.host;
    for (let attempt = 1; ; attempt++) {
      this.guard();
      if (!live.isRunning)
        throw new BenchError(
          'ECONFLICT',
          `the live bench stopped${live.lastError ? `: ${live.lastError}` : ''}`,
        );
      this.stage = `tuning to ${ROLE_LABELS[role]}`;
      try {
        await live.tune(role);
      } catch (e) {
        const err = e instanceof BenchError ? e : new BenchError('EIO', String(e));
        if (errorClass(err.code) === 'permanent') throw err;
        this.host.progress({
          task: `plan:${this.runId}`,
          done: idx,
          total: -1,
          message: `waiting for the receiver link: ${err.message}`,
        });
        await this.sleep(500);
        continue;
      }
      const t0 = live.source.now();
      this.stage = `settling on ${ROLE_LABELS[role]}`;
      const r = await this.collect(role, t0, spec);
      if (r) return { ...r, t0 };
      this.host.progress({
        task: `plan:${this.runId}`,
        done: idx,
        total: -1,
        message: `link fault while reading ${ROLE_LABELS[role]}; the gap is recorded, re-reading this point once the link is back (attempt ${attempt + 1})`,
      });
    }
  }

  /** Gathers the point's readings from the live bench; null when a link fault broke the run of readings. */
  private collect(
    role: PointRole,
    t0: number,
    spec: PlanSpec,
  ): Promise<{ avg: ReturnType<typeof averagePoint>; ids: number[]; t1: number } | null> {
    const { live } = this.host;
    return new Promise((ok, fail) => {
      const taken: LiveReading[] = [];
      const cleanup = () => {
        offReading();
        offError();
        this.wakeAll.delete(wake);
      };
      const onReading = (r: LiveReading) => {
        if (r.role !== role || r.t < t0 || r.id === null) return;
        const age = r.t - t0;
        if (taken.length === 0) {
          if (age < spec.settleMs) return;
          if (!r.settled && age < spec.settleTimeoutMs) return;
          this.stage = `averaging ${ROLE_LABELS[role]}`;
        }
        taken.push(r);
        if (taken.length >= spec.average) {
          cleanup();
          ok({ avg: averagePoint(taken), ids: taken.map((x) => x.id!), t1: r.t });
        }
      };
      const onError = () => {
        cleanup();
        ok(null);
      };
      const wake = () => {
        cleanup();
        fail(new Cancelled());
      };
      live.on('reading', onReading);
      live.on('error', onError);
      this.wakeAll.add(wake);
      const offReading = () => live.off('reading', onReading);
      const offError = () => live.off('error', onError);
    });
  }
}
