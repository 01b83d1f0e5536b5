// Runs in the renderer. The guided-alignment panel of the bench view: what to set next and what the fit
// predicts there, the three steps (set, wait for steady, keep) with the one that is due highlighted, the
// prediction beside each reading kept at a suggestion, and a plain "stop here" when more readings would
// gain less than a reading's own uncertainty. It also feeds the null chart and the null map with the fit.
import type { ChartDataset } from 'chart.js';
import type {
  LiveReading,
  NullFitSummary,
  Reading,
  ServiceClient,
  Session,
  Status,
  TrialSummary,
} from '../../app/api';
import { fixed, moveText, unitSuffix } from '../../app/nullfit/format';
import { ApiError } from '../api';
import { clear, h } from '../dom';
import { dbm } from '../format';
import { NullMap, type MapPoint } from './nullmap';

type Notify = (level: 'info' | 'warn' | 'error', msg: string) => void;
type Dataset = ChartDataset<'scatter', { x: number; y: number }[]>;

/** What each of the guide's modes means to someone at the bench. */
const MODE_TEXT: Record<TrialSummary['mode'], string> = {
  survey: 'looking over the travel',
  probe: 'narrowing down the null',
  confirm: 'going to the fitted null',
  done: 'null reached',
};

interface Paired {
  n: number;
  setting: string;
  predicted: number | null;
  band: [number | null, number | null] | null;
  read: number;
  floorLimited: boolean;
}

export interface GuideHooks {
  /** Keep the live reading (the bench view's own keep, so the table and chart follow). */
  keep: () => Promise<void>;
  /** The fit changed: redraw the null chart. */
  fitted: () => void;
  /** The source turns the trimmers itself (the simulated bench), as its driver declares. */
  turnsTrims: boolean;
}

export class GuidePanel {
  private readonly card: HTMLElement;
  private readonly map: NullMap | null;
  private readonly els: Record<string, HTMLElement> = {};
  private readonly mode: HTMLSelectElement;
  private trial: TrialSummary | null = null;
  private chartFit: NullFitSummary | null = null;
  private history: Paired[] = [];
  private lastSeenId = 0;
  private sinceId: number | undefined;
  private status: Status | null = null;
  private steady = false;
  private running: Promise<void> | null = null;
  private again = false;
  private kept: Reading[] = [];
  private chartKey: string;
  private keeping = false;

  constructor(
    private readonly api: ServiceClient,
    private readonly session: Session,
    private readonly notify: Notify,
    private readonly hooks: GuideHooks,
  ) {
    const s = session;
    this.chartKey = s.trims[0].key;
    const both = s.trims.slice(0, 2);
    const options: [string, string][] = [];
    if (both.length === 2)
      options.push([both.map((t) => t.key).join(','), `${both[0].label} and ${both[1].label} together`]);
    for (const t of s.trims) {
      const held = s.trims.filter((o) => o !== t).map((o) => o.label);
      options.push([t.key, held.length ? `${t.label} only (${held.join(', ')} held)` : t.label]);
    }
    this.mode = h(
      'select',
      { id: 'guide-mode', 'aria-label': 'What to guide', onchange: () => this.restart() },
      ...options.map(([v, text]) => h('option', { value: v }, text)),
    );
    const e = this.els;
    e.state = h('div', { class: 'guide-state', id: 'guide-state' }, 'Reading the session…');
    e.next = h('div', { class: 'guide-next', id: 'guide-next' });
    e.turn = h('div', { class: 'guide-turn', id: 'guide-turn' });
    e.predict = h('div', { class: 'guide-predict', id: 'guide-predict' });
    e.reason = h('p', { class: 'hint', id: 'guide-reason' });
    e.stop = h('div', { class: 'guide-stop', id: 'guide-stop', hidden: true });
    e.last = h('div', { class: 'guide-last', id: 'guide-last' });
    e.historyBody = h('tbody', { id: 'guide-history' });
    const simOnly = hooks.turnsTrims;
    e.set = h(
      'button',
      {
        type: 'button',
        id: 'guide-set',
        title: simOnly
          ? 'The simulated bench turns its trimmers to these positions'
          : 'Tell the bench the trimmers now stand at these positions',
        onclick: () => void this.setSuggested(),
      },
      simOnly ? 'Set these positions' : 'I have turned them there',
    );
    e.keep = h(
      'button',
      { type: 'button', class: 'primary', id: 'guide-keep', onclick: () => void this.keepOnce() },
      'Keep this reading',
    );
    e.carrier = h(
      'p',
      { class: 'caution', id: 'guide-carrier', hidden: true },
      'The receiver is not on the carrier: the guide only uses carrier readings. ',
      h('button', { type: 'button', onclick: () => void this.tuneCarrier() }, 'Read the carrier'),
    );
    e.step1 = h('li', {}, h('span', {}, 'Set the trimmers as shown '), e.set);
    e.step2 = h('li', {}, h('span', {}, 'Wait until the level shows “steady”'));
    e.step3 = h('li', {}, h('span', {}, 'Keep the reading '), e.keep);
    e.error = h('p', { class: 'error-text', id: 'guide-error' });
    this.card = h(
      'section',
      { class: 'card guide', id: 'guide-card' },
      h('div', { class: 'row spread center' }, h('h2', {}, 'Guided alignment'), this.mode),
      e.state,
      e.stop,
      h('div', { class: 'guide-box' }, e.next, e.turn, e.predict),
      h('ol', { class: 'guide-steps', id: 'guide-steps' }, e.step1, e.step2, e.step3),
      e.carrier,
      e.last,
      e.reason,
      e.error,
      h(
        'details',
        { class: 'guide-more' },
        h('summary', {}, 'Predicted and read, reading by reading'),
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
                h('th', { class: 'num' }, '#'),
                h('th', {}, 'Setting'),
                h('th', { class: 'num' }, 'Predicted dBm'),
                h('th', { class: 'num' }, 'Read dBm'),
                h('th', { class: 'num' }, 'Read − predicted'),
              ),
            ),
            e.historyBody,
          ),
        ),
      ),
      h(
        'div',
        { class: 'row gap-top' },
        h(
          'button',
          {
            type: 'button',
            class: 'ghost',
            id: 'guide-afresh',
            title:
              'Ignore the readings kept so far (after resoldering, or when the bench has drifted for long)',
            onclick: () => this.afresh(),
          },
          'Start afresh',
        ),
      ),
    );
    this.map = s.trims.length >= 2 ? new NullMap(s.trims[0], s.trims[1]) : null;
  }

  element(): HTMLElement {
    return this.card;
  }

  /** The null map card (sessions with two or more trimmers), or null. */
  mapElement(): HTMLElement | null {
    return this.map?.element() ?? null;
  }

  private keys(): string[] {
    return this.mode.value.split(',');
  }

  /** Ask the service again after the kept readings changed; `chartKey` is the trimmer the null chart shows. */
  refresh(kept: Reading[], chartKey: string): Promise<void> {
    this.kept = kept;
    this.chartKey = chartKey;
    if (this.running) {
      this.again = true;
      return this.running;
    }
    this.running = (async () => {
      do {
        this.again = false;
        await this.load();
      } while (this.again);
      this.running = null;
    })();
    return this.running;
  }

  private restart(): void {
    this.history = [];
    void this.refresh(this.kept, this.chartKey);
  }

  private afresh(): void {
    const carrier = this.kept.filter((r) => r.role === 'carrier');
    this.sinceId = carrier.length ? carrier[carrier.length - 1].id : undefined;
    this.notify('info', 'The guide starts afresh: readings kept so far are left out of the fit.');
    this.restart();
  }

  private async load(): Promise<void> {
    const args = { sessionId: this.session.id, sinceId: this.sinceId };
    const keys = this.keys();
    let trial: TrialSummary;
    try {
      trial = await this.api.call('nextTrial', { ...args, trims: keys });
      this.els.error.textContent = '';
    } catch (e) {
      this.els.error.textContent = (e as Error).message;
      return;
    }
    this.pair(trial);
    this.trial = trial;
    // The chart's trimmer: the guide's own fit when it covers it, else a fit of that trimmer alone.
    this.chartFit = trial.fit && trial.fit.keys.includes(this.chartKey) ? trial.fit : null;
    if (!this.chartFit) this.chartFit = await this.fit({ ...args, trims: [this.chartKey] });
    if (this.map) {
      const pair = [this.session.trims[0].key, this.session.trims[1].key];
      const mapFit = trial.fit?.kind === '2d' ? trial.fit : await this.fit({ ...args, trims: pair });
      this.map.show({
        fit: mapFit,
        points: this.mapPoints(pair),
        next:
          trial.kind === '2d'
            ? { a: trial.next[pair[0]], b: trial.next[pair[1]], label: trial.stop ? 'leave here' : 'next' }
            : null,
        now: this.status ? { a: this.status.trims[pair[0]], b: this.status.trims[pair[1]] } : null,
      });
    }
    this.render();
    this.hooks.fitted();
  }

  private async fit(args: {
    sessionId: string;
    sinceId?: number;
    trims: string[];
  }): Promise<NullFitSummary | null> {
    try {
      return await this.api.call('nullFit', args);
    } catch (e) {
      // Too few readings for a fit is the normal state early on, not an error to show.
      if (e instanceof ApiError && e.code === 'EINVAL' && e.field === 'readings') return null;
      this.els.error.textContent = (e as Error).message;
      return null;
    }
  }

  private mapPoints(pair: string[]): MapPoint[] {
    return this.kept
      .filter(
        (r) =>
          r.role === 'carrier' &&
          (this.sinceId === undefined || r.id > this.sinceId) &&
          typeof r.trims[pair[0]] === 'number' &&
          typeof r.trims[pair[1]] === 'number',
      )
      .map((r) => ({
        a: r.trims[pair[0]],
        b: r.trims[pair[1]],
        dbm: r.dbmDut,
        floorLimited: r.floorLimited,
        id: r.id,
      }));
  }

  /** Readings kept since the last suggestion, at its setting: set prediction and reading side by side. */
  private pair(trial: TrialSummary): void {
    const prev = this.trial;
    const fresh = this.kept.filter((r) => r.role === 'carrier' && r.id > this.lastSeenId);
    if (fresh.length) this.lastSeenId = fresh[fresh.length - 1].id;
    if (!prev || prev.keys.join() !== trial.keys.join()) return;
    for (const r of fresh) {
      if (!this.atSetting(r.trims, prev)) continue;
      this.history.push({
        n: this.history.length + 1,
        setting: prev.keys.map((k) => `${k} ${fixed(r.trims[k], prev.resolution[k])}`).join(', '),
        predicted: prev.predictedDbm,
        band: prev.band,
        read: r.dbmDut,
        floorLimited: r.floorLimited,
      });
    }
  }

  private atSetting(trims: Record<string, number>, t: TrialSummary): boolean {
    return Object.keys(t.next).every(
      (k) =>
        typeof trims[k] === 'number' &&
        Math.abs(trims[k] - t.next[k]) <= (t.resolution[k] ?? this.stepOf(k)) / 2 + 1e-9,
    );
  }

  private stepOf(key: string): number {
    const t = this.session.trims.find((x) => x.key === key);
    return t ? (t.step ?? (t.max - t.min) / 2000) : 1e-3;
  }

  /** A note for the reading about to be kept: the prediction it is checked against. */
  keepNote(): string {
    const t = this.trial;
    if (!t || !this.status || !this.atSetting(this.status.trims, t)) return '';
    return t.predictedDbm === null
      ? `guided: ${MODE_TEXT[t.mode]}`
      : `guided: predicted ${t.predictedDbm.toFixed(1)} dBm`;
  }

  onStatus(s: Status): void {
    // A trimmer moved or the receiver retuned: the level shown is no longer steady for this setting.
    const before = this.status;
    if (
      !before ||
      before.tunedRole !== s.tunedRole ||
      Object.keys(s.trims).some((k) => before.trims[k] !== s.trims[k])
    )
      this.steady = false;
    this.status = s;
    this.steps();
  }

  onReading(r: LiveReading): void {
    this.steady = r.settled && r.role === 'carrier';
    this.steps();
  }

  /** Keep the next steady reading; a second click while waiting for it keeps nothing more. */
  private async keepOnce(): Promise<void> {
    if (this.keeping) return;
    this.keeping = true;
    (this.els.keep as HTMLButtonElement).disabled = true;
    try {
      await this.hooks.keep();
    } finally {
      this.keeping = false;
      (this.els.keep as HTMLButtonElement).disabled = false;
    }
  }

  private async setSuggested(): Promise<void> {
    const t = this.trial;
    if (!t) return;
    try {
      await this.api.call('setTrims', { trims: t.next });
      this.steady = false;
      this.steps();
    } catch (e) {
      this.notify('error', (e as Error).message);
    }
  }

  private async tuneCarrier(): Promise<void> {
    try {
      await this.api.call('tune', { role: 'carrier' });
    } catch (e) {
      this.notify('error', (e as Error).message);
    }
  }

  private label(key: string): { label: string; unit: string } {
    const t = this.session.trims.find((x) => x.key === key);
    return { label: t?.label ?? key, unit: t?.unit ?? '' };
  }

  /** Which of the three steps is due: set (until the trimmers stand at the suggestion), wait, keep. */
  private steps(): void {
    const e = this.els;
    const t = this.trial;
    const onCarrier = !this.status || this.status.tunedRole === null || this.status.tunedRole === 'carrier';
    e.carrier.hidden = onCarrier;
    const there = !!t && !!this.status && this.atSetting(this.status.trims, t);
    // Stopped and at the setting: nothing is due; every step shows done.
    const due = !there ? 1 : t.stop ? 4 : this.steady ? 3 : 2;
    [e.step1, e.step2, e.step3].forEach((li, i) => {
      li.className = i + 1 < due ? 'done' : i + 1 === due ? 'now' : '';
    });
    (e.set as HTMLButtonElement).disabled = !t || there;
    e.keep.className = due === 3 ? 'primary' : '';
    this.card.dataset.due = String(due);
    if (t) e.turn.textContent = this.turnText(t);
    if (t?.stop) this.stopText(there);
  }

  /** How far to turn each trimmer from where it stands now (kept current as the trimmers move). */
  private turnText(t: TrialSummary): string {
    const held = Object.keys(t.held).map(
      (k) => `${this.label(k).label} held at ${t.held[k]}${unitSuffix(this.label(k).unit)}`,
    );
    const now = this.status?.trims;
    let turn = t.turnText;
    if (now && t.keys.every((k) => typeof now[k] === 'number')) {
      const moves = t.keys.map((k) => ({ k, d: t.next[k] - now[k], step: t.resolution[k] }));
      const go = moves.filter((m) => Math.abs(m.d) >= m.step / 2);
      const stay = moves.filter((m) => Math.abs(m.d) < m.step / 2).map((m) => m.k);
      turn =
        go.length === 0
          ? `leave ${stay.join(' and ')} where ${stay.length > 1 ? 'they are' : 'it is'}`
          : `turn ${go.map((m) => `${m.k} ${moveText(m.d, m.step, this.label(m.k).unit)}`).join(', ')}` +
            (stay.length ? `; leave ${stay.join(' and ')}` : '');
    }
    return [turn, ...held].filter(Boolean).join(' · ');
  }

  /** The stop banner: leave the trimmers where they are, or set them to the fitted null first. */
  private stopText(there: boolean): void {
    const t = this.trial!;
    const e = this.els;
    const where = t.keys
      .map(
        (k) =>
          `${k} ${there ? 'at' : 'to'} ${fixed(t.next[k], t.resolution[k])}${unitSuffix(this.label(k).unit)}`,
      )
      .join(', ');
    const gain = Math.max(t.expectedGainDb ?? 0, 0);
    clear(e.stop);
    e.stop.append(
      h(
        'b',
        {},
        !t.fit
          ? 'Stop here: turning the trimmers does not change the level. '
          : /beyond the end of travel/.test(t.reason)
            ? 'Stop here: the null lies beyond the end of travel; the end stop is as deep as it goes. '
            : 'Stop here: the null is reached. ',
      ),
      there ? `Leave ${where}. ` : `Set ${where} and leave ${t.keys.length > 1 ? 'them' : 'it'} there. `,
      t.fit
        ? `More readings would gain about ${gain.toFixed(1)} dB, less than one reading's uncertainty (${t.uDb.toFixed(1)} dB).`
        : '',
    );
  }

  private render(): void {
    const t = this.trial;
    const e = this.els;
    if (!t) return;
    const lines = t.keys.map((k) => {
      const { label, unit } = this.label(k);
      return h(
        'div',
        {},
        `${t.stop ? 'Leave' : 'Set'} ${label} (${k}) ${t.stop ? 'at' : 'to'} `,
        h('b', {}, `${fixed(t.next[k], t.resolution[k])}${unitSuffix(unit)}`),
      );
    });
    clear(e.next);
    e.next.append(...lines);
    e.next.dataset.text = t.setText;
    e.next.dataset.next = JSON.stringify(t.next);
    e.predict.textContent =
      t.predictedDbm === null
        ? 'Predicted level: none yet: the fit needs a few readings across the travel first.'
        : `Predicted there: ${dbm(t.predictedDbm)} dBm` +
          (t.band && t.band[0] !== null && t.band[1] !== null
            ? ` (${dbm(t.band[0])} to ${dbm(t.band[1])})`
            : '') +
          (t.expectedGainDb !== null
            ? t.expectedGainDb >= 0
              ? `, ${t.expectedGainDb.toFixed(1)} dB below the best reading so far`
              : t.mode === 'probe'
                ? `, ${(-t.expectedGainDb).toFixed(1)} dB above the best reading (a probe on the flank)`
                : `, ${(-t.expectedGainDb).toFixed(1)} dB above the best reading so far (within the band)`
            : '');
    e.state.textContent = `Reading ${t.n + 1} · ${MODE_TEXT[t.mode]}${
      t.bestSeenDbm !== null ? ` · best so far ${dbm(t.bestSeenDbm)} dBm` : ''
    }`;
    e.reason.textContent = `Why: ${t.reason}`;
    e.stop.hidden = !t.stop;
    this.card.classList.toggle('stopped', t.stop);
    const last = this.history[this.history.length - 1];
    clear(e.last);
    if (last) {
      const diff = last.predicted === null ? null : last.read - last.predicted;
      const inside =
        last.band && last.band[0] !== null && last.band[1] !== null
          ? last.read >= last.band[0] && last.read <= last.band[1]
          : null;
      e.last.append(
        h(
          'div',
          { class: 'guide-pair' },
          h(
            'span',
            {},
            'Predicted',
            h('b', {}, last.predicted === null ? '—' : `${dbm(last.predicted)} dBm`),
          ),
          h('span', {}, 'Read', h('b', {}, `${last.floorLimited ? '≤ ' : ''}${dbm(last.read)} dBm`)),
          h(
            'span',
            { class: inside === false ? 'off' : inside ? 'on' : '' },
            'Difference',
            h('b', {}, diff === null ? '—' : `${diff >= 0 ? '+' : '−'}${Math.abs(diff).toFixed(1)} dB`),
          ),
        ),
        h(
          'p',
          { class: 'hint' },
          `Last guided reading (${last.setting}): ` +
            (inside === null
              ? 'no prediction yet (still looking over the travel).'
              : inside
                ? 'within the predicted band: the fit holds.'
                : 'outside the predicted band: the fit learns from it (drift, or a knock on the bench).'),
        ),
      );
    }
    clear(e.historyBody);
    for (const p of [...this.history].reverse()) {
      const diff = p.predicted === null ? '' : (p.read - p.predicted).toFixed(1);
      e.historyBody.append(
        h(
          'tr',
          {},
          h('td', { class: 'num' }, String(p.n)),
          h('td', {}, p.setting),
          h('td', { class: 'num' }, p.predicted === null ? '—' : dbm(p.predicted)),
          h('td', { class: 'num' }, `${p.floorLimited ? '≤ ' : ''}${dbm(p.read)}`),
          h('td', { class: 'num' }, diff),
        ),
      );
    }
    this.steps();
  }

  /** Datasets for the null chart against `key`: the fitted curve, its band, the best setting, the next trial. */
  chartExtras(key: string): Dataset[] {
    const f = this.chartFit;
    const out: Dataset[] = [];
    const curve = f?.curves[key];
    if (f && curve) {
      const other = f.keys.filter((k) => k !== key);
      const along = other.length
        ? ` (2-D fit, ${other.map((k) => `${k} at its best ${fixed(f.best[k], this.stepOf(k))}`).join(', ')})`
        : '';
      const lo = curve.filter((p) => p.lo !== null).map((p) => ({ x: p.x, y: p.lo! }));
      const hi = curve.filter((p) => p.hi !== null).map((p) => ({ x: p.x, y: p.hi! }));
      const line = (extra: Partial<Dataset>): Partial<Dataset> => ({
        type: 'line' as never,
        showLine: true,
        pointRadius: 0,
        borderWidth: 0,
        ...extra,
      });
      out.push(
        line({ label: '', data: lo, borderColor: 'rgba(140, 196, 240, 0.35)', fill: false }) as Dataset,
        line({
          label: `${Math.round(f.level * 100)} % band`,
          data: hi,
          borderColor: 'rgba(140, 196, 240, 0.35)',
          backgroundColor: 'rgba(140, 196, 240, 0.16)',
          fill: '-1',
        }) as Dataset,
        line({
          label: `fitted null${along}`,
          data: curve.map((p) => ({ x: p.x, y: p.dbm })),
          borderColor: '#8cc4f0',
          backgroundColor: '#8cc4f0',
          borderWidth: 2,
        }) as Dataset,
      );
      const ci = f.ci[key];
      if (ci && ci[0] !== null && ci[1] !== null) {
        out.push({
          label: `best ${fixed(f.best[key], this.stepOf(key))} (${Math.round(f.level * 100)} % interval)`,
          type: 'line' as never,
          data: [
            { x: ci[0], y: f.bestReadingDbm },
            { x: ci[1], y: f.bestReadingDbm },
          ],
          borderColor: '#7fd6c2',
          backgroundColor: '#7fd6c2',
          borderWidth: 3,
          pointStyle: 'line',
          pointRadius: 6,
          pointRotation: 90,
          showLine: true,
        });
      }
    }
    const t = this.trial;
    if (t && typeof t.next[key] === 'number' && t.keys.includes(key) && t.predictedDbm !== null) {
      out.push({
        label: `${t.stop ? 'leave at' : 'next'}: ${key} ${fixed(t.next[key], t.resolution[key])}`,
        data: [{ x: t.next[key], y: t.predictedDbm }],
        borderColor: '#f2b33d',
        backgroundColor: '#f2b33d',
        pointStyle: 'crossRot',
        pointRadius: 10,
        borderWidth: 3,
      });
    }
    return out;
  }
}
