// Runs in the renderer. The plan's bar chart: each point's level in dB against the reference (chart.js).
// A bar whose reading sat at the receiver floor is drawn apart: the true level is at most that.
import { BarController, BarElement, CategoryScale, Chart, LinearScale, Legend, Tooltip } from 'chart.js';
import type { PlanRow } from '../../app/plan';

Chart.register(BarController, BarElement, CategoryScale, LinearScale, Legend, Tooltip);

export class PlanChart {
  readonly chart: Chart<'bar', (number | null)[], string>;
  private readonly canvas: HTMLCanvasElement;

  constructor(canvas: HTMLCanvasElement) {
    this.canvas = canvas;
    canvas.setAttribute('role', 'img');
    this.chart = new Chart(canvas, {
      type: 'bar',
      data: { labels: [], datasets: [] },
      options: {
        animation: false,
        maintainAspectRatio: false,
        plugins: { legend: { position: 'bottom', labels: { boxWidth: 12 } } },
        scales: {
          x: { type: 'category' },
          y: { type: 'linear', title: { display: true, text: 'dB rel. reference' } },
        },
      },
    });
  }

  show(rows: readonly PlanRow[], refLabel: string): void {
    const done = rows.filter((r) => r.relDb !== null);
    this.chart.data.labels = done.map((r) => r.label);
    this.chart.data.datasets = [
      {
        label: `dB relative to ${refLabel}`,
        data: done.map((r) => (r.floorLimited ? null : r.relDb)),
        backgroundColor: '#f2b33d',
      },
      {
        label: 'at the receiver floor (at most)',
        data: done.map((r) => (r.floorLimited ? r.relDb : null)),
        backgroundColor: '#ef7a85',
      },
    ];
    // The plotted values, for assistive tools and tests (a canvas has no text of its own).
    this.canvas.dataset.points = JSON.stringify(done.map((r) => ({ role: r.role, relDb: r.relDb })));
    this.canvas.setAttribute('aria-label', `plan chart, ${done.length} points in dB against ${refLabel}`);
    this.chart.update('none');
  }
}
