// Runs anywhere (app/ is runtime-free). Frequency-stepped plans: which points to read, how to average them,
// what the results are relative to, and whether the set-up is safe for the receiver before a plan starts.
import { z } from 'zod';
import { SUPPRESSION_REFERENCES, type SuppressionReference } from './analysis';
import { POINT_ROLES, PointRoleSchema, ROLE_LABELS, roleFrequencyHz, type PointRole } from './api/schemas';
import { BenchError, check } from './errors';
import { dbmToWatts, wattsToDbm } from './levels';
import { assertReceiverSafe, type PathElement } from './path';
import { benchErrorFromZod } from './zodissue';

/** The suppression reference (docs/design.md § Suppression references), in the vocabulary of app/analysis. */
export type ReferenceKind = SuppressionReference;

/** The usual first plan: carrier, both tones and the third-order products. */
export const DEFAULT_PLAN_POINTS: readonly PointRole[] = ['carrier', 'upper', 'lower', 'imd3u', 'imd3l'];

export const PlanSpecSchema = z.strictObject({
  /** Points in the order they are read; each role at most once. */
  points: z
    .array(PointRoleSchema, { error: `must be a list of points (${POINT_ROLES.join(', ')})` })
    .min(1, 'needs at least one point')
    .max(POINT_ROLES.length)
    .refine((p) => new Set(p).size === p.length, 'lists a point twice')
    .default([...DEFAULT_PLAN_POINTS]),
  /** Readings averaged per point once it has settled (1-200). */
  average: z
    .number()
    .int('must be a whole number')
    .min(1, 'must be >= 1')
    .max(200, 'must be <= 200')
    .default(5),
  /**
   * Least wait after retuning before readings count, ms. The default is three of R.1's 500 ms meter decay
   * time constants (IARU R.1: decay >= 500 ms), after which a falling meter is within 5 % of its end value.
   */
  settleMs: z.number().min(0, 'must be >= 0 ms').max(60000, 'must be <= 60000 ms').default(1500),
  /** Give up waiting for steady readings after this long and average what comes (flagged unsettled), ms. */
  settleTimeoutMs: z
    .number()
    .min(500, 'must be >= 500 ms')
    .max(300000, 'must be <= 300000 ms')
    .default(10000),
  reference: z
    .enum(SUPPRESSION_REFERENCES, { error: `must be one of ${SUPPRESSION_REFERENCES.join(', ')}` })
    .default('tone'),
});
export type PlanSpec = z.output<typeof PlanSpecSchema>;
export type PlanSpecInput = z.input<typeof PlanSpecSchema>;

export function validatePlanSpec(input: unknown, root = ''): PlanSpec {
  const r = PlanSpecSchema.safeParse(input ?? {});
  if (!r.success) throw benchErrorFromZod(r.error, root);
  const spec = r.data;
  if (spec.reference === 'unbalanced')
    check(
      spec.points.includes('reference'),
      root ? `${root}.reference` : 'reference',
      'the unbalanced-carrier reference needs the "reference" point in the plan',
    );
  if (spec.reference === 'tone' || spec.reference === 'pep')
    check(
      spec.points.includes('upper') || spec.points.includes('lower'),
      root ? `${root}.points` : 'points',
      `a ${spec.reference === 'tone' ? 'tone' : 'PEP'} reference needs the upper or lower tone in the plan`,
    );
  return spec;
}

/** Parses "carrier,upper,lower,imd3u" (the CLI form); names the bad item. */
export function parsePointList(text: string, option = '--points'): PointRole[] {
  const items = text
    .split(',')
    .map((s) => s.trim())
    .filter((s) => s !== '');
  check(items.length > 0, option, `must list points, e.g. ${DEFAULT_PLAN_POINTS.join(',')}`);
  return items.map((s, i) => {
    const r = PointRoleSchema.safeParse(s);
    if (!r.success)
      throw new BenchError(
        'EINVAL',
        `unknown point "${s}"; known points: ${POINT_ROLES.join(', ')}`,
        `${option} item ${i + 1}`,
      );
    return r.data;
  });
}

/** The frequencies of a plan's points, Hz, in order. */
export function planFrequencies(points: readonly PointRole[], carrierHz: number, toneHz: number): number[] {
  return points.map((r) => roleFrequencyHz(r, carrierHz, toneHz));
}

/**
 * A deliberately unbalanced modulator adds the carrier to the two sidebands. With the carrier brought up to
 * one tone's amplitude (what the reference step asks for) the envelope peaks at 3 amplitudes instead of 2:
 * 20*log10(3/2) = 3.52 dB above the declared DSB PEP (computed).
 */
export const UNBALANCED_PEP_RISE_DB = 20 * Math.log10(3 / 2);

/**
 * Refuses a plan that would overdrive the receiver: the session check at the declared PEP, and for a plan with
 * the unbalanced-carrier reference the same check 3.52 dB higher.
 * @throws BenchError EUNSAFE naming the point that tips it over
 */
export function assertPlanSafe(
  txPepDbm: number,
  path: readonly PathElement[],
  rxMaxDbm: number,
  points: readonly PointRole[],
): { rxDbm: number; worstRxDbm: number } {
  const pep = points.includes('reference') ? txPepDbm + UNBALANCED_PEP_RISE_DB : txPepDbm;
  try {
    return assertReceiverSafe(pep, path, rxMaxDbm);
  } catch (e) {
    if (e instanceof BenchError && e.code === 'EUNSAFE' && points.includes('reference'))
      throw new BenchError(
        'EUNSAFE',
        `the unbalanced-carrier reference raises the peak envelope power by ${UNBALANCED_PEP_RISE_DB.toFixed(2)} dB ` +
          `(carrier up to one tone's level): ${e.message.replace(/^path: /, '')}`,
        'points',
      );
    throw e;
  }
}

/** One reading as the averaging sees it. */
export interface PointReading {
  dbmRx: number;
  dbmDut: number;
  /** Combined standard uncertainty of dbmDut, dB (k = 1). */
  uDb: number;
  floorLimited: boolean;
  overload: boolean;
  settled: boolean;
}

/** The averaged result of one point. */
export interface PointAverage {
  n: number;
  /** Power mean, dBm. */
  dbmRx: number;
  dbmDut: number;
  /** Combined standard uncertainty of the mean, dB (k = 1): the readings' own u and the scatter of the mean. */
  uDb: number;
  /** Type A part: standard deviation of the readings / sqrt(n), dB. */
  uStatDb: number;
  /** Largest minus smallest reading, dB. */
  spreadDb: number;
  /** Any reading at the receiver floor: the mean is an upper bound. */
  floorLimited: boolean;
  overload: boolean;
  /** Every reading came after the settle detector said steady. */
  settled: boolean;
}

/**
 * Averages readings of one point in power (mW), as a level meter integrates; the mean of dB values would read
 * low on a fluctuating signal. The readings' own uncertainty (calibration, path) does not shrink by averaging,
 * the scatter does: u = sqrt(mean(u)^2 + (s/sqrt(n))^2) (GUM type A and type B combined).
 */
export function averagePoint(readings: readonly PointReading[]): PointAverage {
  check(readings.length > 0, 'readings', 'needs at least one reading to average');
  const n = readings.length;
  const meanDb = (xs: number[]) => wattsToDbm(xs.reduce((a, x) => a + dbmToWatts(x), 0) / n);
  const rx = readings.map((r) => r.dbmRx);
  const dut = readings.map((r) => r.dbmDut);
  const mu = dut.reduce((a, x) => a + x, 0) / n;
  const sd = n > 1 ? Math.sqrt(dut.reduce((a, x) => a + (x - mu) ** 2, 0) / (n - 1)) : 0;
  const uStat = sd / Math.sqrt(n);
  const uB = readings.reduce((a, r) => a + r.uDb, 0) / n;
  return {
    n,
    dbmRx: meanDb(rx),
    dbmDut: meanDb(dut),
    uDb: Math.sqrt(uB ** 2 + uStat ** 2),
    uStatDb: uStat,
    spreadDb: Math.max(...dut) - Math.min(...dut),
    floorLimited: readings.some((r) => r.floorLimited),
    overload: readings.some((r) => r.overload),
    settled: readings.every((r) => r.settled),
  };
}

/** A point's stored result, as the reference and the table need it. */
export interface PlanPointResult {
  idx: number;
  role: PointRole;
  freqHz: number;
  state: 'pending' | 'done';
  avg: PointAverage | null;
}

export interface PlanReference {
  kind: ReferenceKind;
  dbm: number;
  /** Standard uncertainty of the reference for comparison on the same receiver and path, dB. */
  uRelDb: number;
  label: string;
}

/**
 * A point's uncertainty when compared with another level read on the same receiver through the same path:
 * the path's part cancels (the same pads, a few kHz apart); calibration linearity, meter step and scatter stay
 * (as app/analysis relativeU does for kept readings).
 */
export function relativeUDb(a: PointAverage, pathUDb: number): number {
  return Math.sqrt(Math.max(a.uStatDb ** 2, a.uDb ** 2 - pathUDb ** 2));
}

/**
 * The reference level at the transmitter, dBm, or null with the reason it cannot be formed yet.
 * - tone: the power mean of the upper and lower tone (either one if only one was read);
 * - pep: the envelope peak of the two sidebands, (sqrt(Pu) + sqrt(Pl))^2: for equal tones 4 x one tone
 *   (docs/references.md: DSB-SC with one tone, PEP = 4 x one tone's power); one tone alone (SSB): its power;
 * - unbalanced: the carrier read at the "reference" point.
 */
export function planReference(
  points: readonly PlanPointResult[],
  kind: ReferenceKind,
  pathUDb = 0,
): { ref: PlanReference } | { ref: null; reason: string } {
  const done = (role: PointRole) => points.find((p) => p.role === role && p.avg)?.avg ?? null;
  if (kind === 'unbalanced') {
    const r = done('reference');
    if (!r) return { ref: null, reason: 'the unbalanced-carrier reference has not been read yet' };
    return { ref: { kind, dbm: r.dbmDut, uRelDb: relativeUDb(r, pathUDb), label: 'unbalanced carrier' } };
  }
  const tones = [done('upper'), done('lower')].filter((t): t is PointAverage => t !== null);
  if (tones.length === 0) return { ref: null, reason: 'neither tone has been read yet' };
  // The two tones' calibration errors are nearly the same (a few kHz apart): average them as correlated.
  const uStat = tones.reduce((a, t) => a + relativeUDb(t, pathUDb), 0) / tones.length;
  if (kind === 'tone') {
    const mw = tones.reduce((a, t) => a + dbmToWatts(t.dbmDut), 0) / tones.length;
    return {
      ref: {
        kind,
        dbm: wattsToDbm(mw),
        uRelDb: uStat,
        label: tones.length === 2 ? 'mean of the two tones' : 'the one tone read',
      },
    };
  }
  const amp = tones.reduce((a, t) => a + Math.sqrt(dbmToWatts(t.dbmDut)), 0);
  return {
    ref: {
      kind,
      dbm: wattsToDbm(amp * amp),
      uRelDb: uStat,
      label: tones.length === 2 ? 'PEP of the two sidebands' : 'PEP of the one tone read',
    },
  };
}

export interface PlanRow {
  idx: number;
  role: PointRole;
  label: string;
  freqHz: number;
  state: 'pending' | 'done';
  dbmDut: number | null;
  uDb: number | null;
  /** Level relative to the reference, dB; null until both are read. */
  relDb: number | null;
  /** Standard uncertainty of relDb, dB: both levels' relative uncertainties (the path's part cancels). */
  uRelDb: number | null;
  floorLimited: boolean;
  overload: boolean;
  settled: boolean;
}

/** The result table: every point with its level and its level relative to the reference. */
export function planTable(
  points: readonly PlanPointResult[],
  kind: ReferenceKind,
  pathUDb = 0,
): { rows: PlanRow[]; reference: PlanReference | null; reason: string | null } {
  const r = planReference(points, kind, pathUDb);
  const ref = r.ref;
  // The unbalanced carrier is its own reference: exactly 0 dB, no uncertainty of its own.
  const isRef = (p: PlanPointResult) => ref?.kind === 'unbalanced' && p.role === 'reference';
  const rows = points.map((p): PlanRow => {
    const a = p.avg;
    return {
      idx: p.idx,
      role: p.role,
      label: ROLE_LABELS[p.role],
      freqHz: p.freqHz,
      state: p.state,
      dbmDut: a ? a.dbmDut : null,
      uDb: a ? a.uDb : null,
      relDb: a && ref ? a.dbmDut - ref.dbm : null,
      uRelDb: a && ref ? (isRef(p) ? 0 : Math.hypot(relativeUDb(a, pathUDb), ref.uRelDb)) : null,
      floorLimited: a?.floorLimited ?? false,
      overload: a?.overload ?? false,
      settled: a?.settled ?? false,
    };
  });
  return { rows, reference: ref, reason: ref ? null : (r as { reason: string }).reason };
}

export type PlanState = 'running' | 'cancelled' | 'interrupted' | 'failed' | 'done';

export interface PlanPoint extends PlanPointResult {
  /** First and last reading time of the point's average, ms (source clock). */
  tStartMs: number | null;
  tEndMs: number | null;
}

/** A stored plan run: the plan, its state, and each point's result. */
export interface PlanRun {
  id: string;
  sessionId: string;
  spec: PlanSpec;
  state: PlanState;
  message: string;
  createdAt: string;
  updatedAt: string;
  points: PlanPoint[];
}
