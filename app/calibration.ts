// Runs anywhere (app/ is runtime-free). Receiver calibration: a raw reading (rig STRENGTH, A/D counts,
// S-units, or dBm already) to dBm at the receiver input, per frequency band, piecewise linear.
import { z } from 'zod';
import { BenchError, check } from './errors';
import { R1_DB_PER_S, R1_S9_HF_DBM, R1_S9_VHF_DBM } from './levels';
import { benchErrorFromZod } from './zodissue';

/** Standard uncertainty of a user's table when it gives none, dB. */
export const DEFAULT_TABLE_U_DB = 0.5;
/** Standard uncertainty of the R.1 default: an uncalibrated S-meter is good to a few dB (common practice). */
export const R1_DEFAULT_U_DB = 2;
/** Top of the last band of the R.1 default, Hz: the top of the radio spectrum we care about (300 GHz). */
export const TOP_HZ = 300e9;

const num = (what: string) => z.number({ error: `must be a finite number (${what})` });

// An ISO 8601 date ("2024-05-01") or date-time with zone ("2024-05-01T09:30:00Z"), as stored and shown.
// Date.parse alone would roll "2024-02-30" over to 1 March, so the fields are checked one by one.
const ISO_DATE_RE =
  /^(\d{4})-(\d{2})-(\d{2})(?:T(\d{2}):(\d{2})(?::(\d{2})(?:\.\d+)?)?(?:Z|[+-](\d{2}):(\d{2})))?$/;

export function isIsoDate(s: string): boolean {
  const m = ISO_DATE_RE.exec(s);
  if (!m) return false;
  const [y, mo, d] = [Number(m[1]), Number(m[2]), Number(m[3])];
  const day = new Date(Date.UTC(y, mo - 1, d));
  if (day.getUTCFullYear() !== y || day.getUTCMonth() !== mo - 1 || day.getUTCDate() !== d) return false;
  const inRange = (v: string | undefined, max: number) => v === undefined || Number(v) <= max;
  return (
    inRange(m[4], 23) && inRange(m[5], 59) && inRange(m[6], 59) && inRange(m[7], 14) && inRange(m[8], 59)
  );
}

const isoDate = z
  .string({ error: 'must be an ISO 8601 date such as "2024-05-01" or "2024-05-01T09:30:00Z"' })
  .refine(isIsoDate, 'must be an ISO 8601 date such as "2024-05-01" or "2024-05-01T09:30:00Z"');

export const CalibrationPointSchema = z.strictObject({
  /** the receiver's number, in the calibration's quantity */
  raw: num('raw reading'),
  /** level at the receiver input that gives it, dBm */
  dbm: num('dBm').min(-250, 'must be >= -250 dBm').max(60, 'must be <= +60 dBm'),
});

export const CalibrationBandSchema = z.strictObject({
  /** lower edge, Hz (inclusive) */
  fromHz: num('Hz').min(0, 'must be >= 0 Hz'),
  /** upper edge, Hz (inclusive; a frequency on a shared edge belongs to the band above) */
  toHz: num('Hz').gt(0, 'must be > 0 Hz').max(3e12, 'must be <= 3 THz'),
  points: z.array(CalibrationPointSchema).min(2, 'needs at least 2 points'),
});

export const CalibrationQuantitySchema = z.enum(['strength-db', 'raw', 's-units', 'dbm'], {
  error: 'must be one of strength-db (dB relative to S9), raw (counts), s-units, dbm',
});

export const CalibrationSchema = z.strictObject({
  name: z
    .string({ error: 'must be text' })
    .trim()
    .min(1, 'must not be empty')
    .max(120, 'must be at most 120 characters'),
  /** what `raw` is: dB relative to S9 (rig STRENGTH), raw counts, S-units, or already dBm */
  quantity: CalibrationQuantitySchema,
  bands: z
    .array(CalibrationBandSchema, { error: 'must be a list of bands' })
    .min(1, 'needs at least one band'),
  /** standard uncertainty of the table's dBm values, dB (default 0.5) */
  uDb: num('dB').min(0, 'must be >= 0 dB').max(20, 'must be <= 20 dB').optional(),
  madeAt: isoDate.optional(),
  note: z.string().max(2000, 'must be at most 2000 characters').optional(),
});

export type Calibration = z.infer<typeof CalibrationSchema>;
export type CalibrationBand = z.infer<typeof CalibrationBandSchema>;
export type CalibrationPoint = z.infer<typeof CalibrationPointSchema>;
export type CalibrationQuantity = z.infer<typeof CalibrationQuantitySchema>;

function mhz(hz: number): string {
  return `${Number((hz / 1e6).toFixed(6))} MHz`;
}

function bandText(b: { fromHz: number; toHz: number }): string {
  return `${mhz(b.fromHz)} to ${mhz(b.toHz)}`;
}

/**
 * Check a calibration from outside. Besides the shape: each band has fromHz < toHz, bands do not overlap
 * (they may touch), and within a band raw and dBm both rise strictly, so every reading maps to one level.
 * Errors are EINVAL naming the field, e.g. "bands[0].points[3].dbm".
 */
export function validateCalibration(input: unknown): Calibration {
  const r = CalibrationSchema.safeParse(input);
  if (!r.success) throw benchErrorFromZod(r.error);
  const cal = r.data;
  cal.bands.forEach((b, i) => {
    check(
      b.fromHz < b.toHz,
      `bands[${i}].toHz`,
      `must be above fromHz (${mhz(b.fromHz)}), got ${mhz(b.toHz)}`,
    );
    for (let j = 1; j < b.points.length; j++) {
      const p = b.points[j];
      const q = b.points[j - 1];
      const f = `bands[${i}].points[${j}]`;
      check(
        p.raw > q.raw,
        `${f}.raw`,
        `raw values must rise strictly: ${p.raw} is not above ${q.raw} in points[${j - 1}]`,
      );
      check(
        p.dbm > q.dbm,
        `${f}.dbm`,
        `levels must rise strictly with raw: ${p.dbm} dBm (raw ${p.raw}) is not above ${q.dbm} dBm (raw ${q.raw}) in points[${j - 1}]`,
      );
    }
  });
  const order = cal.bands.map((_, i) => i).sort((a, b) => cal.bands[a].fromHz - cal.bands[b].fromHz);
  for (let k = 1; k < order.length; k++) {
    const prev = cal.bands[order[k - 1]];
    const cur = cal.bands[order[k]];
    check(
      cur.fromHz >= prev.toHz,
      `bands[${order[k]}].fromHz`,
      `band ${bandText(cur)} overlaps bands[${order[k - 1]}] (${bandText(prev)}); bands may touch but not overlap`,
    );
  }
  return cal;
}

/**
 * IARU Region 1 Technical Recommendation R.1 as a storable table of rig STRENGTH (dB relative to S9):
 * dBm = S9(band) + value, S9 = -73 dBm below 30 MHz and -93 dBm from 144 MHz; for 30-144 MHz, which R.1
 * leaves open, the caller's choice. Points run from -54 dB (S0) to +60 dB (S9+60), the span of a usual
 * meter scale; readings beyond are clamped.
 */
export function iaruR1Calibration(between30and144MHz: 'hf' | 'vhf' = 'hf'): Calibration {
  check(
    between30and144MHz === 'hf' || between30and144MHz === 'vhf',
    'between30and144MHz',
    `must be "hf" or "vhf", got ${String(between30and144MHz)}`,
  );
  const points = (s9: number) => [
    { raw: -9 * R1_DB_PER_S, dbm: s9 - 9 * R1_DB_PER_S },
    { raw: 0, dbm: s9 },
    { raw: 60, dbm: s9 + 60 },
  ];
  const mid = between30and144MHz === 'hf' ? R1_S9_HF_DBM : R1_S9_VHF_DBM;
  return validateCalibration({
    name: `IARU R.1 default (${between30and144MHz === 'hf' ? 'HF' : 'VHF'} S9 for 30-144 MHz)`,
    quantity: 'strength-db',
    bands: [
      { fromHz: 0, toHz: 30e6, points: points(R1_S9_HF_DBM) },
      { fromHz: 30e6, toHz: 144e6, points: points(mid) },
      { fromHz: 144e6, toHz: TOP_HZ, points: points(R1_S9_VHF_DBM) },
    ],
    uDb: R1_DEFAULT_U_DB,
    note:
      'IARU Region 1 Technical Recommendation R.1: 6 dB per S-unit; S9 = -73 dBm below 30 MHz, -93 dBm from ' +
      `144 MHz; 30-144 MHz uses the ${between30and144MHz === 'hf' ? 'HF' : 'VHF'} value by choice. An uncalibrated ` +
      'S-meter is good to a few dB at best: calibrate against a signal generator for real measurements.',
  });
}

/**
 * Index of the band holding freqHz, or -1. Edges are inclusive; on an edge two bands share, the band
 * starting there wins (as R.1's "from 144 MHz").
 */
export function findBand(cal: Calibration, freqHz: number): number {
  let edge = -1;
  for (let i = 0; i < cal.bands.length; i++) {
    const b = cal.bands[i];
    if (freqHz >= b.fromHz && freqHz < b.toHz) return i;
    if (freqHz === b.toHz) edge = i;
  }
  return edge;
}

/**
 * A raw reading to dBm at the receiver input. `cal` must have passed validateCalibration.
 * Piecewise-linear between points, clamped at both ends (then `clamped` is true and the true level is at
 * or beyond the returned one, so callers should treat it as a bound).
 * @param freqHz receive frequency, Hz
 * @returns dbm, its standard uncertainty uDb, clamped, and the band index used
 */
export function applyCalibration(
  cal: Calibration,
  raw: number,
  freqHz: number,
): { dbm: number; uDb: number; clamped: boolean; band: number } {
  check(
    typeof raw === 'number' && Number.isFinite(raw),
    'raw',
    `must be a finite number, got ${String(raw)}`,
  );
  check(
    typeof freqHz === 'number' && Number.isFinite(freqHz) && freqHz >= 0,
    'freq_hz',
    `must be a frequency >= 0 Hz, got ${String(freqHz)}`,
  );
  const band = findBand(cal, freqHz);
  if (band < 0) {
    const covers = cal.bands.map(bandText).join(', ');
    throw new BenchError(
      'EINVAL',
      `${mhz(freqHz)} is outside calibration bands of "${cal.name}" (${covers})`,
      'freq_hz',
    );
  }
  const uDb = cal.uDb ?? DEFAULT_TABLE_U_DB;
  const pts = cal.bands[band].points;
  const first = pts[0];
  const last = pts[pts.length - 1];
  if (raw <= first.raw) return { dbm: first.dbm, uDb, clamped: raw < first.raw, band };
  if (raw >= last.raw) return { dbm: last.dbm, uDb, clamped: raw > last.raw, band };
  // Binary search for the segment [lo, lo+1] holding raw.
  let lo = 0;
  let hi = pts.length - 1;
  while (hi - lo > 1) {
    const m = (lo + hi) >> 1;
    if (pts[m].raw <= raw) lo = m;
    else hi = m;
  }
  const a = pts[lo];
  const b = pts[hi];
  return { dbm: a.dbm + ((raw - a.raw) * (b.dbm - a.dbm)) / (b.raw - a.raw), uDb, clamped: false, band };
}

/** One step of a guided calibration: a generator at a known level through a known pad, and what the receiver read. */
export interface Injection {
  /** the receiver's reading */
  raw: number;
  /** generator output, dBm */
  generatorDbm: number;
  /** pad between generator and receiver, dB (>= 0) */
  padDb: number;
  /** generator frequency, Hz */
  freqHz: number;
}

export interface FitOptions {
  /** what the raw readings are (default 'raw') */
  quantity?: CalibrationQuantity;
  /** band edges, Hz; by default one octave either side of the injections, since a meter's response drifts with frequency */
  fromHz?: number;
  toHz?: number;
  /** standard uncertainty of the fitted table, dB (default 0.5: generator and pad accuracy) */
  uDb?: number;
  madeAt?: string;
  note?: string;
}

/**
 * A single-band table from a guided calibration: dBm at the receiver = generatorDbm - padDb at each reading,
 * sorted by raw. Two readings with the same raw, or a level that does not rise with raw, are refused,
 * naming the injection (e.g. "injections[3].raw"): the table must map each reading to one level.
 */
export function fitCalibrationFromInjections(
  points: readonly Injection[],
  name: string,
  opts: FitOptions = {},
): Calibration {
  check(Array.isArray(points), 'injections', 'must be a list of {raw, generatorDbm, padDb, freqHz}');
  check(
    points.length >= 2,
    'injections',
    `needs at least 2 injections at different levels, got ${points.length}`,
  );
  const rows = points.map((p, i) => {
    const f = `injections[${i}]`;
    check(typeof p === 'object' && p !== null, f, 'must be an object {raw, generatorDbm, padDb, freqHz}');
    const fin = (v: number, k: string) =>
      check(
        typeof v === 'number' && Number.isFinite(v),
        `${f}.${k}`,
        `must be a finite number, got ${String(v)}`,
      );
    fin(p.raw, 'raw');
    fin(p.generatorDbm, 'generatorDbm');
    check(
      p.generatorDbm <= 60,
      `${f}.generatorDbm`,
      `must be <= +60 dBm for a signal generator, got ${p.generatorDbm}`,
    );
    fin(p.padDb, 'padDb');
    check(p.padDb >= 0 && p.padDb <= 150, `${f}.padDb`, `must be from 0 to 150 dB, got ${p.padDb}`);
    fin(p.freqHz, 'freqHz');
    check(p.freqHz > 0, `${f}.freqHz`, `must be > 0 Hz, got ${p.freqHz}`);
    return { index: i, raw: p.raw, dbm: p.generatorDbm - p.padDb, freqHz: p.freqHz };
  });
  const sorted = rows.slice().sort((a, b) => a.raw - b.raw || a.index - b.index);
  for (let k = 1; k < sorted.length; k++) {
    const p = sorted[k];
    const q = sorted[k - 1];
    check(
      p.raw !== q.raw,
      `injections[${p.index}].raw`,
      `reads ${p.raw}, the same as injections[${q.index}]: the receiver did not resolve the step; use a larger step or drop one`,
    );
    check(
      p.dbm > q.dbm,
      `injections[${p.index}].generatorDbm`,
      `gives ${p.dbm} dBm at the receiver for raw ${p.raw}, not above injections[${q.index}]'s ${q.dbm} dBm for raw ${q.raw}: ` +
        'levels must rise with the reading; check the generator level and pad, or whether the receiver was overloaded',
    );
  }
  const freqs = rows.map((r) => r.freqHz);
  const fromHz = opts.fromHz ?? Math.min(...freqs) / 2;
  const toHz = opts.toHz ?? Math.max(...freqs) * 2;
  check(
    fromHz <= Math.min(...freqs) && toHz >= Math.max(...freqs),
    'band',
    `${bandText({ fromHz, toHz })} does not cover the injection frequencies`,
  );
  const pads = [...new Set(points.map((p) => p.padDb))];
  const note =
    opts.note ??
    `Fitted from ${rows.length} injections at ${[...new Set(freqs)].map(mhz).join(', ')} through ` +
      `${pads.map((p) => `${p} dB`).join(', ')} of pad.`;
  return validateCalibration({
    name,
    quantity: opts.quantity ?? 'raw',
    bands: [{ fromHz, toHz, points: sorted.map((r) => ({ raw: r.raw, dbm: r.dbm })) }],
    ...(opts.uDb === undefined ? {} : { uDb: opts.uDb }),
    ...(opts.madeAt === undefined ? {} : { madeAt: opts.madeAt }),
    note,
  });
}
