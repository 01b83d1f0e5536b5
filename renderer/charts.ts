// Runs in the renderer. The two charts of the bench view, on chart.js: a strip chart of the live level and
// the null chart (carrier level at the transmitter against a trimmer's position).
import {
  Chart,
  LineController,
  LineElement,
  LinearScale,
  PointElement,
  ScatterController,
  Legend,
  Tooltip,
  Filler,
  Ticks,
  type ChartDataset,
} from 'chart.js';
import { decimateForChart } from '../app/decimate';
import { dbm as dbmText } from './format';

Chart.register(
  LineController,
  LineElement,
  LinearScale,
  PointElement,
  ScatterController,
  Legend,
  Tooltip,
  Filler,
);
/** A colour of the page's theme (style.css :root), so charts follow the light and the dark look. */
export function themeColour(name: string, fallback: string): string {
  const v = getComputedStyle(document.documentElement).getPropertyValue(name).trim();
  return v || fallback;
}

Chart.defaults.color = themeColour('--muted', '#9db4b9');
Chart.defaults.borderColor = themeColour('--line', '#2a4850');
Chart.defaults.font.family = "'DejaVu Sans', system-ui, sans-serif";
// The system's light or dark look can change while the app is open: the charts follow it.
window.matchMedia?.('(prefers-color-scheme: light)').addEventListener('change', () => {
  Chart.defaults.color = themeColour('--muted', '#9db4b9');
  Chart.defaults.borderColor = themeColour('--line', '#2a4850');
  for (const c of Object.values(Chart.instances)) {
    for (const axis of Object.values(c.options.scales ?? {})) {
      if (axis?.grid) axis.grid.color = Chart.defaults.borderColor as string;
      if (axis?.ticks) axis.ticks.color = Chart.defaults.color as string;
    }
    c.update('none');
  }
});
// Ticks are written like every other figure in the app, whatever the browser's locale: a decimal point,
// no thousands separator, the typographic minus (renderer/format.ts).
Chart.defaults.locale = 'en-US';
Chart.defaults.scales.linear.ticks.callback = function (value, index, ticks) {
  const text = Ticks.formatters.numeric.call(this, Number(value), index, ticks);
  return String(text).replace(/,/g, '').replace(/^-/, '\u2212');
};

/**
 * What an empty chart or panel says instead of empty axes: `text` shows over the box (the canvas is
 * hidden); null takes the note away once there is something to draw.
 */
export function emptyNote(box: HTMLElement, text: string | null): void {
  let note = box.querySelector<HTMLElement>(':scope > .chart-empty');
  if (text === null) {
    box.classList.remove('empty');
    note?.remove();
    return;
  }
  if (!note) {
    note = document.createElement('p');
    note.className = 'chart-empty';
    box.append(note);
  }
  if (note.textContent !== text) note.textContent = text;
  box.classList.add('empty');
}

const STRIP_SECONDS = 60;

export class StripChart {
  readonly chart: Chart<'line', { x: number; y: number }[]>;
  private points: { t: number; y: number }[] = [];
  /** Index of the oldest point still in the window. */
  private head = 0;
  private dirty = false;
  private readonly canvas: HTMLCanvasElement;

  constructor(canvas: HTMLCanvasElement) {
    this.canvas = canvas;
    canvas.setAttribute('role', 'img');
    canvas.setAttribute('aria-label', 'level at the transmitter: no reading yet');
    this.chart = new Chart(canvas, {
      type: 'line',
      data: {
        datasets: [{ data: [], borderColor: '#f2b33d', borderWidth: 1.6, pointRadius: 0, tension: 0 }],
      },
      options: {
        animation: false,
        maintainAspectRatio: false,
        parsing: false,
        plugins: { legend: { display: false }, tooltip: { enabled: false } },
        scales: {
          x: { type: 'linear', min: -STRIP_SECONDS, max: 0, title: { display: true, text: 'seconds ago' } },
          y: { type: 'linear', title: { display: true, text: 'dBm' } },
        },
      },
    });
    // Redraw at most ~6 times a second, however fast readings arrive.
    setInterval(() => this.flush(), 160);
  }

  push(t: number, y: number): void {
    this.points.push({ t, y });
    // Old points leave by moving a start index (shift() would copy the whole window for every reading).
    const cut = t - STRIP_SECONDS * 1000;
    while (this.head < this.points.length && this.points[this.head].t < cut) this.head++;
    if (this.head > 4096 && this.head > this.points.length / 2) {
      this.points = this.points.slice(this.head);
      this.head = 0;
    }
    this.dirty = true;
  }

  reset(): void {
    this.points = [];
    this.head = 0;
    this.dirty = true;
  }

  private flush(): void {
    if (!this.dirty) return;
    this.dirty = false;
    const shown = this.points.slice(this.head);
    const last = shown.length ? shown[shown.length - 1].t : 0;
    // A fast source puts more readings in the window than the chart has pixels: draw each pixel column's
    // lowest and highest reading (a dip of one reading stays visible; an average would hide the null).
    const columns = Math.max(100, this.canvas.clientWidth || 600);
    this.chart.data.datasets[0].data = decimateForChart(shown, columns).map((p) => ({
      x: (p.t - last) / 1000,
      y: p.y,
    }));
    // At least 10 dB of scale, so a steady level does not fill the panel with quantisation steps.
    const ys = shown.map((p) => p.y).filter(Number.isFinite);
    const y = this.chart.options.scales?.y;
    if (y && ys.length) {
      const lo = ys.reduce((a, b) => Math.min(a, b));
      const hi = ys.reduce((a, b) => Math.max(a, b));
      const pad = Math.max(0, 10 - (hi - lo)) / 2;
      y.min = Math.floor(lo - pad - 1);
      y.max = Math.ceil(hi + pad + 1);
      // The picture in words, for assistive tools (a canvas has no text of its own).
      this.canvas.setAttribute(
        'aria-label',
        `level at the transmitter over the last ${STRIP_SECONDS} s: from ${dbmText(lo)} to ${dbmText(hi)} dBm, now ${dbmText(ys[ys.length - 1])} dBm`,
      );
    }
    this.chart.update('none');
    // The tick labels as drawn, for tests and assistive tools.
    this.canvas.dataset.ticks = JSON.stringify(this.chart.scales.y?.ticks.map((t) => String(t.label)) ?? []);
  }
}

export interface NullPoint {
  x: number;
  y: number;
  floorLimited: boolean;
  /** Which series the point belongs to, e.g. "Balance C at 5.5 turns". */
  group: string;
}

/** Older series fade towards the panel colour; the newest is amber. */
const GROUP_COLOURS = ['#5b6f66', '#7f8f6a', '#a59f5c', '#c9a94d', '#f2b33d'];

export class NullChart {
  readonly chart: Chart<'scatter', { x: number; y: number }[]>;
  private readonly canvas: HTMLCanvasElement;

  constructor(canvas: HTMLCanvasElement) {
    this.canvas = canvas;
    this.chart = new Chart(canvas, {
      type: 'scatter',
      data: { datasets: [] },
      options: {
        animation: false,
        maintainAspectRatio: false,
        parsing: false,
        // Datasets without a label (the lower edge of a band) stay out of the legend.
        plugins: {
          legend: { position: 'bottom', labels: { boxWidth: 12, filter: (item) => item.text !== '' } },
        },
        scales: {
          x: { type: 'linear', title: { display: true, text: 'trimmer position' } },
          y: { type: 'linear', title: { display: true, text: 'carrier at transmitter (dBm)' } },
        },
      },
    });
  }

  show(
    points: NullPoint[],
    xLabel: string,
    current: number | null,
    extra: ChartDataset<'scatter', { x: number; y: number }[]>[] = [],
  ): void {
    const sorted = [...points].sort((a, b) => a.x - b.x);
    // One series per setting of the other trimmers, newest last: each is a V of its own, and the
    // series show how the null deepens as the other trimmer comes closer to balance.
    const groups = new Map<string, NullPoint[]>();
    for (const p of points) {
      const g = groups.get(p.group) ?? [];
      g.push(p);
      groups.set(p.group, g);
    }
    // A setting with fewer than three points is no curve: those points go into one grey series.
    const curves = [...groups.entries()].filter(([, g]) => g.length >= 3);
    const recent = curves.slice(-GROUP_COLOURS.length);
    const loose = points.filter((p) => !recent.some(([name]) => name === p.group));
    const series = (label: string, pts: NullPoint[], colour: string, line: boolean) => {
      const byX = [...pts].sort((a, b) => a.x - b.x);
      return {
        label,
        data: byX.map(({ x, y }) => ({ x, y })),
        backgroundColor: colour,
        borderColor: colour,
        borderWidth: 1,
        showLine: line,
        // A reading at the receiver floor is a bound: drawn as a downward triangle.
        pointStyle: byX.map((p) => (p.floorLimited ? 'triangle' : 'circle')),
        pointRotation: byX.map((p) => (p.floorLimited ? 180 : 0)),
        pointRadius: 4,
      };
    };
    const datasets: ChartDataset<'scatter', { x: number; y: number }[]>[] = recent.map(([name, pts], i) =>
      series(
        name || 'kept carrier readings',
        pts,
        GROUP_COLOURS[GROUP_COLOURS.length - recent.length + i],
        true,
      ),
    );
    if (loose.length) datasets.unshift(series('at other settings', loose, '#6d8288', false));
    datasets.push(...extra);
    if (current !== null && sorted.length) {
      const ys = sorted.map((p) => p.y);
      datasets.push({
        label: 'trimmer now',
        type: 'line' as never,
        data: [
          { x: current, y: Math.min(...ys) - 3 },
          { x: current, y: Math.max(...ys) + 3 },
        ],
        borderColor: '#8cc4f0',
        borderDash: [4, 4],
        pointRadius: 0,
        showLine: true,
      });
    }
    this.chart.data.datasets = datasets;
    // The plotted points, as data for assistive tools and tests (a canvas has no text of its own).
    this.canvas.dataset.points = JSON.stringify(sorted);
    this.canvas.dataset.series = JSON.stringify(datasets.map((d) => d.label).filter(Boolean));
    const deepest = sorted.length ? sorted.reduce((m, p) => (p.y < m.y ? p : m)) : null;
    this.canvas.setAttribute('role', 'img');
    this.canvas.setAttribute(
      'aria-label',
      `null chart, ${sorted.length} points against ${xLabel}` +
        (deepest ? `; deepest ${dbmText(deepest.y)} dBm at ${deepest.x}` : ''),
    );
    const xs = this.chart.options.scales?.x;
    if (xs && 'title' in xs && xs.title) xs.title.text = xLabel;
    this.chart.update('none');
  }
}
