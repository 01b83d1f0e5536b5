// Runs in the renderer. Revision comparison: for each headline figure, a chart of the spread over every
// unit and session of each revision (range, interquartile box, median, each session as a dot) and a table
// with the change from the revision before, worse ones marked; a revision's row opens its sessions, and a
// session opens its unit.
import {
  BarController,
  BarElement,
  CategoryScale,
  Chart,
  LineController,
  LineElement,
  LinearScale,
  PointElement,
  Tooltip,
  type ChartDataset,
} from 'chart.js';
import type { DesignComparison } from '../../app/api';
import type { Change, Spread } from '../../app/compare';
import {
  METRICS,
  METRIC_LABELS,
  REFERENCE_LABELS,
  SUPPRESSION_REFERENCES,
  type Metric,
  type SuppressionReference,
} from '../../app/analysis';
import { clear, h } from '../dom';
import { when } from '../format';
import { go, type NavDeps, type RecordsView } from '../route';
import { f1 } from './recordsui';

Chart.register(
  BarController,
  BarElement,
  CategoryScale,
  LineController,
  LineElement,
  LinearScale,
  PointElement,
  Tooltip,
);

const UNITS: Record<Metric, string> = {
  carrier: 'dB below the reference',
  balance: '|upper − lower| (dB)',
  opposite: 'dB below the wanted sideband',
  imd3: 'dB below the reference',
};

export class CompareView implements RecordsView {
  private charts: Chart[] = [];

  constructor(
    private readonly root: HTMLElement,
    private readonly deps: NavDeps,
  ) {}

  async show(params: Record<string, string>): Promise<void> {
    const { api } = this.deps;
    this.charts.forEach((c) => c.destroy());
    this.charts = [];
    clear(this.root);
    const tree = await api.call('tree', {});
    const designId = params.design ?? tree.find((d) => d.revisions.length > 1)?.id ?? tree[0]?.id;
    const reference = (SUPPRESSION_REFERENCES as readonly string[]).includes(params.reference ?? '')
      ? (params.reference as SuppressionReference)
      : 'pep';
    const designSel = h(
      'select',
      {
        id: 'compare-design',
        onchange: () => go('compare', { design: designSel.value, reference: refSel.value }),
      },
      ...tree.map((d) => h('option', { value: d.id, selected: d.id === designId }, d.name)),
    );
    const refSel = h(
      'select',
      {
        id: 'compare-reference',
        onchange: () => go('compare', { design: designSel.value, reference: refSel.value }),
      },
      ...SUPPRESSION_REFERENCES.map((r) =>
        h(
          'option',
          { value: r, selected: r === reference },
          `against ${r === 'pep' ? 'PEP' : REFERENCE_LABELS[r]}`,
        ),
      ),
    );
    this.root.append(
      h(
        'div',
        { class: 'records-head' },
        h('h1', {}, 'Compare revisions'),
        h(
          'div',
          { class: 'row toolbar' },
          h('label', { class: 'inline' }, 'Design', designSel),
          h('label', { class: 'inline' }, 'Carrier and IMD3', refSel),
        ),
        h(
          'p',
          { class: 'hint' },
          'Each dot is one session of one unit (its last kept reading of each point). The thin bar spans lowest to highest, the box the middle half, the bar across it the median. A revision is marked better or worse than the one before only when the medians differ by more than the measurement can tell apart.',
        ),
      ),
    );
    if (!designId) {
      this.root.append(h('p', { class: 'hint' }, 'No designs yet.'));
      return;
    }
    const c = await api.call('compareRevisions', { designId, reference });
    const summary = h(
      'div',
      { class: 'change-summary', id: 'compare-summary' },
      ...c.changes.filter((x) => x.kind !== 'same').map((x) => changeChip(x)),
    );
    if (!summary.childNodes.length)
      summary.append(
        h(
          'span',
          { class: 'hint' },
          'No revision differs from the one before by more than the measurement can tell.',
        ),
      );
    this.root.append(summary);
    const grid = h('div', { class: 'compare-grid' });
    this.root.append(grid);
    for (const m of METRICS) grid.append(this.metricCard(c, m));
  }

  private metricCard(c: DesignComparison, m: Metric): HTMLElement {
    const rows = c.revisions;
    const measured = rows.some((r) => r.metrics[m]);
    const card = h(
      'section',
      { class: 'card', 'data-metric': m },
      h(
        'h2',
        {},
        `${METRIC_LABELS[m]}${m === 'carrier' || m === 'imd3' ? `, against ${c.reference === 'pep' ? 'PEP' : REFERENCE_LABELS[c.reference]}` : ''}`,
      ),
    );
    if (!measured) {
      card.append(
        h(
          'p',
          { class: 'hint' },
          m === 'opposite'
            ? 'Not measured: the sessions are DSB. Set a session’s emission to USB or LSB to state its opposite sideband.'
            : 'Not measured in any session.',
        ),
      );
      return card;
    }
    const canvas = h('canvas', {
      id: `compare-chart-${m}`,
      'aria-label': `${METRIC_LABELS[m]} per revision`,
    });
    card.append(h('div', { class: 'chart-box' }, canvas));
    this.charts.push(spreadChart(canvas, c, m));
    const drill = h('div', { class: 'drill' });
    const change = (revId: string) => c.changes.find((x) => x.metric === m && x.toRevisionId === revId);
    const tbody = h(
      'tbody',
      {},
      ...rows.map((r) => {
        const s = r.metrics[m];
        const ch = change(r.revisionId);
        return h(
          'tr',
          {
            class: `pick${ch && ch.kind !== 'same' ? ` ${ch.kind}` : ''}`,
            'data-revision': r.name,
            title: r.changes,
            onclick: () => this.drill(drill, r.name, s),
          },
          h('td', {}, r.name),
          h('td', { class: 'num' }, `${r.unitCount}/${s?.n ?? 0}`),
          ...(s
            ? [s.min, s.median, s.max].map((v) => h('td', { class: 'num' }, f1(v)))
            : [h('td', { class: 'num', colspan: 3 }, 'not measured')]),
          h('td', { class: 'num' }, s ? `±${f1(2 * s.uTypical)}` : ''),
          h('td', {}, ch ? changeText(ch) : ''),
        );
      }),
    );
    card.append(
      h(
        'table',
        { class: 'spread-table' },
        h(
          'thead',
          {},
          h(
            'tr',
            {},
            h('th', {}, 'Revision'),
            h('th', { class: 'num', title: 'units / sessions' }, 'Units/sess.'),
            h('th', { class: 'num' }, 'Min'),
            h('th', { class: 'num' }, 'Median'),
            h('th', { class: 'num' }, 'Max'),
            h('th', { class: 'num', title: 'typical expanded uncertainty of one value (k = 2)' }, 'U one'),
            h('th', {}, 'Against the revision before'),
          ),
        ),
        tbody,
      ),
      drill,
    );
    return card;
  }

  private drill(box: HTMLElement, rev: string, s: Spread | null): void {
    clear(box);
    if (!s) return;
    box.append(
      h('h3', {}, `Revision ${rev}: every session`),
      h(
        'table',
        {},
        h(
          'thead',
          {},
          h(
            'tr',
            {},
            h('th', {}, 'Unit'),
            h('th', {}, 'Session'),
            h('th', { class: 'num' }, 'Value (dB)'),
            h('th', { class: 'num' }, 'U (k = 2)'),
          ),
        ),
        h(
          'tbody',
          {},
          ...s.values.map((v) =>
            h(
              'tr',
              {
                class: 'pick',
                'data-unit': v.serial,
                onclick: () => go('designs', { unit: v.unitId, session: v.sessionId }),
              },
              h('td', {}, v.serial),
              h('td', {}, when(v.startedAt)),
              h('td', { class: 'num' }, `${v.atLeast ? '≥ ' : ''}${f1(v.value)}`),
              h('td', { class: 'num' }, `±${f1(2 * v.u)}`),
            ),
          ),
        ),
      ),
    );
  }
}

function changeText(ch: Change): string {
  if (ch.kind === 'same') return `same within ±${f1(ch.thresholdDb)} dB`;
  return `${ch.kind === 'better' ? 'better' : 'WORSE'} by ${f1(Math.abs(ch.betterByDb))} dB`;
}

function changeChip(ch: Change): HTMLElement {
  return h(
    'span',
    { class: `chip ${ch.kind}` },
    `${METRIC_LABELS[ch.metric]}: ${ch.to} ${ch.kind === 'better' ? 'better' : 'worse'} than ${ch.from} by ${f1(Math.abs(ch.betterByDb))} dB`,
  );
}

type Point = { x: string; y: number };

function spreadChart(canvas: HTMLCanvasElement, c: DesignComparison, m: Metric): Chart {
  const labels = c.revisions.map((r) => r.name);
  const spreads = c.revisions.map((r) => r.metrics[m]);
  const range = spreads.map((s) => (s ? [s.min, s.max] : null)) as unknown as number[];
  const box = spreads.map((s) => (s ? [s.q1, s.q3] : null)) as unknown as number[];
  // At least 6 dB of axis: a spread of tenths of a dB must not fill the chart as if it mattered.
  const lo = Math.min(...spreads.filter((s): s is Spread => !!s).map((s) => s.min));
  const hi = Math.max(...spreads.filter((s): s is Spread => !!s).map((s) => s.max));
  const pad = Math.max(0, (6 - (hi - lo)) / 2);
  const medians: Point[] = [];
  const dots: Point[] = [];
  c.revisions.forEach((r, i) => {
    const s = spreads[i];
    if (!s) return;
    medians.push({ x: r.name, y: s.median });
    for (const v of s.values) dots.push({ x: r.name, y: v.value });
  });
  const worse = new Set(c.changes.filter((x) => x.metric === m && x.kind === 'worse').map((x) => x.to));
  const colour = (name: string, a: string) =>
    worse.has(name) ? `rgba(239,122,133,${a})` : `rgba(127,214,194,${a})`;
  const datasets = [
    {
      type: 'bar',
      label: 'lowest to highest',
      data: range,
      grouped: false,
      barPercentage: 0.08,
      backgroundColor: labels.map((l) => colour(l, '0.55')),
    },
    {
      type: 'bar',
      label: 'middle half',
      data: box,
      grouped: false,
      barPercentage: 0.45,
      backgroundColor: labels.map((l) => colour(l, '0.35')),
      borderColor: labels.map((l) => colour(l, '1')),
      borderWidth: 1.5,
    },
    {
      type: 'line',
      label: 'median',
      data: medians,
      showLine: false,
      pointStyle: 'line',
      pointRadius: 22,
      pointBorderWidth: 3,
      borderColor: '#f2b33d',
    },
    {
      type: 'line',
      label: 'one session',
      data: dots,
      showLine: false,
      pointRadius: 3.5,
      backgroundColor: '#e4eef0',
      borderColor: '#0e1d23',
    },
  ] as unknown as ChartDataset<'bar'>[];
  // The plotted summary, for assistive tools and tests (a canvas has no text of its own).
  const summary = c.revisions.map((r) => ({
    revision: r.name,
    median: r.metrics[m]?.median ?? null,
    n: r.metrics[m]?.n ?? 0,
  }));
  canvas.dataset.summary = JSON.stringify(summary);
  canvas.setAttribute('role', 'img');
  canvas.setAttribute(
    'aria-label',
    `${METRIC_LABELS[m]} per revision: ` +
      summary
        .map(
          (x) =>
            `${x.revision} median ${x.median === null ? 'not measured' : `${x.median.toFixed(1)} dB`} over ${x.n} unit(s)`,
        )
        .join('; '),
  );
  return new Chart(canvas, {
    type: 'bar',
    data: { labels, datasets },
    options: {
      animation: false,
      maintainAspectRatio: false,
      plugins: { legend: { display: false } },
      scales: {
        x: { type: 'category', title: { display: true, text: 'board revision' } },
        y: {
          type: 'linear',
          beginAtZero: false,
          suggestedMin: lo - pad,
          suggestedMax: hi + pad,
          grace: '8%',
          title: { display: true, text: UNITS[m] },
        },
      },
    },
  });
}
