// Runs in the renderer. The null map: the fitted carrier level over two trimmers as a shaded map with
// 10 dB contours, drawn on a canvas by hand, with the kept readings as numbered points joined in the order
// they were taken, the fitted null with its confidence ellipse, and the next setting the guide suggests.
import type { NullFitSummary, TrimDef } from '../../app/api';
import { predictMap } from '../../app/nullfit/align';
import { fixed } from '../../app/nullfit/format';
import { h } from '../dom';
import { emptyNote } from '../charts';

export interface MapPoint {
  a: number;
  b: number;
  dbm: number;
  floorLimited: boolean;
  id: number;
}

export interface MapData {
  fit: NullFitSummary | null;
  points: MapPoint[];
  /** The setting the guide suggests, and what to call it on the map ("next", "leave here"). */
  next: { a: number; b: number; label: string } | null;
  now: { a: number; b: number } | null;
}

/** Deep to loud: the null is dark, loud settings warm (our panel colours). */
const RAMP: [number, [number, number, number]][] = [
  [0, [9, 20, 24]],
  [0.25, [24, 72, 78]],
  [0.5, [64, 150, 135]],
  [0.75, [242, 179, 61]],
  [1, [239, 122, 133]],
];
/** dB from the deepest to the loudest colour. */
const SPAN_DB = 60;
const COLOURS = {
  text: '#9db4b9',
  line: '#2a4850',
  path: '#8cc4f0',
  point: '#e4eef0',
  last: '#f2b33d',
  best: '#7fd6c2',
  next: '#f2b33d',
};

function ramp(f: number): [number, number, number] {
  const x = Math.min(1, Math.max(0, f));
  for (let i = 1; i < RAMP.length; i++) {
    if (x <= RAMP[i][0]) {
      const [x0, c0] = RAMP[i - 1];
      const [x1, c1] = RAMP[i];
      const t = (x - x0) / (x1 - x0);
      return [0, 1, 2].map((k) => Math.round(c0[k] + t * (c1[k] - c0[k]))) as [number, number, number];
    }
  }
  return RAMP[RAMP.length - 1][1];
}

/** Round tick positions across [lo, hi], about `n` of them. */
function ticks(lo: number, hi: number, n: number): number[] {
  const raw = (hi - lo) / n;
  const p = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((m) => m * p).find((s) => s >= raw) ?? raw;
  const out: number[] = [];
  for (let v = Math.ceil(lo / step) * step; v <= hi + step * 1e-9; v += step) out.push(Number(v.toFixed(12)));
  return out;
}

export class NullMap {
  private readonly card: HTMLElement;
  private readonly canvas: HTMLCanvasElement;
  private box!: HTMLElement;
  private readonly zoom: HTMLSelectElement;
  private readonly note: HTMLElement;
  private data: MapData | null = null;

  constructor(
    private readonly ta: TrimDef,
    private readonly tb: TrimDef,
  ) {
    this.canvas = h('canvas', { id: 'null-map', role: 'img', 'aria-label': 'null map' });
    this.zoom = h(
      'select',
      { id: 'null-map-zoom', 'aria-label': 'Map area', onchange: () => this.draw() },
      h('option', { value: 'null' }, 'around the null'),
      h('option', { value: 'travel' }, 'whole travel'),
    );
    this.note = h('p', { class: 'hint', id: 'null-map-note' });
    this.card = h(
      'section',
      { class: 'card' },
      h(
        'div',
        { class: 'row spread center' },
        h('h2', {}, `Null map: ${ta.label} × ${tb.label}`),
        h('label', { class: 'inline' }, 'show', this.zoom),
      ),
      (this.box = h('div', { class: 'map-box' }, this.canvas)),
      this.note,
    );
    emptyNote(this.box, this.emptyText());
    if (typeof ResizeObserver !== 'undefined') new ResizeObserver(() => this.draw()).observe(this.canvas);
  }

  private emptyText(): string {
    return `No carrier readings yet. Keep readings at different settings of both ${this.ta.label} and ${this.tb.label}: the map of the null fills in from the sixth.`;
  }

  element(): HTMLElement {
    return this.card;
  }

  show(d: MapData): void {
    this.data = d;
    // What is drawn, as data for assistive tools and tests (a canvas has no text of its own).
    this.canvas.dataset.points = JSON.stringify(d.points.map((p) => [p.a, p.b, p.dbm]));
    this.canvas.dataset.best = d.fit
      ? JSON.stringify([d.fit.best[this.ta.key], d.fit.best[this.tb.key]])
      : '';
    this.canvas.dataset.next = d.next ? JSON.stringify([d.next.a, d.next.b]) : '';
    emptyNote(this.box, d.points.length ? null : this.emptyText());
    this.draw();
  }

  /** The area shown: the whole travel, or around the fitted null (else the lowest reading). */
  private window(): { a: [number, number]; b: [number, number] } {
    const { ta, tb } = this;
    const whole = { a: [ta.min, ta.max] as [number, number], b: [tb.min, tb.max] as [number, number] };
    const d = this.data;
    if (this.zoom.value === 'travel' || !d || (!d.fit && d.points.length === 0)) return whole;
    let ca: number;
    let cb: number;
    let ha: number;
    let hb: number;
    if (d.fit) {
      ca = d.fit.best[ta.key];
      cb = d.fit.best[tb.key];
      const ci = (k: string): number => {
        const c = d.fit!.ci[k];
        return c && c[0] !== null && c[1] !== null ? (c[1] - c[0]) / 2 : Infinity;
      };
      // Enough to see the bowl's shape and the latest trials: several confidence widths, and the trials
      // near the null (within a tenth of the travel).
      ha = Math.min(Math.max(6 * ci(ta.key), (ta.max - ta.min) / 100), (ta.max - ta.min) / 2);
      hb = Math.min(Math.max(6 * ci(tb.key), (tb.max - tb.min) / 100), (tb.max - tb.min) / 2);
      for (const p of d.points.slice(-4)) {
        if (Math.abs(p.a - ca) < (ta.max - ta.min) / 10 && Math.abs(p.b - cb) < (tb.max - tb.min) / 10) {
          ha = Math.max(ha, 1.3 * Math.abs(p.a - ca));
          hb = Math.max(hb, 1.3 * Math.abs(p.b - cb));
        }
      }
    } else {
      const low = d.points.reduce((m, p) => (p.dbm < m.dbm ? p : m));
      ca = low.a;
      cb = low.b;
      ha = (ta.max - ta.min) / 6;
      hb = (tb.max - tb.min) / 6;
    }
    const clampTo = (c: number, hw: number, lo: number, hi: number): [number, number] => {
      const w = Math.min(2 * hw, hi - lo);
      const start = Math.min(Math.max(c - w / 2, lo), hi - w);
      return [start, start + w];
    };
    return { a: clampTo(ca, ha, ta.min, ta.max), b: clampTo(cb, hb, tb.min, tb.max) };
  }

  draw(): void {
    const c = this.canvas;
    const ratio = window.devicePixelRatio || 1;
    const cw = c.clientWidth || 600;
    const ch = c.clientHeight || 320;
    if (c.width !== Math.round(cw * ratio) || c.height !== Math.round(ch * ratio)) {
      c.width = Math.round(cw * ratio);
      c.height = Math.round(ch * ratio);
    }
    const ctx = c.getContext('2d');
    if (!ctx) return;
    ctx.setTransform(ratio, 0, 0, ratio, 0, 0);
    ctx.clearRect(0, 0, cw, ch);
    const pad = { l: 58, r: 64, t: 10, b: 40 };
    const pw = Math.max(10, cw - pad.l - pad.r);
    const ph = Math.max(10, ch - pad.t - pad.b);
    const win = this.window();
    const X = (a: number): number => pad.l + ((a - win.a[0]) / (win.a[1] - win.a[0])) * pw;
    const Y = (b: number): number => pad.t + ph - ((b - win.b[0]) / (win.b[1] - win.b[0])) * ph;
    const d = this.data;
    const fit = d?.fit ?? null;
    const model = fit?.map ?? null;

    // The shaded map and its contours, computed cell by cell.
    let lowDb = 0;
    if (model && fit) {
      const cell = 3;
      const nx = Math.ceil(pw / cell);
      const ny = Math.ceil(ph / cell);
      const vals = new Float64Array(nx * ny);
      for (let j = 0; j < ny; j++)
        for (let i = 0; i < nx; i++) {
          const a = win.a[0] + ((i + 0.5) / nx) * (win.a[1] - win.a[0]);
          const b = win.b[1] - ((j + 0.5) / ny) * (win.b[1] - win.b[0]);
          vals[j * nx + i] = predictMap(model, a, b);
        }
      lowDb = Math.min(fit.bestReadingDbm, ...vals);
      const img = ctx.createImageData(nx, ny);
      for (let k = 0; k < vals.length; k++) {
        const band = Math.floor((vals[k] - lowDb) / 10);
        const i = k % nx;
        const j = Math.floor(k / nx);
        const edge =
          (i + 1 < nx && Math.floor((vals[k + 1] - lowDb) / 10) !== band) ||
          (j + 1 < ny && Math.floor((vals[k + nx] - lowDb) / 10) !== band);
        const [r, g, bl] = ramp((vals[k] - lowDb) / SPAN_DB);
        img.data.set(
          edge
            ? [Math.min(255, r + 60), Math.min(255, g + 60), Math.min(255, bl + 60), 255]
            : [r, g, bl, 255],
          k * 4,
        );
      }
      // Drawn at cell size, then scaled up: a smooth enough map at a fraction of the work.
      const off = document.createElement('canvas');
      off.width = nx;
      off.height = ny;
      off.getContext('2d')?.putImageData(img, 0, 0);
      ctx.imageSmoothingEnabled = true;
      ctx.drawImage(off, pad.l, pad.t, pw, ph);
      this.legend(ctx, pad.l + pw + 14, pad.t, ph, lowDb);
    } else {
      ctx.fillStyle = '#0b171b';
      ctx.fillRect(pad.l, pad.t, pw, ph);
    }
    ctx.strokeStyle = COLOURS.line;
    ctx.lineWidth = 1;
    ctx.strokeRect(pad.l, pad.t, pw, ph);
    this.axes(ctx, win, X, Y, pad, pw, ph);

    ctx.save();
    ctx.beginPath();
    ctx.rect(pad.l, pad.t, pw, ph);
    ctx.clip();
    if (fit?.ellipse) {
      const e = fit.ellipse;
      ctx.strokeStyle = COLOURS.best;
      ctx.setLineDash([5, 4]);
      ctx.lineWidth = 1.5;
      ctx.beginPath();
      if (e.semiAxes[0] === null) {
        // A valley: the trimmers trade off along a line; draw the line itself.
        const reach = 2 * Math.hypot(this.ta.max - this.ta.min, this.tb.max - this.tb.min);
        ctx.moveTo(X(e.centerA - reach * Math.cos(e.angleRad)), Y(e.centerB - reach * Math.sin(e.angleRad)));
        ctx.lineTo(X(e.centerA + reach * Math.cos(e.angleRad)), Y(e.centerB + reach * Math.sin(e.angleRad)));
      } else {
        for (let k = 0; k <= 72; k++) {
          const t = (k / 72) * 2 * Math.PI;
          const u = e.semiAxes[0] * Math.cos(t);
          const v = e.semiAxes[1] * Math.sin(t);
          const a = e.centerA + u * Math.cos(e.angleRad) - v * Math.sin(e.angleRad);
          const b = e.centerB + u * Math.sin(e.angleRad) + v * Math.cos(e.angleRad);
          if (k === 0) ctx.moveTo(X(a), Y(b));
          else ctx.lineTo(X(a), Y(b));
        }
      }
      ctx.stroke();
      ctx.setLineDash([]);
      const bx = X(fit.best[this.ta.key]);
      const by = Y(fit.best[this.tb.key]);
      ctx.beginPath();
      ctx.moveTo(bx - 7, by);
      ctx.lineTo(bx + 7, by);
      ctx.moveTo(bx, by - 7);
      ctx.lineTo(bx, by + 7);
      ctx.stroke();
    }
    const pts = d?.points ?? [];
    if (pts.length > 1) {
      ctx.strokeStyle = COLOURS.path;
      ctx.globalAlpha = 0.8;
      ctx.lineWidth = 1.2;
      ctx.beginPath();
      pts.forEach((p, i) => (i === 0 ? ctx.moveTo(X(p.a), Y(p.b)) : ctx.lineTo(X(p.a), Y(p.b))));
      ctx.stroke();
      ctx.globalAlpha = 1;
    }
    ctx.font = '11px "DejaVu Sans", sans-serif';
    pts.forEach((p, i) => {
      const x = X(p.a);
      const y = Y(p.b);
      const last = i === pts.length - 1;
      ctx.fillStyle = last ? COLOURS.last : COLOURS.point;
      ctx.strokeStyle = '#0e1d23';
      ctx.beginPath();
      if (p.floorLimited) {
        ctx.moveTo(x - 5, y - 4);
        ctx.lineTo(x + 5, y - 4);
        ctx.lineTo(x, y + 5);
        ctx.closePath();
      } else ctx.arc(x, y, last ? 5 : 3.5, 0, 2 * Math.PI);
      ctx.fill();
      ctx.stroke();
      ctx.fillStyle = COLOURS.point;
      ctx.fillText(String(i + 1), x + 6, y - 5);
    });
    if (d?.next) {
      const x = X(d.next.a);
      const y = Y(d.next.b);
      if (d.now) {
        ctx.strokeStyle = COLOURS.next;
        ctx.setLineDash([3, 3]);
        ctx.beginPath();
        ctx.moveTo(X(d.now.a), Y(d.now.b));
        ctx.lineTo(x, y);
        ctx.stroke();
        ctx.setLineDash([]);
      }
      ctx.strokeStyle = COLOURS.next;
      ctx.lineWidth = 2.5;
      ctx.beginPath();
      ctx.arc(x, y, 9, 0, 2 * Math.PI);
      ctx.stroke();
      ctx.fillStyle = COLOURS.next;
      ctx.font = 'bold 12px "DejaVu Sans", sans-serif';
      ctx.fillText(d.next.label, x + 12, y + 4);
    }
    ctx.restore();

    const n = pts.length;
    this.note.textContent = !d
      ? ''
      : model && fit
        ? `${n} carrier reading(s), numbered in the order kept. Fitted null ${fixed(fit.best[this.ta.key], 0.001)} × ${fixed(fit.best[this.tb.key], 0.001)} ` +
          `(+ and dashed ${fit.ellipse?.semiAxes[0] === null ? 'valley line: the trimmers trade off along it' : `${Math.round(fit.level * 100)} % ellipse`}); ` +
          `contours every 10 dB; amber ring: the setting the guide suggests.`
        : `${n} carrier reading(s). The map appears once there are 6 readings spread over both trimmers.`;
    this.canvas.setAttribute(
      'aria-label',
      `null map of ${this.ta.label} against ${this.tb.label}, ${n} readings${fit ? `, fitted null at ${fit.best[this.ta.key].toFixed(3)}, ${fit.best[this.tb.key].toFixed(3)}` : ''}`,
    );
  }

  private legend(ctx: CanvasRenderingContext2D, x: number, y: number, hgt: number, lowDb: number): void {
    const w = 10;
    for (let k = 0; k < hgt; k++) {
      const [r, g, b] = ramp(1 - k / hgt);
      ctx.fillStyle = `rgb(${r}, ${g}, ${b})`;
      ctx.fillRect(x, y + k, w, 1);
    }
    ctx.fillStyle = COLOURS.text;
    ctx.font = '10px "DejaVu Sans", sans-serif';
    for (let db = 0; db <= SPAN_DB; db += 20) {
      const yy = y + hgt - (db / SPAN_DB) * hgt;
      ctx.fillText(`${Math.round(lowDb + db)}`, x + w + 3, yy + 3);
    }
    ctx.save();
    ctx.translate(x + w + 40, y + hgt / 2);
    ctx.rotate(-Math.PI / 2);
    ctx.textAlign = 'center';
    ctx.fillText('dBm at transmitter', 0, 0);
    ctx.restore();
  }

  private axes(
    ctx: CanvasRenderingContext2D,
    win: { a: [number, number]; b: [number, number] },
    X: (a: number) => number,
    Y: (b: number) => number,
    pad: { l: number; r: number; t: number; b: number },
    pw: number,
    ph: number,
  ): void {
    ctx.fillStyle = COLOURS.text;
    ctx.strokeStyle = COLOURS.text;
    ctx.font = '11px "DejaVu Sans", sans-serif';
    ctx.textAlign = 'center';
    const ta = ticks(win.a[0], win.a[1], Math.max(3, Math.floor(pw / 80)));
    const digits = (t: number[]): number =>
      t.length > 1 ? Math.max(0, -Math.floor(Math.log10(t[1] - t[0]))) : 2;
    for (const v of ta) {
      ctx.beginPath();
      ctx.moveTo(X(v), pad.t + ph);
      ctx.lineTo(X(v), pad.t + ph + 4);
      ctx.stroke();
      ctx.fillText(v.toFixed(digits(ta)), X(v), pad.t + ph + 16);
    }
    ctx.fillText(`${this.ta.label} (${this.ta.unit})`, pad.l + pw / 2, pad.t + ph + 32);
    ctx.textAlign = 'right';
    const tb = ticks(win.b[0], win.b[1], Math.max(3, Math.floor(ph / 50)));
    for (const v of tb) {
      ctx.beginPath();
      ctx.moveTo(pad.l - 4, Y(v));
      ctx.lineTo(pad.l, Y(v));
      ctx.stroke();
      ctx.fillText(v.toFixed(digits(tb)), pad.l - 6, Y(v) + 4);
    }
    ctx.save();
    ctx.translate(14, pad.t + ph / 2);
    ctx.rotate(-Math.PI / 2);
    ctx.textAlign = 'center';
    ctx.fillText(`${this.tb.label} (${this.tb.unit})`, 0, 0);
    ctx.restore();
    ctx.textAlign = 'start';
  }
}
