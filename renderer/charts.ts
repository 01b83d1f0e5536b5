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
  type ChartDataset,
} from 'chart.js';

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
Chart.defaults.color = '#9db4b9';
Chart.defaults.borderColor = '#2a4850';
Chart.defaults.font.family = "'DejaVu Sans', system-ui, sans-serif";

const STRIP_SECONDS = 60;

export class StripChart {
  readonly chart: Chart<'line', { x: number; y: number }[]>;
  private points: { t: number; y: number }[] = [];
  private dirty = false;

  constructor(canvas: HTMLCanvasElement) {
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
          y: { type: 'linear', title: { display: true, text: 'dBm at transmitter' } },
        },
      },
    });
    // Redraw at most ~6 times a second, however fast readings arrive.
    setInterval(() => this.flush(), 160);
  }

  push(t: number, y: number): void {
    this.points.push({ t, y });
    const cut = t - STRIP_SECONDS * 1000;
    while (this.points.length && this.points[0].t < cut) this.points.shift();
    this.dirty = true;
  }

  reset(): void {
    this.points = [];
    this.dirty = true;
  }

  private flush(): void {
    if (!this.dirty) return;
    this.dirty = false;
    const last = this.points.length ? this.points[this.points.length - 1].t : 0;
    this.chart.data.datasets[0].data = this.points.map((p) => ({ x: (p.t - last) / 1000, y: p.y }));
    this.chart.update('none');
  }
}

export interface NullPoint {
  x: number;
  y: number;
  floorLimited: boolean;
}

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
        plugins: { legend: { position: 'bottom', labels: { boxWidth: 12 } } },
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
    const datasets: ChartDataset<'scatter', { x: number; y: number }[]>[] = [
      {
        label: 'kept carrier readings',
        data: sorted.filter((p) => !p.floorLimited).map(({ x, y }) => ({ x, y })),
        backgroundColor: '#f2b33d',
        borderColor: '#f2b33d',
        pointRadius: 4,
      },
      {
        label: 'at receiver floor (true level lower)',
        data: sorted.filter((p) => p.floorLimited).map(({ x, y }) => ({ x, y })),
        backgroundColor: '#ef7a85',
        pointStyle: 'triangle',
        pointRotation: 180,
        pointRadius: 5,
      },
      ...extra,
    ];
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
    this.canvas.setAttribute('aria-label', `null chart, ${sorted.length} points against ${xLabel}`);
    const xs = this.chart.options.scales?.x;
    if (xs && 'title' in xs && xs.title) xs.title.text = xLabel;
    this.chart.update('none');
  }
}
