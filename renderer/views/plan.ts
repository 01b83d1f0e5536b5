// Runs in the renderer. The plan panel of the bench view: choose the points, how many readings to average
// and the reference; start, cancel or resume; follow the progress; answer the manual steps the plan asks
// for; see the result as a table and a bar chart in dB against the reference.
import {
  POINT_ROLES,
  ROLE_LABELS,
  roleFrequencyHz,
  type PlanView,
  type PointRole,
  type ProgressEvent,
  type ServiceClient,
  type Session,
} from '../../app/api';
import { REFERENCE_LABELS, SUPPRESSION_REFERENCES, type SuppressionReference } from '../../app/analysis';
import { DEFAULT_PLAN_POINTS, planTable } from '../../app/plan';
import { analysePath, validatePath } from '../../app/path';
import { clear, h } from '../dom';
import { dbm } from '../format';
import { PlanChart } from './planchart';
import { numberInput, readNumber } from '../numinput';
import { emptyNote } from '../charts';

type Notify = (level: 'info' | 'warn' | 'error', msg: string) => void;

const PLAN_EMPTY = 'Each point’s level against the reference appears here as the plan measures it.';

export class PlanPanel {
  private session: Session | null = null;
  private view: PlanView | null = null;
  private chart: PlanChart | null = null;
  private readonly els: Record<string, HTMLElement> = {};
  private readonly boxes = new Map<PointRole, HTMLInputElement>();

  constructor(
    private readonly api: ServiceClient,
    private readonly notify: Notify,
  ) {}

  /** The panel for a session; loads the session's latest plan run, if any. */
  element(session: Session): HTMLElement {
    this.session = session;
    this.view = null;
    this.boxes.clear();
    const e = this.els;
    const points = h('div', { class: 'plan-points', id: 'plan-points' });
    for (const role of POINT_ROLES.filter((r) => r !== 'floor')) {
      const box = h('input', { type: 'checkbox', value: role, checked: DEFAULT_PLAN_POINTS.includes(role) });
      this.boxes.set(role, box);
      const hz = roleFrequencyHz(role, session.carrierHz, session.toneHz);
      points.append(
        h('label', { class: 'check', title: `${(hz / 1e6).toFixed(6)} MHz` }, box, ` ${ROLE_LABELS[role]}`),
      );
    }
    const average = numberInput({ id: 'plan-average', value: 5 }, true);
    const settle = numberInput({ id: 'plan-settle', value: 1500 }, true);
    const reference = h(
      'select',
      { id: 'plan-reference', onchange: () => this.render() },
      ...SUPPRESSION_REFERENCES.map((r) => h('option', { value: r }, REFERENCE_LABELS[r])),
    );
    e.start = h(
      'button',
      { type: 'button', class: 'primary', id: 'plan-start', onclick: () => void this.start() },
      'Run plan',
    );
    e.cancel = h(
      'button',
      { type: 'button', id: 'plan-cancel', onclick: () => void this.cancel() },
      'Cancel',
    );
    e.resume = h(
      'button',
      { type: 'button', id: 'plan-resume', onclick: () => void this.resume() },
      'Resume',
    );
    e.progress = h('progress', { id: 'plan-progress', max: 1, value: 0 });
    e.msg = h('p', { class: 'hint', id: 'plan-msg' }, 'No plan run in this session yet.');
    e.askText = h('p', {});
    e.ask = h(
      'div',
      { class: 'plan-ask', id: 'plan-ask', hidden: true, role: 'alert' },
      e.askText,
      h(
        'div',
        { class: 'row' },
        h(
          'button',
          { type: 'button', class: 'primary', id: 'plan-continue', onclick: () => void this.answer(true) },
          'Done, continue',
        ),
        h(
          'button',
          { type: 'button', id: 'plan-stop', onclick: () => void this.answer(false) },
          'Stop the plan',
        ),
      ),
    );
    e.refLine = h('p', { class: 'hint', id: 'plan-ref' });
    e.rows = h('tbody', { id: 'plan-rows' });
    const canvas = h('canvas', { id: 'plan-chart' });
    const card = h(
      'section',
      { class: 'card', id: 'plan-card' },
      h('h2', {}, 'Frequency-stepped plan'),
      h(
        'p',
        { class: 'hint' },
        'Steps the receiver through the chosen points, waits for the meter to settle, averages the readings and ' +
          'stores them. The unbalanced-carrier reference asks you to unbalance the modulator: bring the carrier ' +
          'up to about one tone, never more (the plan is checked as safe up to that).',
      ),
      points,
      h(
        'div',
        { class: 'row' },
        h('label', {}, 'Readings per point', average),
        h('label', {}, 'Settle (ms)', settle),
        h('label', {}, 'Reference', reference),
      ),
      h('div', { class: 'row' }, e.start, e.cancel, e.resume, e.progress),
      e.msg,
      e.ask,
      e.refLine,
      (e.chartBox = h('div', { class: 'chart-box' }, canvas)),
      h(
        'div',
        { class: 'scroll short' },
        h(
          'table',
          {},
          h(
            'thead',
            {},
            h(
              'tr',
              {},
              h('th', {}, 'Point'),
              h('th', { class: 'num' }, 'MHz'),
              h('th', { class: 'num' }, 'dBm at TX'),
              h('th', { class: 'num' }, '± (k=2)'),
              h('th', { class: 'num' }, 'dB rel. ref.'),
              h('th', { class: 'num' }, '± (k=2)'),
              h('th', {}, ''),
            ),
          ),
          e.rows,
        ),
      ),
    );
    this.els.average = average;
    this.els.settle = settle;
    this.els.reference = reference;
    queueMicrotask(() => {
      this.chart = new PlanChart(canvas);
      emptyNote(e.chartBox, PLAN_EMPTY);
      void this.loadLatest();
    });
    this.render();
    return card;
  }

  private async loadLatest(): Promise<void> {
    if (!this.session) return;
    try {
      const runs = await this.api.call('listPlans', { sessionId: this.session.id });
      if (runs.length) this.show(runs[0]);
    } catch (e) {
      this.notify('error', (e as Error).message);
    }
  }

  private show(v: PlanView): void {
    this.view = v;
    (this.els.reference as HTMLSelectElement).value = v.spec.reference;
    for (const [role, box] of this.boxes) box.checked = v.spec.points.includes(role);
    (this.els.average as HTMLInputElement).value = String(v.spec.average);
    (this.els.settle as HTMLInputElement).value = String(v.spec.settleMs);
    this.render();
  }

  onProgress(p: ProgressEvent): void {
    if (!p.task.startsWith('plan:')) return;
    const id = p.task.slice(5);
    if (p.total > 0) {
      const bar = this.els.progress as HTMLProgressElement;
      bar.max = p.total;
      bar.value = Math.max(0, p.done);
    }
    if (this.els.msg) this.els.msg.textContent = p.message;
    void this.api
      .call('getPlan', { planId: id })
      .then((v) => {
        if (this.session && v.sessionId === this.session.id) {
          this.view = v;
          this.render(p.message);
        }
      })
      .catch(() => undefined);
  }

  private render(message?: string): void {
    const v = this.view;
    const e = this.els;
    if (!e.start) return;
    const running = v?.active ?? false;
    (e.start as HTMLButtonElement).disabled = running;
    e.cancel.hidden = !running;
    e.resume.hidden = !(
      v &&
      !running &&
      (v.state === 'cancelled' || v.state === 'interrupted' || v.state === 'failed')
    );
    e.ask.hidden = !v?.waiting;
    if (v?.waiting) e.askText.textContent = v.waiting.prompt;
    if (!v) return;
    const done = v.points.filter((p) => p.state === 'done').length;
    const bar = e.progress as HTMLProgressElement;
    bar.max = v.points.length;
    bar.value = done;
    if (!message)
      e.msg.textContent =
        v.state === 'done'
          ? `Plan complete: ${done} points.`
          : v.state === 'running' && running
            ? `${done} of ${v.points.length} points done${v.stage ? `; ${v.stage}` : ''}.`
            : `Plan ${v.state}${v.message ? `: ${v.message}` : ''} (${done} of ${v.points.length} points done).`;
    // The levels are stored: the table can be shown against any reference, not only the run's own.
    const kind = (e.reference as HTMLSelectElement).value as SuppressionReference;
    const pathU = analysePath(validatePath(this.session!.path)).uDb;
    const t = planTable(v.points, kind, pathU);
    e.refLine.textContent = t.reference
      ? `Reference: ${t.reference.label}, ${dbm(t.reference.dbm, 2)} dBm at the transmitter.`
      : `No reference yet: ${t.reason}.`;
    clear(e.rows);
    for (const r of t.rows) {
      const flags = [
        r.floorLimited ? 'at the floor: at most' : '',
        r.overload ? 'near overload' : '',
        r.state === 'done' && !r.settled ? 'not steady' : '',
        r.state === 'pending' ? 'to do' : '',
      ].filter(Boolean);
      e.rows.append(
        h(
          'tr',
          { 'data-role': r.role },
          h('td', {}, r.label),
          h('td', { class: 'num' }, (r.freqHz / 1e6).toFixed(6)),
          h(
            'td',
            { class: 'num' },
            r.dbmDut === null ? '—' : `${r.floorLimited ? '≤ ' : ''}${dbm(r.dbmDut, 2)}`,
          ),
          h('td', { class: 'num' }, r.uDb === null ? '—' : (2 * r.uDb).toFixed(2)),
          h(
            'td',
            { class: 'num' },
            r.relDb === null ? '—' : `${r.floorLimited ? '≤ ' : ''}${dbm(r.relDb, 2)}`,
          ),
          h('td', { class: 'num' }, r.uRelDb === null ? '—' : (2 * r.uRelDb).toFixed(2)),
          h('td', { class: 'flag' }, flags.join(', ')),
        ),
      );
    }
    this.chart?.show(t.rows, t.reference?.label ?? 'reference');
    emptyNote(this.els.chartBox, t.rows.some((r) => r.relDb !== null) ? null : PLAN_EMPTY);
  }

  private spec() {
    const points = POINT_ROLES.filter((r) => this.boxes.get(r)?.checked);
    return {
      points,
      average: readNumber(this.els.average as HTMLInputElement, 'Readings per point', {
        integer: true,
        min: 1,
        max: 200,
      }),
      settleMs: readNumber(this.els.settle as HTMLInputElement, 'Settle (ms)', {
        integer: true,
        min: 0,
        max: 60000,
        unit: 'ms',
      }),
      reference: (this.els.reference as HTMLSelectElement).value,
    };
  }

  private async start(): Promise<void> {
    if (!this.session) return;
    try {
      this.show(await this.api.call('planStart', { sessionId: this.session.id, plan: this.spec() }));
    } catch (e) {
      this.els.msg.textContent = (e as Error).message;
      this.notify('error', (e as Error).message);
    }
  }

  private async cancel(): Promise<void> {
    if (!this.view) return;
    try {
      this.show(await this.api.call('planCancel', { planId: this.view.id }));
    } catch (e) {
      this.notify('error', (e as Error).message);
    }
  }

  private async resume(): Promise<void> {
    if (!this.view) return;
    try {
      this.show(await this.api.call('planResume', { planId: this.view.id }));
    } catch (e) {
      this.els.msg.textContent = (e as Error).message;
      this.notify('error', (e as Error).message);
    }
  }

  private async answer(ok: boolean): Promise<void> {
    if (!this.view) return;
    try {
      this.show(await this.api.call('planContinue', { planId: this.view.id, ok }));
    } catch (e) {
      this.notify('error', (e as Error).message);
    }
  }
}
