// Runs in Node: `node scripts/icons.mjs [outDir]` (default build-resources/). Renders the app's one mark,
// renderer/icon.svg (a trace dipping to its null, the null marked), into every icon the installers need:
// a Linux PNG set (icons/16x16.png … 512x512.png, and icon.png), a Windows icon.ico (16…256) and a macOS
// icon.icns (16…1024). Pure Node: a small rasteriser for the few SVG shapes the mark uses, PNG through
// node:zlib, ICO and ICNS written by hand. The same source always gives the same pixels (no fonts, no
// system libraries, no network); test/main/packaging.test.ts regenerates and compares.
import { Buffer } from 'node:buffer';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { deflateSync } from 'node:zlib';

export const LINUX_SIZES = [16, 24, 32, 48, 64, 128, 256, 512];
export const ICO_SIZES = [16, 24, 32, 48, 64, 128, 256];
/** ICNS chunk types with PNG data and the pixel size each holds (the @2x types hold twice their points). */
export const ICNS_TYPES = [
  ['icp4', 16],
  ['icp5', 32],
  ['icp6', 64],
  ['ic07', 128],
  ['ic08', 256],
  ['ic09', 512],
  ['ic10', 1024],
  ['ic11', 32],
  ['ic12', 64],
  ['ic13', 256],
  ['ic14', 512],
];

// ---------------------------------------------------------------------------------------------- the source

/** Reads the subset of SVG the mark uses: a viewBox, <rect> (rx), <circle>, <path> (M L Q C, stroked). */
export function parseMark(svg) {
  const vb = /viewBox="0 0 ([\d.]+) ([\d.]+)"/.exec(svg);
  if (!vb || vb[1] !== vb[2]) throw new Error('icon source: needs a square viewBox="0 0 N N"');
  const shapes = [];
  for (const m of svg.matchAll(/<(\w+)((?:\s+[\w-]+="[^"]*")*)\s*\/?>/g)) {
    const [, tag, attrText] = m;
    if (tag === 'svg') continue;
    const a = Object.fromEntries([...attrText.matchAll(/([\w-]+)="([^"]*)"/g)].map((x) => [x[1], x[2]]));
    const num = (k, d) => {
      const v = a[k] ?? d;
      if (v === undefined || !Number.isFinite(Number(v)))
        throw new Error(`icon source: <${tag}> needs a number in ${k}`);
      return Number(v);
    };
    if (tag === 'rect') {
      shapes.push({
        kind: 'rect',
        x: num('x', 0),
        y: num('y', 0),
        w: num('width'),
        h: num('height'),
        r: num('rx', 0),
        fill: color(a.fill),
      });
    } else if (tag === 'circle') {
      shapes.push({ kind: 'circle', cx: num('cx'), cy: num('cy'), r: num('r'), fill: color(a.fill) });
    } else if (tag === 'path') {
      if (a.fill !== 'none') throw new Error('icon source: only stroked paths (fill="none") are drawn');
      shapes.push({
        kind: 'stroke',
        segs: segments(flatten(a.d ?? '')),
        width: num('stroke-width'),
        fill: color(a.stroke),
      });
    } else throw new Error(`icon source: <${tag}> is not one of the shapes drawn (rect, circle, path)`);
  }
  return { size: Number(vb[1]), shapes };
}

function color(hex) {
  const m = /^#([0-9a-f]{6})$/i.exec(hex ?? '');
  if (!m) throw new Error(`icon source: colours are #rrggbb, got "${hex}"`);
  const v = parseInt(m[1], 16);
  return [(v >> 16) & 255, (v >> 8) & 255, v & 255];
}

/** A path's d (absolute M, L, Q, C) as one polyline, curves cut into 64 straight pieces each. */
function flatten(d) {
  const tokens = d.match(/[A-Za-z]|-?[\d.]+/g) ?? [];
  const pts = [];
  let i = 0;
  let cmd = '';
  const n = () => {
    const v = Number(tokens[i++]);
    if (!Number.isFinite(v)) throw new Error(`icon source: path "${d}" has a bad number`);
    return v;
  };
  while (i < tokens.length) {
    if (/[A-Za-z]/.test(tokens[i])) cmd = tokens[i++];
    const [px, py] = pts[pts.length - 1] ?? [0, 0];
    if (cmd === 'M' || cmd === 'L') pts.push([n(), n()]);
    else if (cmd === 'Q' || cmd === 'C') {
      const c = cmd === 'Q' ? [n(), n(), n(), n()] : [n(), n(), n(), n(), n(), n()];
      for (let k = 1; k <= 64; k++) {
        const t = k / 64;
        const u = 1 - t;
        if (cmd === 'Q')
          pts.push([
            u * u * px + 2 * u * t * c[0] + t * t * c[2],
            u * u * py + 2 * u * t * c[1] + t * t * c[3],
          ]);
        else
          pts.push([
            u * u * u * px + 3 * u * u * t * c[0] + 3 * u * t * t * c[2] + t * t * t * c[4],
            u * u * u * py + 3 * u * u * t * c[1] + 3 * u * t * t * c[3] + t * t * t * c[5],
          ]);
      }
    } else throw new Error(`icon source: path command "${cmd}" is not drawn (M, L, Q, C only)`);
  }
  return pts;
}

// -------------------------------------------------------------------------------------------- rasterising

/** A polyline as flat coordinates, with each piece's bounding box (lo/hi: x, y of piece k at 2k, 2k+1). */
function segments(points) {
  const n = points.length;
  const xs = Float64Array.from(points, (p) => p[0]);
  const ys = Float64Array.from(points, (p) => p[1]);
  const lo = new Float64Array(2 * n);
  const hi = new Float64Array(2 * n);
  for (let k = 1; k < n; k++) {
    lo[2 * k] = Math.min(xs[k - 1], xs[k]);
    hi[2 * k] = Math.max(xs[k - 1], xs[k]);
    lo[2 * k + 1] = Math.min(ys[k - 1], ys[k]);
    hi[2 * k + 1] = Math.max(ys[k - 1], ys[k]);
  }
  return { xs, ys, lo, hi };
}

const len = (dx, dy) => Math.sqrt(dx * dx + dy * dy);

/**
 * Signed distance (in source units, negative inside) from (x, y) to a shape; for a stroke, only pieces
 * within `reach` of the point are measured (farther ones cannot colour its pixel).
 */
function distance(s, x, y, reach) {
  if (s.kind === 'circle') return len(x - s.cx, y - s.cy) - s.r;
  if (s.kind === 'rect') {
    const hw = s.w / 2;
    const hh = s.h / 2;
    const qx = Math.abs(x - (s.x + hw)) - (hw - s.r);
    const qy = Math.abs(y - (s.y + hh)) - (hh - s.r);
    return len(Math.max(qx, 0), Math.max(qy, 0)) + Math.min(Math.max(qx, qy), 0) - s.r;
  }
  let best = Infinity;
  const { xs, ys, lo, hi } = s.segs;
  const r = reach + s.width / 2;
  for (let k = 1; k < xs.length; k++) {
    if (x < lo[2 * k] - r || x > hi[2 * k] + r || y < lo[2 * k + 1] - r || y > hi[2 * k + 1] + r) continue;
    const ax = xs[k - 1];
    const ay = ys[k - 1];
    const dx = xs[k] - ax;
    const dy = ys[k] - ay;
    const len2 = dx * dx + dy * dy;
    const t = len2 ? Math.min(1, Math.max(0, ((x - ax) * dx + (y - ay) * dy) / len2)) : 0;
    const e = len(x - ax - t * dx, y - ay - t * dy);
    if (e < best) best = e;
  }
  return best - s.width / 2; // round caps and joins, as stroke-linecap="round"
}

/** The mark as size × size straight-alpha RGBA, each edge anti-aliased over one pixel. */
export function render(mark, size) {
  const px = new Uint8Array(size * size * 4);
  const scale = mark.size / size;
  for (let j = 0; j < size; j++) {
    for (let i = 0; i < size; i++) {
      const x = (i + 0.5) * scale;
      const y = (j + 0.5) * scale;
      let r = 0;
      let g = 0;
      let b = 0;
      let a = 0; // premultiplied while compositing
      for (const s of mark.shapes) {
        const cover = Math.min(1, Math.max(0, 0.5 - distance(s, x, y, scale) / scale));
        if (cover === 0) continue;
        r = s.fill[0] * cover + r * (1 - cover);
        g = s.fill[1] * cover + g * (1 - cover);
        b = s.fill[2] * cover + b * (1 - cover);
        a = cover + a * (1 - cover);
      }
      const o = (j * size + i) * 4;
      if (a > 0) {
        px[o] = Math.round(r / a);
        px[o + 1] = Math.round(g / a);
        px[o + 2] = Math.round(b / a);
        px[o + 3] = Math.round(a * 255);
      }
    }
  }
  return px;
}

// ----------------------------------------------------------------------------------------------- encoding

const CRC = new Uint32Array(256).map((_, n) => {
  let c = n;
  for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
  return c >>> 0;
});
function crc32(buf) {
  let c = 0xffffffff;
  for (const byte of buf) c = CRC[(c ^ byte) & 255] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

function chunk(type, data) {
  const out = Buffer.alloc(12 + data.length);
  out.writeUInt32BE(data.length, 0);
  out.write(type, 4, 'latin1');
  data.copy(out, 8);
  out.writeUInt32BE(crc32(out.subarray(4, 8 + data.length)), 8 + data.length);
  return out;
}

/** PNG (ISO/IEC 15948): 8-bit RGBA, each row with filter 0, one IDAT at zlib level 9. */
export function encodePng(rgba, size) {
  const ihdr = Buffer.alloc(13);
  ihdr.writeUInt32BE(size, 0);
  ihdr.writeUInt32BE(size, 4);
  ihdr.set([8, 6, 0, 0, 0], 8);
  const raw = Buffer.alloc(size * (size * 4 + 1));
  for (let j = 0; j < size; j++)
    raw.set(rgba.subarray(j * size * 4, (j + 1) * size * 4), j * (size * 4 + 1) + 1);
  return Buffer.concat([
    Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
    chunk('IHDR', ihdr),
    chunk('IDAT', deflateSync(raw, { level: 9 })),
    chunk('IEND', Buffer.alloc(0)),
  ]);
}

/** A 32-bit DIB for an ICO entry: BITMAPINFOHEADER (height doubled), BGRA rows bottom-up, then the AND mask. */
function dib(rgba, size) {
  const maskRow = Math.ceil(size / 32) * 4;
  const out = Buffer.alloc(40 + size * size * 4 + maskRow * size);
  out.writeUInt32LE(40, 0);
  out.writeInt32LE(size, 4);
  out.writeInt32LE(size * 2, 8);
  out.writeUInt16LE(1, 12);
  out.writeUInt16LE(32, 14);
  out.writeUInt32LE(size * size * 4 + maskRow * size, 20);
  for (let j = 0; j < size; j++) {
    const row = 40 + (size - 1 - j) * size * 4;
    for (let i = 0; i < size; i++) {
      const s = (j * size + i) * 4;
      out.set([rgba[s + 2], rgba[s + 1], rgba[s], rgba[s + 3]], row + i * 4);
      if (rgba[s + 3] === 0) {
        const m = 40 + size * size * 4 + (size - 1 - j) * maskRow + (i >> 3);
        out[m] |= 0x80 >> (i & 7);
      }
    }
  }
  return out;
}

/** ICO: 256 px as PNG (as Windows itself ships it), the smaller sizes as 32-bit DIBs every reader takes. */
export function encodeIco(images) {
  const head = Buffer.alloc(6 + 16 * images.length);
  head.writeUInt16LE(1, 2);
  head.writeUInt16LE(images.length, 4);
  const bodies = images.map(({ size, rgba }) => (size >= 256 ? encodePng(rgba, size) : dib(rgba, size)));
  let offset = head.length;
  images.forEach(({ size }, k) => {
    const e = 6 + 16 * k;
    head[e] = size >= 256 ? 0 : size;
    head[e + 1] = size >= 256 ? 0 : size;
    head.writeUInt16LE(1, e + 4);
    head.writeUInt16LE(32, e + 6);
    head.writeUInt32LE(bodies[k].length, e + 8);
    head.writeUInt32LE(offset, e + 12);
    offset += bodies[k].length;
  });
  return Buffer.concat([head, ...bodies]);
}

/** ICNS: 'icns', the file's length, then one chunk per type (type, length with its header, PNG). */
export function encodeIcns(pngBySize) {
  const chunks = ICNS_TYPES.map(([type, size]) => {
    const png = pngBySize.get(size);
    const h = Buffer.alloc(8);
    h.write(type, 0, 'latin1');
    h.writeUInt32BE(8 + png.length, 4);
    return Buffer.concat([h, png]);
  });
  const body = Buffer.concat(chunks);
  const h = Buffer.alloc(8);
  h.write('icns', 0, 'latin1');
  h.writeUInt32BE(8 + body.length, 4);
  return Buffer.concat([h, body]);
}

// ---------------------------------------------------------------------------------------------------- run

/** Writes every icon into outDir; returns the files written (relative to outDir). */
export function writeIcons(outDir, sourceFile) {
  const mark = parseMark(readFileSync(sourceFile, 'utf8'));
  const sizes = [...new Set([...LINUX_SIZES, ...ICO_SIZES, ...ICNS_TYPES.map(([, s]) => s)])].sort(
    (a, b) => a - b,
  );
  const rgba = new Map(sizes.map((s) => [s, render(mark, s)]));
  const png = new Map(sizes.map((s) => [s, encodePng(rgba.get(s), s)]));
  mkdirSync(join(outDir, 'icons'), { recursive: true });
  const written = [];
  const put = (name, bytes) => {
    writeFileSync(join(outDir, name), bytes);
    written.push(name);
  };
  for (const s of LINUX_SIZES) put(join('icons', `${s}x${s}.png`), png.get(s));
  put('icon.png', png.get(512));
  put('icon.ico', encodeIco(ICO_SIZES.map((size) => ({ size, rgba: rgba.get(size) }))));
  put('icon.icns', encodeIcns(png));
  return written;
}

const root = resolve(import.meta.dirname, '..');
export const ICON_SOURCE = join(root, 'renderer', 'icon.svg');

if (process.argv[1] && resolve(process.argv[1]) === resolve(import.meta.filename)) {
  const out = resolve(process.argv[2] ?? join(root, 'build-resources'));
  const files = writeIcons(out, ICON_SOURCE);
  console.log(`${files.length} icons written to ${out} from ${ICON_SOURCE}`);
}
