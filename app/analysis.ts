// Runs anywhere (app/ is runtime-free). What one session measured, as the figures a builder quotes:
// carrier suppression against a stated reference, sideband balance (DSB), opposite-sideband suppression
// (SSB), IMD3 against one tone and against PEP, harmonics against the fundamental, each with its
// uncertainty and with the receiver floor kept as a bound, never turned into a made-up number.
import type { PointRole } from './api/schemas';

/** How the transmitter was set while measured: both sidebands (DSB) or one (USB, LSB). */
export const EMISSIONS = ['dsb', 'usb', 'lsb'] as const;
export type Emission = (typeof EMISSIONS)[number];
export const EMISSION_LABELS: Record<Emission, string> = {
  dsb: 'DSB (both sidebands wanted)',
  usb: 'SSB, upper sideband wanted',
  lsb: 'SSB, lower sideband wanted',
};

/**
 * What carrier suppression is stated against (docs/design.md § Suppression references):
 * tone       one sideband tone of the test signal;
 * pep        the peak envelope power of the test signal;
 * unbalanced the carrier read with the modulator deliberately unbalanced (the "reference" point).
 */
export const SUPPRESSION_REFERENCES = ['tone', 'pep', 'unbalanced'] as const;
export type SuppressionReference = (typeof SUPPRESSION_REFERENCES)[number];
export const REFERENCE_LABELS: Record<SuppressionReference, string> = {
  tone: 'one tone',
  pep: 'PEP of the test signal',
  unbalanced: 'unbalanced carrier',
};

/** 10·log10(4): a two-line signal of equal lines has its PEP 6.02 dB above one line (docs/references.md). */
export const TWO_TONE_PEP_DB = 10 * Math.log10(4);

/** Within this many dB of the measured receiver floor a reading is a bound, not a value (common practice). */
export const FLOOR_MARGIN_DB = 3;

/** Coverage factor for expanded uncertainties on sheets and in verdicts (about 95 %, GUM). */
export const K_EXPANDED = 2;

/** One kept reading as the analysis needs it: the level at the transmitter output and its uncertainty parts. */
export interface PointLevel {
  role: PointRole;
  /** Stored reading id, when it came from the database. */
  id?: number;
  /** ms since the epoch */
  t: number;
  freqHz: number;
  /** level at the transmitter output, dBm */
  dbm: number;
  /** combined standard uncertainty of dbm (k = 1), dB: calibration, meter, path */
  uDb: number;
  /** the part of uDb from the receiver calibration table (its absolute level and linearity), dB */
  uCalDb: number;
  /** the part of uDb from the signal path (pads, couplers, cables, mismatch), dB */
  uPathDb: number;
  /** the receiver read at its noise floor: the true level is at most dbm */
  floorLimited: boolean;
  /** near or in overload: the reading may be low */
  overload: boolean;
}

/** A ratio in dB with its standard uncertainty, or a bound when a reading sat at the floor. */
export interface Figure {
  /** dB. Suppressions count positive below their reference; balance is upper minus lower. */
  value: number;
  /** standard uncertainty (k = 1), dB */
  u: number;
  /**
   * 'value': a measured value; 'atLeast': a suppression at least this deep (the weaker line sat at the floor);
   * 'unknown': the reference itself sat at the floor, so the ratio says nothing (value is what was read, never
   * a figure to state or to judge).
   */
  bound: 'value' | 'atLeast' | 'unknown';
  notes: string[];
}

/** A level in dBm derived from one or more readings, with the uncertainty for relative and for absolute use. */
export interface LevelFigure {
  dbm: number;
  /** standard uncertainty when compared with another level on the same receiver and path, dB */
  uRel: number;
  /** standard uncertainty as an absolute level at the transmitter output, dB */
  uAbs: number;
}

export interface HarmonicFigure {
  role: 'h2' | 'h3' | 'h4' | 'h5';
  order: number;
  freqHz: number;
  dbm: number;
  /** absolute standard uncertainty of dbm, dB */
  uDb: number;
  /** true: the harmonic is at most dbm (receiver floor) */
  atMost: boolean;
  /** dB below the fundamental's mean power, when the tones were read */
  belowMean: Figure | null;
  /** dB below the test signal's PEP, when the tones were read */
  belowPep: Figure | null;
}

export interface SessionFigures {
  emission: Emission;
  /** The result of each point: its last kept reading (earlier kept readings are the alignment history). */
  points: Partial<Record<PointRole, PointLevel>>;
  /** One tone of the test signal (the wanted sideband for SSB; the power mean of the two for DSB). */
  tone: LevelFigure | null;
  /** PEP of the test signal from the measured sideband lines: (√P_upper + √P_lower)². */
  pep: LevelFigure | null;
  /** Mean power of the fundamental: sum of the carrier and sideband line powers. */
  mean: LevelFigure | null;
  /** The receiver floor referred to the transmitter output, when the floor point was kept, dBm. */
  floorDbm: number | null;
  /** Carrier suppression against each reference (null where that reference was not measured). */
  carrier: Record<SuppressionReference, Figure | null>;
  /** DSB: upper minus lower sideband, dB. Null for SSB. */
  balance: Figure | null;
  /** SSB: wanted minus unwanted sideband, dB. Null for DSB. */
  opposite: Figure | null;
  /** Worse of the two IMD3 lines, dB below one tone and below PEP (DSB: the two sidebands are the two tones). */
  imd3: { tone: Figure | null; pep: Figure | null };
  harmonics: HarmonicFigure[];
  /** What the builder should know about these figures (missing points, flags). */
  warnings: string[];
}

const mw = (dbm: number) => 10 ** (dbm / 10);
const db = (m: number) => 10 * Math.log10(m);

/** The meter's own part (quantisation, noise) of a reading's uncertainty: what is neither calibration nor path. */
export function meterU(p: PointLevel): number {
  return Math.sqrt(Math.max(0, p.uDb ** 2 - p.uCalDb ** 2 - p.uPathDb ** 2));
}

/**
 * Uncertainty of a reading when compared with another on the same receiver through the same path, dB.
 * The path (pads, couplers, cable, mismatch) is the same for both lines, a few kHz apart, so its error
 * cancels in the ratio and is left out. The calibration table's error does not cancel between levels far
 * apart (it is then a linearity error), so it stays in; so does the meter's step and noise.
 */
export function relativeU(p: PointLevel): number {
  return Math.sqrt(p.uCalDb ** 2 + meterU(p) ** 2);
}

/** Picks the result of each point: the last kept reading of that role. */
export function finalPoints(readings: readonly PointLevel[]): Partial<Record<PointRole, PointLevel>> {
  const out: Partial<Record<PointRole, PointLevel>> = {};
  for (const r of readings) {
    const prev = out[r.role];
    if (!prev || r.t > prev.t || (r.t === prev.t && (r.id ?? 0) >= (prev.id ?? 0))) out[r.role] = r;
  }
  return out;
}

/**
 * A level built from lines near the same level (the two tones), weighted by each line's share.
 * The calibration error of lines at the same level is the same error (fully correlated); the meter's
 * step and noise are independent. Weights are the sensitivities of the result (in dB) to each line (in dB).
 */
function combine(lines: PointLevel[], valueDbm: number, weights: number[]): LevelFigure {
  const cal = lines.reduce((s, l, i) => s + weights[i] * l.uCalDb, 0);
  const path = lines.reduce((s, l, i) => s + weights[i] * l.uPathDb, 0);
  const meter2 = lines.reduce((s, l, i) => s + (weights[i] * meterU(l)) ** 2, 0);
  return {
    dbm: valueDbm,
    uRel: Math.sqrt(cal ** 2 + meter2),
    uAbs: Math.sqrt(cal ** 2 + meter2 + path ** 2),
  };
}

function fromLine(l: PointLevel): LevelFigure {
  return { dbm: l.dbm, uRel: relativeU(l), uAbs: l.uDb };
}

/** The wanted sideband line(s) of the emission. */
function sidebands(
  emission: Emission,
  p: Partial<Record<PointRole, PointLevel>>,
): { wanted: PointLevel[]; unwanted: PointLevel | null } {
  if (emission === 'usb') return { wanted: p.upper ? [p.upper] : [], unwanted: p.lower ?? null };
  if (emission === 'lsb') return { wanted: p.lower ? [p.lower] : [], unwanted: p.upper ?? null };
  return { wanted: [p.upper, p.lower].filter((x): x is PointLevel => !!x), unwanted: null };
}

/**
 * Suppression of a weak line below a reference level: ref − weak, dB. When the weak line sat at the
 * receiver floor its true level is lower, so the suppression is at least the figure (a bound).
 */
function suppression(
  ref: LevelFigure,
  weak: PointLevel,
  atFloor: (p: PointLevel) => boolean,
  what: string,
  refAtFloor: string | null = null,
): Figure {
  const notes: string[] = [];
  const floor = atFloor(weak);
  if (refAtFloor)
    notes.push(`${refAtFloor} read at the receiver floor: no suppression can be stated against it`);
  else if (floor)
    notes.push(`${what} read at the receiver floor: the true level is lower, the suppression deeper`);
  if (weak.overload) notes.push(`${what} read near overload`);
  return {
    value: ref.dbm - weak.dbm,
    u: Math.sqrt(ref.uRel ** 2 + relativeU(weak) ** 2),
    bound: refAtFloor ? 'unknown' : floor ? 'atLeast' : 'value',
    notes,
  };
}

const HARMONICS = ['h2', 'h3', 'h4', 'h5'] as const;

/**
 * The figures of one session from its kept readings.
 * @param readings every kept reading of the session (any order); the last of each role is the result
 * @param emission how the transmitter was set (default DSB)
 */
export function analyseSession(readings: readonly PointLevel[], emission: Emission = 'dsb'): SessionFigures {
  const p = finalPoints(readings);
  const warnings: string[] = [];
  const floorDbm = p.floor ? p.floor.dbm : null;
  // A reading within a few dB of the measured floor is as much noise as signal: treat it as a bound too.
  const atFloor = (r: PointLevel) =>
    r.floorLimited || (floorDbm !== null && r.role !== 'floor' && r.dbm <= floorDbm + FLOOR_MARGIN_DB);

  const { wanted, unwanted } = sidebands(emission, p);
  // A tone at the floor is no reference: every figure against the tone or PEP then says nothing.
  const toneAtFloor = wanted.some(atFloor)
    ? `the ${wanted
        .filter(atFloor)
        .map((w) => w.role)
        .join(' and ')} tone`
    : null;
  for (const w of wanted) {
    if (atFloor(w)) warnings.push(`the ${w.role} tone read at the receiver floor: is the transmitter keyed?`);
    if (w.overload)
      warnings.push(`the ${w.role} tone read near overload: it may read low, and every dBc figure with it`);
  }

  let tone: LevelFigure | null = null;
  let pep: LevelFigure | null = null;
  if (wanted.length === 2) {
    const [u, l] = wanted;
    const pm = (mw(u.dbm) + mw(l.dbm)) / 2;
    tone = combine(wanted, db(pm), [mw(u.dbm) / (2 * pm), mw(l.dbm) / (2 * pm)]);
    // PEP of two lines: their amplitudes add at the crest of the envelope (docs/references.md § Modulation and power).
    const a = Math.sqrt(mw(u.dbm));
    const b = Math.sqrt(mw(l.dbm));
    pep = combine(wanted, db((a + b) ** 2), [a / (a + b), b / (a + b)]);
  } else if (wanted.length === 1) {
    tone = fromLine(wanted[0]);
    if (emission === 'dsb') {
      warnings.push(
        `only the ${wanted[0].role} tone was kept: PEP assumes the other sideband equal (one tone + 6.02 dB)`,
      );
      pep = { ...tone, dbm: tone.dbm + TWO_TONE_PEP_DB };
    } else {
      // SSB with one tone: the envelope is flat, PEP = the tone's power; a residual opposite sideband adds.
      const a = Math.sqrt(mw(wanted[0].dbm));
      const b = unwanted && !atFloor(unwanted) ? Math.sqrt(mw(unwanted.dbm)) : 0;
      pep = { ...tone, dbm: db((a + b) ** 2) };
    }
  } else {
    warnings.push(
      emission === 'dsb'
        ? 'no tone kept: keep the upper and lower tone to state suppression in dBc'
        : `the wanted (${emission === 'usb' ? 'upper' : 'lower'}) tone was not kept: no dBc figures`,
    );
  }

  let mean: LevelFigure | null = null;
  if (tone) {
    const lines = [p.carrier, p.upper, p.lower].filter((x): x is PointLevel => !!x);
    const total = lines.reduce((s, l) => s + mw(l.dbm), 0);
    mean = combine(
      lines,
      db(total),
      lines.map((l) => mw(l.dbm) / total),
    );
  }

  const carrier: SessionFigures['carrier'] = { tone: null, pep: null, unbalanced: null };
  if (p.carrier) {
    if (tone) carrier.tone = suppression(tone, p.carrier, atFloor, 'the carrier', toneAtFloor);
    if (pep) carrier.pep = suppression(pep, p.carrier, atFloor, 'the carrier', toneAtFloor);
    if (p.reference) {
      const refFloor = atFloor(p.reference);
      if (refFloor)
        warnings.push('the unbalanced-carrier reference read at the receiver floor: unbalance the modulator');
      carrier.unbalanced = suppression(
        fromLine(p.reference),
        p.carrier,
        atFloor,
        'the carrier',
        refFloor ? 'the unbalanced-carrier reference' : null,
      );
    }
  } else warnings.push('no carrier reading kept');

  let balance: Figure | null = null;
  if (emission === 'dsb' && p.upper && p.lower) {
    const d = p.upper.dbm - p.lower.dbm;
    // Two tones at nearly the same level share the calibration table's error, which then cancels;
    // far apart, it is a linearity error and counts for each.
    const near = Math.abs(d) <= 3;
    const u = near
      ? Math.hypot(meterU(p.upper), meterU(p.lower))
      : Math.hypot(relativeU(p.upper), relativeU(p.lower));
    const notes = near
      ? []
      : ['the sidebands differ by more than 3 dB: check the tone, or set the emission to SSB'];
    balance = { value: d, u, bound: 'value', notes };
    if (Math.abs(d) > 20)
      warnings.push(
        `the sidebands differ by ${Math.abs(d).toFixed(1)} dB: if this is an SSB transmitter, set the emission to USB or LSB`,
      );
  }

  let opposite: Figure | null = null;
  if (emission !== 'dsb' && tone && unwanted)
    opposite = suppression(tone, unwanted, atFloor, 'the opposite sideband', toneAtFloor);
  else if (emission !== 'dsb' && !unwanted) warnings.push('the opposite sideband was not kept');

  const imd3: SessionFigures['imd3'] = { tone: null, pep: null };
  const imdLines = [p.imd3u, p.imd3l].filter((x): x is PointLevel => !!x);
  if (emission === 'dsb' && imdLines.length && tone && pep) {
    // The worse (stronger) of the two third-order lines is the figure, as two-tone tests quote it.
    const worst = imdLines.reduce((m, x) => (x.dbm > m.dbm ? x : m));
    imd3.tone = suppression(
      tone,
      worst,
      atFloor,
      `the ${worst.role === 'imd3u' ? 'upper' : 'lower'} IMD3 line`,
      toneAtFloor,
    );
    imd3.pep = suppression(
      pep,
      worst,
      atFloor,
      `the ${worst.role === 'imd3u' ? 'upper' : 'lower'} IMD3 line`,
      toneAtFloor,
    );
    if (imdLines.length === 1) imd3.tone.notes.push('only one of the two IMD3 lines was kept');
  }

  const harmonics: HarmonicFigure[] = [];
  HARMONICS.forEach((role, i) => {
    const h = p[role];
    if (!h) return;
    const atMost = atFloor(h);
    // A harmonic is far from the fundamental in frequency: path and calibration need not be the same there,
    // so the absolute uncertainties of both levels count (conservative).
    const rel = (ref: LevelFigure | null): Figure | null =>
      ref && {
        value: ref.dbm - h.dbm,
        u: Math.hypot(ref.uAbs, h.uDb),
        bound: toneAtFloor ? 'unknown' : atMost ? 'atLeast' : 'value',
        notes: toneAtFloor
          ? [`${toneAtFloor} read at the receiver floor: no level below it can be stated`]
          : atMost
            ? ['read at the receiver floor: at least this far below']
            : [],
      };
    harmonics.push({
      role,
      order: i + 2,
      freqHz: h.freqHz,
      dbm: h.dbm,
      uDb: h.uDb,
      atMost,
      belowMean: rel(mean),
      belowPep: rel(pep),
    });
  });

  return {
    emission,
    points: p,
    tone,
    pep,
    mean,
    floorDbm,
    carrier,
    balance,
    opposite,
    imd3,
    harmonics,
    warnings,
  };
}

/** The headline figures of a session, as the revision comparison collects them. */
export const METRICS = ['carrier', 'balance', 'opposite', 'imd3'] as const;
export type Metric = (typeof METRICS)[number];

export const METRIC_LABELS: Record<Metric, string> = {
  carrier: 'Carrier suppression',
  balance: 'Sideband balance',
  opposite: 'Opposite sideband suppression',
  imd3: 'IMD3',
};

/**
 * Whether a larger figure is better: suppressions are; for sideband balance the magnitude matters and
 * smaller is better (the comparison uses |upper − lower|).
 */
export const METRIC_HIGHER_IS_BETTER: Record<Metric, boolean> = {
  carrier: true,
  balance: false,
  opposite: true,
  imd3: true,
};

/**
 * One metric of a session as a single figure: carrier suppression and IMD3 against the given reference
 * (IMD3 has no "unbalanced" reference: it falls back to one tone), balance as a magnitude.
 */
export function metricFigure(f: SessionFigures, m: Metric, ref: SuppressionReference): Figure | null {
  switch (m) {
    case 'carrier':
      return f.carrier[ref];
    case 'balance':
      return f.balance && { ...f.balance, value: Math.abs(f.balance.value) };
    case 'opposite':
      return f.opposite;
    case 'imd3':
      return ref === 'pep' ? f.imd3.pep : f.imd3.tone;
  }
}
