// Runs in the renderer. The bench view: the live level (large), the strip chart, the trimmer entry with a
// keep action, the point being read, the null chart of the session, and the kept readings.
import {
  ROLE_LABELS,
  roleFrequencyHz,
  type LiveReading,
  type PointRole,
  type Reading,
  type ServiceClient,
  type Session,
  type Status,
} from '../../app/api';
import { formatPath, validatePath } from '../../app/path';
import { emptyNote, NullChart, StripChart } from '../charts';
import { clear, h } from '../dom';
import { dbm, mhz, signed, sUnits } from '../format';
import { normaliseDecimal } from '../../app/numbers';
import { numberInput, readNumber } from '../numinput';
import { Panes } from '../tabs';
import { FarView, NullTone } from './farview';
import { PlanPanel } from './plan';
import { GuidePanel } from './guide';
import { SpectrumPanel } from './spectrum';

const ROLES: PointRole[] = ['carrier', 'upper', 'lower', 'imd3u', 'imd3l', 'reference', 'floor'];

export class BenchView {
  private readonly root: HTMLElement;
  private session: Session | null = null;
  private kept: Reading[] = [];
  private strip!: StripChart;
  private nullChart!: NullChart;
  private nullTrim = 'A';
  private status: Status | null = null;
  private readonly els: Record<string, HTMLElement> = {};
  private trimInputs = new Map<string, HTMLInputElement>();
  private busy = false;
  /** Guided alignment and the null map (their own files: views/guide.ts, views/nullmap.ts). */
  private guide: GuidePanel | null = null;
  private panes: Panes | null = null;
  private readonly far = new FarView();
  private readonly tone = new NullTone();

  constructor(
    root: HTMLElement,
    private readonly api: ServiceClient,
    private readonly notify: (level: 'info' | 'warn' | 'error', msg: string) => void,
  ) {
    this.root = root;
    this.plan = new PlanPanel(api, notify);
  }

  /** The frequency-stepped plan panel (its own file: views/plan.ts). */
  readonly plan: PlanPanel;

  async open(session: Session): Promise<void> {
    // The status first: it says what the source can do, which decides what the view offers. Until the new
    // session's view is drawn, events still go to the old one (they name their session).
    const status = await this.api.call('status', {});
    this.session = session;
    this.nullTrim = session.trims[0]?.key ?? 'A';
    this.status = status;
    this.render();
    this.kept = await this.api.call('readings', { sessionId: session.id, keptOnly: true });
    this.onStatus(status);
    this.refreshKept();
  }

  onStatus(s: Status): void {
    this.status = s;
    if (!this.session || s.activeSessionId !== this.session.id) return;
    // An ended session is shown for review: its controls that read, tune or keep are stood down.
    this.root.classList.toggle('reviewing', s.sessionEnded);
    if (s.sessionEnded) {
      emptyNote(
        this.els.stripBox,
        'This session has ended: nothing is read. Its kept readings are in the tabs below.',
      );
      this.els.settle.textContent = 'ended';
      this.els.settle.className = 'settle';
    }
    this.guide?.onStatus(s);
    for (const [k, el] of this.trimInputs) {
      if (document.activeElement !== el && typeof s.trims[k] === 'number')
        el.value = String(round(s.trims[k], 3));
    }
    this.root
      .querySelectorAll<HTMLButtonElement>('[data-role]')
      .forEach((b) => b.classList.toggle('on', b.dataset.role === s.tunedRole));
    if (this.els.role && s.tunedRole)
      this.els.role.textContent = `${ROLE_LABELS[s.tunedRole]} · ${mhz(roleFrequencyHz(s.tunedRole, this.session.carrierHz, this.session.toneHz))}`;
  }

  onReading(r: LiveReading): void {
    if (!this.session || r.sessionId !== this.session.id) return;
    const e = this.els;
    e.level.textContent = dbm(r.dbmDut);
    e.unc.textContent = `± ${(2 * r.uDb).toFixed(1)} dB (k=2)`;
    e.rx.textContent = `${dbm(r.dbmRx)} dBm`;
    e.s.textContent = `${sUnits(r.dbmRx, r.freqHz)} · raw ${r.raw}`;
    const ref = this.referenceDbm();
    e.dbc.textContent =
      r.role !== 'upper' && r.role !== 'lower' && ref !== null
        ? `${signed(r.dbmDut - ref.dbm)} dB ${ref.label}`
        : '';
    e.settle.textContent = r.settled
      ? 'steady'
      : r.spreadDb > 0
        ? `settling (spread ${r.spreadDb.toFixed(1)} dB)`
        : 'settling';
    e.settle.className = `settle ${r.settled ? 'steady' : 'moving'}`;
    e.flags.textContent = [
      r.floorLimited ? 'at the receiver floor: true level is lower' : '',
      r.overload ? 'near overload: may read low' : '',
    ]
      .filter(Boolean)
      .join(' · ');
    this.strip.push(r.t, r.dbmDut);
    emptyNote(this.els.stripBox, null);
    this.far.show(r, this.els.role.textContent ?? '');
    this.tone.follow(r.dbmDut);
    this.guide?.onReading(r);
  }

  /** The tone level the carrier is compared with: the mean of the kept upper and lower tone readings. */
  private referenceDbm(): { dbm: number; label: string } | null {
    const last = (role: PointRole) => [...this.kept].reverse().find((k) => k.role === role);
    const tones = [last('upper'), last('lower')].filter((x): x is Reading => !!x);
    if (!tones.length) return null;
    const mw = tones.reduce((a, t) => a + 10 ** (t.dbmDut / 10), 0) / tones.length;
    return {
      dbm: 10 * Math.log10(mw),
      label:
        tones.length === 2
          ? 'rel. mean tone (dBc)'
          : `rel. ${ROLE_LABELS[tones[0].role].toLowerCase()} (dBc)`,
    };
  }

  private render(): void {
    const s = this.session!;
    clear(this.root);
    this.trimInputs.clear();
    const e = this.els;
    e.level = h('span', { id: 'level-dut' }, '—');
    e.unc = h('small', {}, '');
    e.rx = h('b', { id: 'level-rx' }, '—');
    e.s = h('div', {}, '');
    e.dbc = h('div', { class: 'dbc', id: 'level-dbc' });
    e.settle = h('span', { class: 'settle moving', id: 'settle' }, 'waiting for the first reading');
    e.flags = h('span', { class: 'flag' });
    e.role = h('div', { class: 'role' }, `${ROLE_LABELS.carrier} · ${mhz(s.carrierHz)}`);
    const stripCanvas = h('canvas', { id: 'strip-chart' });
    const nullCanvas = h('canvas', { id: 'null-chart' });
    e.keptBody = h('tbody', { id: 'kept-rows' });
    e.nullNote = h('p', { class: 'hint', id: 'null-note' });

    const roles = h(
      'div',
      { class: 'roles', role: 'group', 'aria-label': 'Point being read' },
      h('span', { class: 'hint' }, 'Reading:'),
      ...ROLES.map((r) =>
        h(
          'button',
          {
            type: 'button',
            'data-role': r,
            class: r === 'carrier' ? 'on' : '',
            title:
              r === 'upper' || r === 'lower'
                ? 'Keep the upper and lower tone once: the carrier is then shown in dBc against them'
                : undefined,
            onclick: () => void this.tune(r),
          },
          ROLE_LABELS[r],
        ),
      ),
    );
    e.stripBox = h('div', { class: 'chart-box strip' }, stripCanvas);
    emptyNote(e.stripBox, 'Waiting for the first reading from the receiver…');
    const levelCard = h(
      'section',
      { class: 'card level-card', id: 'level-card' },
      h(
        'div',
        { class: 'row spread center' },
        h('h2', {}, 'Level at the transmitter output'),
        h(
          'div',
          { class: 'row center tight' },
          this.tone.button(),
          h(
            'button',
            {
              type: 'button',
              class: 'ghost small',
              id: 'far-view-open',
              title: 'The level large enough to read from across the bench (Esc returns)',
              onclick: () => this.far.open(),
            },
            'Far view',
          ),
        ),
      ),
      h(
        'div',
        { class: 'level' },
        h('div', {}, e.role, h('div', { class: 'big' }, e.level, h('small', {}, ' dBm '), e.unc), e.dbc),
        h(
          'div',
          { class: 'side' },
          h('div', {}, 'at the receiver'),
          e.rx,
          e.s,
          h('div', { class: 'gap-top' }, e.settle),
          e.flags,
        ),
      ),
      roles,
      e.stripBox,
    );

    const trimSelect = h(
      'select',
      {
        id: 'null-trim',
        onchange: (ev: Event) => {
          this.nullTrim = (ev.target as HTMLSelectElement).value;
          this.refreshKept();
        },
      },
      ...s.trims.map((t) => h('option', { value: t.key }, `${t.label} (${t.unit})`)),
    );
    const nullCard = h(
      'section',
      { class: 'pane-card' },
      h(
        'div',
        { class: 'row spread' },
        h('h2', {}, 'Carrier null'),
        h('label', { class: 'inline' }, 'against', trimSelect),
      ),
      (e.nullBox = h('div', { class: 'chart-box tall' }, nullCanvas)),
      e.nullNote,
    );

    const trimCard = h('section', { class: 'card', id: 'trim-card' }, h('h2', {}, 'Trimmers'));
    for (const t of s.trims) {
      const inp = numberInput({ id: `trim-${t.key}`, value: (t.min + t.max) / 2 });
      this.trimInputs.set(t.key, inp);
      const apply = () => {
        let v: number;
        try {
          v = readNumber(inp, `${t.label}`, { min: t.min, max: t.max, unit: t.unit });
        } catch (x) {
          this.notify('error', (x as Error).message);
          return;
        }
        void this.applyTrim(t.key, v);
      };
      inp.addEventListener('change', apply);
      const nudge = (d: number) =>
        h(
          'button',
          {
            type: 'button',
            title: `${d > 0 ? '+' : ''}${d} ${t.unit}`,
            onclick: () => {
              const now = Number(normaliseDecimal(inp.value) ?? NaN);
              inp.value = String(round((Number.isFinite(now) ? now : (t.min + t.max) / 2) + d, 4));
              apply();
            },
          },
          d > 0 ? '+' : '−',
        );
      trimCard.append(
        h('div', { class: 'trim' }, h('label', {}, `${t.label} (${t.unit})`, inp), nudge(-0.05), nudge(0.05)),
      );
    }
    const keepBtn = h(
      'button',
      { type: 'button', class: 'primary keep', id: 'keep', onclick: () => void this.keep() },
      'Keep this reading',
    );
    trimCard.append(
      h(
        'p',
        { class: 'hint' },
        'Type where each trimmer stands (4.37 or 4,37; or − / +), wait for "steady", then keep. Key K keeps.',
      ),
      keepBtn,
    );

    const fromIn = numberInput({ id: 'sweep-from', value: 1 });
    const toIn = numberInput({ id: 'sweep-to', value: 8 });
    const stepsIn = numberInput({ id: 'sweep-steps', value: 11 }, true);
    const sweepTrim = h(
      'select',
      { id: 'sweep-trim' },
      ...s.trims.map((t) => h('option', { value: t.key }, t.label)),
    );
    e.sweepMsg = h('p', { class: 'hint', id: 'sweep-msg' });
    const sweepBtn = h(
      'button',
      {
        type: 'button',
        id: 'sweep-run',
        onclick: () => void this.sweep(sweepTrim.value, fromIn, toIn, stepsIn, sweepBtn),
      },
      'Run sweep',
    );
    // The sweep needs a source that turns its own trimmers, as the status says its driver declares.
    const simOnly = this.status?.sourceCaps?.trims === true;
    const sweepCard = simOnly
      ? h(
          'section',
          { class: 'pane-card' },
          h(
            'p',
            { class: 'hint' },
            'The simulated bench turns one trimmer through the range and keeps a reading at each step.',
          ),
          h(
            'div',
            { class: 'row' },
            h('label', {}, 'Trimmer', sweepTrim),
            h('label', {}, 'From', fromIn),
            h('label', {}, 'To', toIn),
            h('label', {}, 'Steps', stepsIn),
            sweepBtn,
          ),
          e.sweepMsg,
        )
      : null;

    e.keptEmpty = h(
      'p',
      { class: 'hint empty-note', id: 'kept-empty' },
      'Nothing kept yet in this session: set the trimmers, wait for "steady", and press Keep.',
    );
    const keptCard = h(
      'section',
      { class: 'pane-card' },
      e.keptEmpty,
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
              ...s.trims.map((t) => h('th', { class: 'num' }, t.key)),
              h('th', { class: 'num' }, 'dBm DUT'),
              h('th', { class: 'num' }, '± (k=2)'),
              h('th', {}, ''),
            ),
          ),
          e.keptBody,
        ),
      ),
    );

    const setup = h(
      'section',
      { class: 'pane-card' },
      h(
        'p',
        { class: 'hint' },
        `Receiver: ${s.receiver.name} (${s.receiver.source}), ${s.receiver.bandwidthHz} Hz, rated max ${dbm(s.receiver.maxInputDbm)} dBm`,
      ),
      h(
        'p',
        { class: 'hint' },
        `Path: ${formatPath(validatePath(s.path))}; receiver input at PEP ${dbm(s.rxPepDbm)} dBm`,
      ),
      h('p', { class: 'hint', id: 'reading-rule' }, readingRule(this.status?.unattendedStopS ?? null)),
    );

    this.guide = new GuidePanel(this.api, s, this.notify, {
      keep: () => this.keep(true),
      fitted: () => this.refreshKept(false),
      turnsTrims: simOnly,
    });
    const map = this.guide.mapElement();
    const planEl = this.plan.element(s);
    const spectrumEl = this.spectrumPanel(s.id);
    this.panes = new Panes(
      'bench-panes',
      [
        { key: 'null', label: 'Null chart', body: nullCard },
        ...(map ? [{ key: 'map', label: 'Null map', body: map }] : []),
        { key: 'kept', label: 'Kept readings', body: keptCard },
        { key: 'plan', label: 'Plan', body: planEl },
        { key: 'spectrum', label: 'Spectrum (SDR)', body: spectrumEl },
        ...(sweepCard ? [{ key: 'sweep', label: 'Sweep', body: sweepCard }] : []),
        { key: 'setup', label: 'Set-up', body: setup },
      ],
      'Bench panels',
    );
    // At a glance: the level, the trimmers with Keep, and the guide's next step share the first screen;
    // the other panels are one tab away below the level, so none of the three ever scrolls away.
    this.root.append(
      h(
        'div',
        { class: 'grid bench-grid' },
        h('div', { class: 'stack' }, levelCard, h('section', { class: 'card panes-card' }, this.panes.root)),
        h('div', { class: 'stack' }, trimCard, this.guide.element()),
      ),
      this.far.element(),
    );
    this.strip = new StripChart(stripCanvas);
    this.nullChart = new NullChart(nullCanvas);
  }

  async applyTrim(key: string, value: number): Promise<void> {
    try {
      await this.api.call('setTrims', { trims: { [key]: value } });
      this.strip.push(Date.now(), NaN);
    } catch (e) {
      this.notify('error', (e as Error).message);
    }
  }

  /** @param waitSettled keep the next steady reading after the last change, not simply the latest */
  async keep(waitSettled = false): Promise<void> {
    if (this.busy) return;
    try {
      const r = await this.api.call('keep', { note: this.guide?.keepNote() ?? '', waitSettled });
      this.kept.push(r);
      this.refreshKept();
      this.notify(
        'info',
        `Kept ${ROLE_LABELS[r.role].toLowerCase()}: ${dbm(r.dbmDut)} dBm${r.settled ? '' : ' (not yet steady)'}`,
      );
    } catch (e) {
      this.notify('error', (e as Error).message);
    }
  }

  private async tune(role: PointRole): Promise<void> {
    try {
      await this.api.call('tune', { role });
      this.strip.reset();
    } catch (e) {
      this.notify('error', (e as Error).message);
    }
  }

  private async sweep(
    trim: string,
    fromIn: HTMLInputElement,
    toIn: HTMLInputElement,
    stepsIn: HTMLInputElement,
    btn: HTMLButtonElement,
  ): Promise<void> {
    let from: number, to: number, steps: number;
    try {
      from = readNumber(fromIn, 'Sweep from');
      to = readNumber(toIn, 'Sweep to');
      steps = readNumber(stepsIn, 'Sweep steps', { integer: true, min: 2, max: 200 });
    } catch (x) {
      this.els.sweepMsg.textContent = (x as Error).message;
      return;
    }
    btn.disabled = true;
    this.busy = true;
    this.els.sweepMsg.textContent = 'Sweeping…';
    try {
      const r = await this.api.call('sweep', { trim, from, to, steps });
      this.kept.push(...r.readings);
      this.refreshKept();
      const best = r.readings.reduce((m, x) => (x.dbmDut < m.dbmDut ? x : m));
      this.els.sweepMsg.textContent = `Done: ${r.readings.length} readings kept; deepest ${dbm(best.dbmDut)} dBm at ${trim} = ${best.trims[trim]}.`;
    } catch (e) {
      this.els.sweepMsg.textContent = (e as Error).message;
    } finally {
      btn.disabled = false;
      this.busy = false;
    }
  }

  onProgress(done: number, total: number, message: string): void {
    // Only while the sweep runs: its last progress event may arrive after the result has said "Done".
    if (this.els.sweepMsg && this.busy)
      this.els.sweepMsg.textContent = `Sweeping: ${done}/${total} (${message})`;
  }

  /** The live SDR spectrum (its own file: views/spectrum.ts); what it keeps joins the kept list. */
  private spectrumPanel(sessionId: string): HTMLElement {
    const el = new SpectrumPanel(this.api, sessionId, this.notify).element();
    el.addEventListener('spectrum-kept', (e) => {
      this.kept.push(...(e as CustomEvent<Reading[]>).detail);
      this.refreshKept();
    });
    return el;
  }

  /** @param refit ask the guide for a new fit (not when the guide itself asks for the redraw) */
  private refreshKept(refit = true): void {
    const s = this.session!;
    const e0 = this.els;
    const body = this.els.keptBody;
    clear(body);
    for (const r of [...this.kept].reverse().slice(0, 200)) {
      body.append(
        h(
          'tr',
          {},
          h('td', {}, ROLE_LABELS[r.role]),
          ...s.trims.map((t) =>
            h('td', { class: 'num' }, r.trims[t.key] === undefined ? '' : String(round(r.trims[t.key], 3))),
          ),
          h('td', { class: 'num' }, `${r.floorLimited ? '≤ ' : ''}${dbm(r.dbmDut)}`),
          h('td', { class: 'num' }, (2 * r.uDb).toFixed(1)),
          h('td', {}, r.settled ? '' : 'not steady'),
        ),
      );
    }
    const def = s.trims.find((t) => t.key === this.nullTrim) ?? s.trims[0];
    const pts = this.kept
      .filter((r) => r.role === 'carrier' && typeof r.trims[def.key] === 'number')
      .map((r) => ({
        x: r.trims[def.key],
        y: r.dbmDut,
        floorLimited: r.floorLimited,
        group: s.trims
          .filter((t) => t.key !== def.key && typeof r.trims[t.key] === 'number')
          .map((t) => `${t.label} at ${round(r.trims[t.key], 3)} ${t.unit}`)
          .join(', '),
      }));
    e0.keptEmpty.hidden = this.kept.length > 0;
    this.panes?.relabel('kept', this.kept.length ? `Kept readings (${this.kept.length})` : 'Kept readings');
    emptyNote(
      e0.nullBox,
      pts.length
        ? null
        : 'No carrier readings kept yet. Set a trimmer, wait for "steady", press Keep; repeat on both sides of the dip, and the null appears here.',
    );
    const now = this.status?.trims[def.key] ?? null;
    this.nullChart.show(pts, `${def.label} (${def.unit})`, now, this.guide?.chartExtras(def.key) ?? []);
    if (refit) void this.guide?.refresh(this.kept, def.key);
    this.els.nullNote.textContent = pts.length
      ? `${pts.length} carrier reading${pts.length === 1 ? '' : 's'}. Deepest so far: ${dbm(Math.min(...pts.map((p) => p.y)))} dBm.`
      : '';
  }
}

function round(x: number, d: number): number {
  const f = 10 ** d;
  return Math.round(x * f) / f;
}

/** When this bench stops reading, as the status states the rule. */
export function readingRule(unattendedStopS: number | null): string {
  return unattendedStopS === null
    ? 'Reading stops when you end the session or close the app.'
    : `Reading stops when you end the session, or after ${unattendedStopS} s with no window open on this bench; ` +
        'the session then stays open and reads again as soon as a window opens.';
}
