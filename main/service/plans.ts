// Runs in Node. The service side of frequency-stepped plans: checks a plan before it starts (receiver safety,
// calibration coverage), runs one at a time on the open session, relays the operator's manual steps, and
// shows runs with their result table.
import type { Session } from '../../app/api';
import type { PlanCallResults, PlanView } from '../../app/api/plans';
import { RF_CAUTION } from '../../app/caution';
import { applyCalibration } from '../../app/calibration';
import { BenchError } from '../../app/errors';
import { analysePath, validatePath } from '../../app/path';
import { assertPlanSafe, planFrequencies, planTable, validatePlanSpec, type PlanRun } from '../../app/plan';
import { PlanRunner, type OperatorStep } from '../live/plan';
import type { LiveBench } from '../live/live';
import { PlanRepo } from '../store/plans';
import type { GroupHandlers, ServiceContext } from './handlers';

interface Waiting {
  step: OperatorStep;
  resolve: () => void;
  reject: (e: Error) => void;
}

export class PlanCalls {
  readonly repo: PlanRepo;
  private readonly runners = new Map<string, PlanRunner>();
  private readonly waiting = new Map<string, Waiting>();

  constructor(
    private readonly ctx: ServiceContext,
    /** Opens a session for a plan that names one (the session group's open). */
    private readonly open: (sessionId: string) => Promise<Session>,
  ) {
    this.repo = new PlanRepo(ctx.store);
    // No runner survives a restart: runs still marked running were cut off, and can be resumed.
    if (!ctx.store.readonly) this.repo.markInterrupted();
  }

  /** The plan running in this process, if any. */
  get active(): PlanRunner | null {
    for (const r of this.runners.values()) return r;
    return null;
  }

  view(run: PlanRun): PlanView {
    const session = this.ctx.store.getSession(run.sessionId);
    const pathU = analysePath(validatePath(session.path)).uDb;
    const t = planTable(run.points, run.spec.reference, pathU);
    const runner = this.runners.get(run.id);
    const w = this.waiting.get(run.id);
    return {
      ...run,
      rows: t.rows,
      reference: t.reference,
      referenceReason: t.reason,
      active: runner !== undefined,
      stage: runner ? runner.stage : null,
      waiting: w ? { prompt: w.step.prompt, role: w.step.role, freqHz: w.step.freqHz } : null,
    };
  }

  get(id: string): PlanView {
    return this.view(this.repo.getRun(id));
  }

  private requireLive(sessionId: string): LiveBench {
    const live = this.ctx.live();
    if (!live || live.session.id !== sessionId || !live.isRunning)
      throw new BenchError('ECONFLICT', 'the session is not open and reading: open it first', 'sessionId');
    return live;
  }

  /** Refuses a plan the receiver cannot take, or whose points the calibration does not cover. */
  private preflight(live: LiveBench, points: PlanRun['spec']['points']): number[] {
    const s = live.session;
    try {
      assertPlanSafe(s.txPepDbm, validatePath(s.path), s.receiver.maxInputDbm, points);
    } catch (e) {
      if (e instanceof BenchError && e.code === 'EUNSAFE')
        throw new BenchError('EUNSAFE', `plan refused: ${e.message} ${RF_CAUTION}`, 'plan.points');
      throw e;
    }
    const freqs = planFrequencies(points, s.carrierHz, s.toneHz);
    freqs.forEach((f, i) => {
      try {
        applyCalibration(live.corrector.calibration, 0, f);
      } catch (e) {
        throw new BenchError('EINVAL', `point ${points[i]}: ${(e as Error).message}`, `plan.points[${i}]`);
      }
    });
    return freqs;
  }

  private launch(runId: string, live: LiveBench): void {
    const runner = new PlanRunner(
      {
        live,
        plans: this.repo,
        progress: (p) => this.ctx.emit('progress', p),
        notice: (level, code, message) => this.ctx.emit('notice', { level, code, message }),
        operator: (step) =>
          new Promise<void>((resolve, reject) => {
            this.waiting.set(runId, { step, resolve, reject });
            this.ctx.emit('notice', {
              level: 'info',
              code: 'OPERATOR',
              message: `Plan waits for you: ${step.prompt}`,
            });
            this.ctx.emit('progress', {
              task: `plan:${runId}`,
              done: -1,
              total: -1,
              message: `waiting for you: ${step.prompt}`,
            });
          }).finally(() => this.waiting.delete(runId)),
      },
      runId,
    );
    this.runners.set(runId, runner);
    void runner.done.finally(() => {
      this.runners.delete(runId);
      this.waiting.delete(runId);
    });
  }

  async start(sessionId: string | undefined, input: unknown): Promise<PlanView> {
    const spec = validatePlanSpec(input, 'plan');
    if (this.active)
      throw new BenchError(
        'ECONFLICT',
        'a plan is already running: cancel it or wait for it to finish',
        'plan',
      );
    let live = this.ctx.live();
    const sid = sessionId ?? live?.session.id;
    if (!sid)
      throw new BenchError('ECONFLICT', 'no session is open: open or create a session first', 'sessionId');
    if (!live || live.session.id !== sid) {
      await this.open(sid);
      live = this.ctx.live();
    }
    const l = this.requireLive(sid);
    const freqs = this.preflight(l, spec.points);
    const run = this.repo.createRun(
      sid,
      spec,
      spec.points.map((role, i) => ({ role, freqHz: freqs[i] })),
    );
    this.launch(run.id, l);
    return this.get(run.id);
  }

  async resume(id: string): Promise<PlanView> {
    const run = this.repo.getRun(id);
    if (this.runners.has(id)) throw new BenchError('ECONFLICT', 'this plan is running', 'planId');
    if (this.active) throw new BenchError('ECONFLICT', 'another plan is running: cancel it first', 'planId');
    if (run.state === 'done')
      throw new BenchError('ECONFLICT', 'this plan is complete: start a new one to read again', 'planId');
    let live = this.ctx.live();
    if (!live || live.session.id !== run.sessionId) {
      await this.open(run.sessionId);
      live = this.ctx.live();
    }
    const l = this.requireLive(run.sessionId);
    this.preflight(l, run.spec.points);
    this.launch(id, l);
    return this.get(id);
  }

  async cancel(id: string): Promise<PlanView> {
    const r = this.runners.get(id);
    if (!r) {
      this.repo.getRun(id);
      throw new BenchError('ECONFLICT', 'this plan is not running', 'planId');
    }
    r.cancel();
    await r.done;
    return this.get(id);
  }

  continue(id: string, ok: boolean): PlanView {
    const w = this.waiting.get(id);
    if (!w) {
      this.repo.getRun(id);
      throw new BenchError('ECONFLICT', 'this plan is not waiting for a manual step', 'planId');
    }
    if (ok) w.resolve();
    else w.reject(new Error('the operator stopped the plan'));
    return this.get(id);
  }

  /** Resolves when the run stops (done, cancelled or failed), with its final view. */
  async wait(id: string): Promise<PlanView> {
    const r = this.runners.get(id);
    if (r) await r.done;
    return this.get(id);
  }

  /** Cancels any running plan and waits for it to stop (before its session closes). */
  async stopAll(): Promise<void> {
    const all = [...this.runners.values()];
    all.forEach((r) => r.cancel());
    await Promise.all(all.map((r) => r.done.catch(() => undefined)));
  }

  handlers(): GroupHandlers<keyof PlanCallResults> {
    return {
      planStart: (a) => this.start(a.sessionId, a.plan),
      planCancel: (a) => this.cancel(a.planId),
      planResume: (a) => this.resume(a.planId),
      planContinue: (a) => this.continue(a.planId, a.ok),
      getPlan: (a) => this.get(a.planId),
      listPlans: (a) => {
        this.ctx.store.getSession(a.sessionId);
        return this.repo.listRuns(a.sessionId).map((r) => this.view(r));
      },
    };
  }
}
