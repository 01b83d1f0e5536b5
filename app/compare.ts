// Runs anywhere (app/ is runtime-free). Revision comparison: per board revision, the spread over its units
// and sessions of each headline figure, and which revision got better or worse than the one before.
import {
  K_EXPANDED,
  METRICS,
  METRIC_HIGHER_IS_BETTER,
  metricFigure,
  type Metric,
  type SessionFigures,
  type SuppressionReference,
} from './analysis';

/** One session's figure for one metric, traced back to where it came from. */
export interface CompareValue {
  unitId: string;
  serial: string;
  sessionId: string;
  startedAt: string;
  /** dB (suppressions positive below their reference; balance as |upper − lower|) */
  value: number;
  /** standard uncertainty (k = 1), dB */
  u: number;
  /** the figure is a bound: the true suppression is at least this */
  atLeast: boolean;
}

/** Five-number summary of a metric over a revision's sessions. */
export interface Spread {
  n: number;
  units: number;
  min: number;
  q1: number;
  median: number;
  q3: number;
  max: number;
  /** median of the values' standard uncertainties, dB */
  uTypical: number;
  values: CompareValue[];
}

export interface SessionEntry {
  unitId: string;
  serial: string;
  sessionId: string;
  startedAt: string;
  figures: SessionFigures;
}

export interface RevisionEntry {
  revisionId: string;
  name: string;
  changes: string;
  createdAt: string;
  unitCount: number;
  sessions: SessionEntry[];
}

export interface RevisionSpread {
  revisionId: string;
  name: string;
  changes: string;
  unitCount: number;
  sessionCount: number;
  metrics: Record<Metric, Spread | null>;
}

/** How a revision compares with the one before it on one metric. */
export interface Change {
  metric: Metric;
  fromRevisionId: string;
  toRevisionId: string;
  from: string;
  to: string;
  /** difference of the medians, positive = better (deeper suppression, smaller imbalance), dB */
  betterByDb: number;
  /** a difference smaller than this is not told apart from the measurement uncertainty, dB */
  thresholdDb: number;
  kind: 'better' | 'worse' | 'same';
}

export interface Comparison {
  reference: SuppressionReference;
  revisions: RevisionSpread[];
  changes: Change[];
}

/** The smallest difference of medians ever called a change: one step of a usual S-meter, dB. */
export const MIN_CHANGE_DB = 1;

/**
 * Quantile by linear interpolation between order statistics (numpy.percentile's default "linear"
 * method, Hyndman and Fan type 7).
 * @param sorted ascending values, at least one
 * @param q 0..1
 */
export function quantile(sorted: readonly number[], q: number): number {
  if (!sorted.length) return NaN;
  const h = (sorted.length - 1) * q;
  const lo = Math.floor(h);
  const hi = Math.ceil(h);
  return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo]);
}

export function spreadOf(values: CompareValue[]): Spread | null {
  if (!values.length) return null;
  const v = values.map((x) => x.value).sort((a, b) => a - b);
  const us = values.map((x) => x.u).sort((a, b) => a - b);
  return {
    n: values.length,
    units: new Set(values.map((x) => x.unitId)).size,
    min: v[0],
    q1: quantile(v, 0.25),
    median: quantile(v, 0.5),
    q3: quantile(v, 0.75),
    max: v[v.length - 1],
    uTypical: quantile(us, 0.5),
    values: [...values].sort(
      (a, b) => a.serial.localeCompare(b.serial) || a.startedAt.localeCompare(b.startedAt),
    ),
  };
}

/**
 * Compares revisions in the order given (oldest first). A change is called when the medians differ by
 * more than the larger of MIN_CHANGE_DB and the expanded (k = 2) uncertainty of that difference, taken
 * from the typical uncertainty of one value in each revision; anything less is "same".
 */
export function compareRevisions(
  revisions: readonly RevisionEntry[],
  reference: SuppressionReference,
): Comparison {
  const rows: RevisionSpread[] = revisions.map((r) => {
    const metrics = {} as Record<Metric, Spread | null>;
    for (const m of METRICS) {
      const values: CompareValue[] = [];
      for (const s of r.sessions) {
        const f = metricFigure(s.figures, m, reference);
        // A figure against a reference at the floor says nothing: it is no point of the spread.
        if (!f || f.bound === 'unknown') continue;
        values.push({
          unitId: s.unitId,
          serial: s.serial,
          sessionId: s.sessionId,
          startedAt: s.startedAt,
          value: f.value,
          u: f.u,
          atLeast: f.bound === 'atLeast',
        });
      }
      metrics[m] = spreadOf(values);
    }
    return {
      revisionId: r.revisionId,
      name: r.name,
      changes: r.changes,
      unitCount: r.unitCount,
      sessionCount: r.sessions.length,
      metrics,
    };
  });
  const changes: Change[] = [];
  for (const m of METRICS) {
    let prev: RevisionSpread | null = null;
    for (const row of rows) {
      const s = row.metrics[m];
      if (!s) continue;
      const p = prev?.metrics[m];
      if (prev && p) {
        const d = s.median - p.median;
        const better = METRIC_HIGHER_IS_BETTER[m] ? d : -d;
        const threshold = Math.max(MIN_CHANGE_DB, K_EXPANDED * Math.hypot(s.uTypical, p.uTypical));
        changes.push({
          metric: m,
          fromRevisionId: prev.revisionId,
          toRevisionId: row.revisionId,
          from: prev.name,
          to: row.name,
          betterByDb: better,
          thresholdDb: threshold,
          kind: better > threshold ? 'better' : better < -threshold ? 'worse' : 'same',
        });
      }
      prev = row;
    }
  }
  return { reference, revisions: rows, changes };
}
