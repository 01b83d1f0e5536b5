// Runs in Node (pure string building). The two charts of the test sheet, drawn as SVG by hand so the sheet
// needs no script to render and its text stays text in the PDF: the carrier null against each trimmer, and
// the measured points around the carrier (the plan) with the reference and limit lines.
// Only presentation attributes, never style attributes: the same markup is shown under the app's CSP.

export function esc(s: string): string {
  return s.replace(
    /[&<>"']/g,
    (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!,
  );
}

/** Round tick positions covering [lo, hi], about `count` of them, at 1/2/5 × 10^n steps. */
export function niceTicks(lo: number, hi: number, count = 6): { ticks: number[]; step: number } {
  if (!(hi > lo)) {
    const pad = Math.abs(lo) > 0 ? Math.abs(lo) * 0.1 : 1;
    lo -= pad;
    hi += pad;
  }
  const raw = (hi - lo) / Math.max(1, count);
  const mag = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 2.5, 5, 10].map((m) => m * mag).find((s) => s >= raw) ?? 10 * mag;
  const first = Math.floor(lo / step) * step;
  const ticks: number[] = [];
  for (let v = first; v <= hi + step * 1e-9; v += step) ticks.push(Number(v.toFixed(10)));
  if (ticks[ticks.length - 1] < hi) ticks.push(Number((ticks[ticks.length - 1] + step).toFixed(10)));
  return { ticks, step };
}

function num(x: number, step: number): string {
  const d = step >= 1 ? 0 : Math.min(4, Math.ceil(-Math.log10(step)));
  const s = Math.abs(x).toFixed(d);
  return `${x < 0 && Number(s) !== 0 ? '−' : ''}${s}`;
}

interface Frame {
  w: number;
  h: number;
  left: number;
  right: number;
  top: number;
  bottom: number;
  x0: number;
  x1: number;
  y0: number;
  y1: number;
}

const fx = (f: Frame, x: number) => f.left + ((x - f.x0) / (f.x1 - f.x0)) * (f.w - f.left - f.right);
const fy = (f: Frame, y: number) => f.h - f.bottom - ((y - f.y0) / (f.y1 - f.y0)) * (f.h - f.top - f.bottom);
const r1 = (v: number) => v.toFixed(1);

const INK = '#1d2b30';
const GRID = '#d5dee0';
const MUTED = '#5b6f74';
export const SERIES = ['#b5651d', '#1f6f8b', '#6a4c93', '#2e7d32', '#8d3b52'];

function axes(
  f: Frame,
  xt: { ticks: number[]; step: number },
  yt: { ticks: number[]; step: number },
  xLabel: string,
  yLabel: string,
  xFormat?: (x: number) => string,
  xLabelY = f.h - 4,
): string {
  const out: string[] = [];
  for (const y of yt.ticks) {
    const py = r1(fy(f, y));
    out.push(
      `<line x1="${f.left}" y1="${py}" x2="${f.w - f.right}" y2="${py}" stroke="${GRID}" stroke-width="0.6"/>`,
    );
    out.push(
      `<text x="${f.left - 5}" y="${py}" font-size="9" fill="${MUTED}" text-anchor="end" dominant-baseline="middle">${num(y, yt.step)}</text>`,
    );
  }
  for (const x of xt.ticks) {
    const px = r1(fx(f, x));
    out.push(
      `<line x1="${px}" y1="${f.top}" x2="${px}" y2="${f.h - f.bottom}" stroke="${GRID}" stroke-width="0.6"/>`,
    );
    out.push(
      `<text x="${px}" y="${f.h - f.bottom + 12}" font-size="9" fill="${MUTED}" text-anchor="middle">${esc(xFormat ? xFormat(x) : num(x, xt.step))}</text>`,
    );
  }
  out.push(
    `<rect x="${f.left}" y="${f.top}" width="${f.w - f.left - f.right}" height="${f.h - f.top - f.bottom}" fill="none" stroke="${INK}" stroke-width="0.8"/>`,
  );
  out.push(
    `<text x="${r1((f.left + f.w - f.right) / 2)}" y="${r1(xLabelY)}" font-size="10" fill="${INK}" text-anchor="middle">${esc(xLabel)}</text>`,
  );
  out.push(
    `<text x="11" y="${r1((f.top + f.h - f.bottom) / 2)}" font-size="10" fill="${INK}" text-anchor="middle" transform="rotate(-90 11 ${r1((f.top + f.h - f.bottom) / 2)})">${esc(yLabel)}</text>`,
  );
  return out.join('');
}

function svgOpen(w: number, h: number, title: string): string {
  return `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ${w} ${h}" width="${w}" height="${h}" role="img" aria-label="${esc(title)}" font-family="DejaVu Sans, Liberation Sans, sans-serif">`;
}

export interface NullSeries {
  label: string;
  points: { x: number; y: number; atFloor: boolean }[];
}

/**
 * Carrier level against one trimmer: each pass of the trimmer (the other trimmers held) as a line of
 * markers; a reading at the receiver floor as a downward triangle (the true level is lower); the final
 * reading ringed.
 */
export function nullChartSvg(o: {
  title: string;
  xLabel: string;
  yLabel: string;
  series: NullSeries[];
  final: { x: number; y: number } | null;
  w?: number;
  h?: number;
}): string {
  const w = o.w ?? 330;
  const items = o.series.length + (o.final ? 1 : 0);
  // The legend sits under the plot, two entries a row, so it never covers the dip.
  const legendRows = Math.ceil(items / 2);
  const h = (o.h ?? 210) + legendRows * 12;
  const all = o.series.flatMap((s) => s.points);
  if (o.final) all.push({ ...o.final, atFloor: false });
  const xs = all.map((p) => p.x);
  const ys = all.map((p) => p.y);
  const xt = niceTicks(Math.min(...xs), Math.max(...xs), 6);
  const yt = niceTicks(Math.min(...ys), Math.max(...ys), 6);
  const f: Frame = {
    w,
    h,
    left: 44,
    right: 8,
    top: 22,
    bottom: 30 + legendRows * 12,
    x0: xt.ticks[0],
    x1: xt.ticks[xt.ticks.length - 1],
    y0: yt.ticks[0],
    y1: yt.ticks[yt.ticks.length - 1],
  };
  const out = [svgOpen(w, h, o.title), `<rect width="${w}" height="${h}" fill="#ffffff"/>`];
  out.push(
    `<text x="${f.left}" y="13" font-size="10.5" font-weight="bold" fill="${INK}">${esc(o.title)}</text>`,
  );
  out.push(axes(f, xt, yt, o.xLabel, o.yLabel, undefined, h - legendRows * 12 - 4));
  const legendAt = (i: number) => ({
    x: f.left + (i % 2) * ((w - f.left - f.right) / 2),
    y: h - legendRows * 12 + Math.floor(i / 2) * 12 + 4,
  });
  o.series.forEach((s, i) => {
    const c = SERIES[i % SERIES.length];
    const pts = [...s.points].sort((a, b) => a.x - b.x);
    if (pts.length > 1)
      out.push(
        `<polyline points="${pts.map((p) => `${r1(fx(f, p.x))},${r1(fy(f, p.y))}`).join(' ')}" fill="none" stroke="${c}" stroke-width="1.2"/>`,
      );
    for (const p of pts) {
      const px = fx(f, p.x);
      const py = fy(f, p.y);
      out.push(
        p.atFloor
          ? `<path d="M${r1(px - 3.5)},${r1(py - 3)} L${r1(px + 3.5)},${r1(py - 3)} L${r1(px)},${r1(py + 3.5)} Z" fill="${c}"/>`
          : `<circle cx="${r1(px)}" cy="${r1(py)}" r="2.4" fill="${c}"/>`,
      );
    }
    const l = legendAt(i);
    out.push(`<circle cx="${r1(l.x + 3)}" cy="${r1(l.y - 3)}" r="2.6" fill="${c}"/>`);
    out.push(`<text x="${r1(l.x + 9)}" y="${r1(l.y)}" font-size="8.5" fill="${INK}">${esc(s.label)}</text>`);
  });
  if (o.final) {
    out.push(
      `<circle cx="${r1(fx(f, o.final.x))}" cy="${r1(fy(f, o.final.y))}" r="5.5" fill="none" stroke="${INK}" stroke-width="1.3"/>`,
    );
    const l = legendAt(o.series.length);
    out.push(
      `<circle cx="${r1(l.x + 3)}" cy="${r1(l.y - 3)}" r="4" fill="none" stroke="${INK}" stroke-width="1.1"/>`,
    );
    out.push(`<text x="${r1(l.x + 9)}" y="${r1(l.y)}" font-size="8.5" fill="${INK}">final reading</text>`);
  }
  out.push('</svg>');
  return out.join('');
}

export interface PlanPoint {
  label: string;
  /** offset from the carrier, Hz */
  offsetHz: number;
  dbm: number;
  atFloor: boolean;
  /** drawn hollow: a point that is not part of the normal emission (the unbalanced reference) */
  hollow?: boolean;
}

export interface PlanLine {
  label: string;
  dbm: number;
  kind: 'reference' | 'limit' | 'floor';
}

/** The measured points around the carrier as stems from the bottom of the chart, with horizontal lines. */
export function planChartSvg(o: {
  title: string;
  toneHz: number;
  points: PlanPoint[];
  lines: PlanLine[];
  w?: number;
  h?: number;
}): string {
  const w = o.w ?? 680;
  const h = o.h ?? 250;
  const span = Math.max(5, ...o.points.map((p) => Math.abs(p.offsetHz) / o.toneHz)) + 0.8;
  const ys = [...o.points.map((p) => p.dbm), ...o.lines.map((l) => l.dbm)];
  const yt = niceTicks(Math.min(...ys) - 5, Math.max(...ys) + 3, 7);
  const f: Frame = {
    w,
    h,
    left: 48,
    right: 150,
    top: 22,
    bottom: 30,
    x0: -span,
    x1: span,
    y0: yt.ticks[0],
    y1: yt.ticks[yt.ticks.length - 1],
  };
  const xTicks = [];
  for (let k = -Math.floor(span); k <= Math.floor(span); k++) xTicks.push(k);
  const kHz = (k: number) => {
    if (k === 0) return 'fc';
    const hz = k * o.toneHz;
    return `${hz > 0 ? '+' : '−'}${Math.abs(hz) >= 1000 ? `${Number((Math.abs(hz) / 1000).toFixed(2))}k` : Math.abs(hz)}`;
  };
  const out = [svgOpen(w, h, o.title), `<rect width="${w}" height="${h}" fill="#ffffff"/>`];
  out.push(
    `<text x="${f.left}" y="13" font-size="10.5" font-weight="bold" fill="${INK}">${esc(o.title)}</text>`,
  );
  out.push(
    axes(
      f,
      { ticks: xTicks, step: 1 },
      yt,
      'offset from the carrier (Hz)',
      'level at transmitter (dBm)',
      kHz,
    ),
  );
  const lineColour = { reference: '#1f6f8b', limit: '#b3261e', floor: MUTED };
  // Labels sit in the right margin, pushed apart where lines lie close together.
  const labelY = new Map<PlanLine, number>();
  let last = -Infinity;
  for (const l of [...o.lines].sort((a, b) => fy(f, a.dbm) - fy(f, b.dbm))) {
    const y = Math.max(fy(f, l.dbm) + 3, last + 10);
    labelY.set(l, y);
    last = y;
  }
  for (const l of o.lines) {
    const py = r1(fy(f, l.dbm));
    const dash =
      l.kind === 'reference'
        ? ''
        : l.kind === 'limit'
          ? ' stroke-dasharray="6 3"'
          : ' stroke-dasharray="2 3"';
    out.push(
      `<line x1="${f.left}" y1="${py}" x2="${w - f.right}" y2="${py}" stroke="${lineColour[l.kind]}" stroke-width="1.1"${dash}/>`,
    );
    out.push(
      `<text x="${w - f.right + 6}" y="${r1(labelY.get(l)!)}" font-size="8.5" fill="${lineColour[l.kind]}">${esc(l.label)}</text>`,
    );
  }
  for (const p of o.points) {
    const px = r1(fx(f, p.offsetHz / o.toneHz + (p.hollow ? 0.18 : 0)));
    const py = fy(f, p.dbm);
    const c = p.hollow ? '#1f6f8b' : '#b5651d';
    out.push(
      `<line x1="${px}" y1="${f.h - f.bottom}" x2="${px}" y2="${r1(py)}" stroke="${c}" stroke-width="${p.hollow ? 1 : 2}"${p.hollow ? ' stroke-dasharray="2 2"' : ''}/>`,
    );
    out.push(
      p.atFloor
        ? `<path d="M${r1(Number(px) - 4)},${r1(py - 3.5)} L${r1(Number(px) + 4)},${r1(py - 3.5)} L${px},${r1(py + 4)} Z" fill="${c}"/>`
        : `<circle cx="${px}" cy="${r1(py)}" r="3" fill="${p.hollow ? '#ffffff' : c}" stroke="${c}" stroke-width="1.2"/>`,
    );
    out.push(
      `<text x="${px}" y="${r1(py - 7)}" font-size="8.5" fill="${INK}" text-anchor="middle">${esc(p.label)}</text>`,
    );
  }
  out.push('</svg>');
  return out.join('');
}
