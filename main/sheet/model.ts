// Runs in Node. The test sheet of one unit as data: who and what was measured, on which bench, what came
// out with its uncertainty, the verdicts against the chosen limit sets, and the charts' points. The HTML
// (main/sheet/html) only lays this out; every figure is computed here from the database.
import {
  EMISSION_LABELS,
  K_EXPANDED,
  REFERENCE_LABELS,
  SUPPRESSION_REFERENCES,
  type Figure,
  type SuppressionReference,
} from '../../app/analysis';
import { ROLE_LABELS, roleFrequencyHz, type PointRole, type TrimDef } from '../../app/api';
import { BenchError } from '../../app/errors';
import {
  STANDING_LABELS,
  VERIFY_CAUTION,
  evaluateSet,
  type SetOutcome,
  type Standing,
  type Verdict,
} from '../../app/limits';
import { analysePath, validatePath } from '../../app/path';
import { Records } from '../store/records';
import { loadSessionResult, sessionsWithResults, type SessionResult } from './results';
import { RF_CAUTION } from '../../app/caution';
import type { Store } from '../store/store';
import type { NullSeries, PlanLine, PlanPoint } from './svg';
import type { Paper } from '../../app/paper';

export interface SheetOptions {
  /** report this session instead of the one in the unit's sheet settings (or the latest) */
  sessionId?: string;
  limitSetIds?: string[];
  reference?: SuppressionReference;
  /** the date printed as the issue date (tests fix it), ISO 8601 */
  issuedAt?: string;
  notes?: string;
  /** the paper it is printed on (default A4) */
  paper?: Paper;
}

export interface FigureRow {
  label: string;
  /** e.g. "58.1 dB below PEP" or "≥ 72.0 dB below PEP" */
  value: string;
  /** expanded uncertainty, e.g. "± 1.6 dB" */
  expanded: string;
  note: string;
  /** the stated reference of the sheet */
  stated: boolean;
  /** The figure as numbers, for machines: dB (positive below the reference), null when not measured or not stated. */
  db: number | null;
  /** expanded uncertainty (k = 2), dB */
  expandedDb: number | null;
  /** 'value', 'atLeast' (a bound: the weak line sat at the floor) or 'unknown' (the reference sat at the floor) */
  bound: Figure['bound'] | null;
}

export interface PointRow {
  role: PointRole;
  label: string;
  freqHz: number;
  dbm: number;
  expandedDb: number;
  at: string;
  flags: string;
}

export interface SheetModel {
  title: string;
  paper: Paper;
  /** a stable reference for this sheet: serial, session date and the session id's first characters */
  sheetRef: string;
  issuedAt: string;
  fileName: string;
  identity: {
    serial: string;
    design: string;
    designNotes: string;
    revision: string;
    revisionChanges: string;
    buildDate: string;
    builder: string;
    unitNotes: string;
  };
  session: {
    id: string;
    startedAt: string;
    endedAt: string | null;
    operator: string;
    notes: string;
    emission: string;
    keptCount: number;
  };
  setup: {
    receiver: string;
    source: string;
    bandwidthHz: number;
    maxInputDbm: number;
    calibration: string;
    calibrationDate: string;
    calibrationU: number;
    calibrationIsDefault: boolean;
    path: { label: string; lossDb: number; uDb: number }[];
    pathLossDb: number;
    pathUDb: number;
    carrierHz: number;
    toneHz: number;
    txPepDbm: number;
    rxPepDbm: number;
    trims: (TrimDef & { final: number | null })[];
  };
  reference: SuppressionReference;
  referenceLabel: string;
  figures: FigureRow[];
  points: PointRow[];
  levels: { tone: string; pep: string; mean: string; floor: string };
  verdicts: (SetOutcome & { source: string; standingLabel: string; standing: Standing })[];
  overall: Verdict | 'not-applicable';
  nullCharts: { trim: TrimDef; series: NullSeries[]; final: { x: number; y: number } | null }[];
  plan: { toneHz: number; points: PlanPoint[]; lines: PlanLine[] };
  warnings: string[];
  notes: string;
  uncertaintyNote: string;
  cautions: string[];
}

const f1 = (x: number) => {
  const s = Math.abs(x).toFixed(1);
  return `${x < 0 && Number(s) !== 0 ? '−' : ''}${s}`;
};
const dbmText = (x: number) => `${x >= 0 ? '+' : ''}${f1(x)} dBm`;

function figureRow(
  label: string,
  f: Figure | null,
  below: string,
  stated = false,
  signed = false,
): FigureRow {
  if (!f)
    return {
      label,
      value: 'not measured',
      expanded: '',
      note: '',
      stated,
      db: null,
      expandedDb: null,
      bound: null,
    };
  if (f.bound === 'unknown')
    return {
      label,
      value: 'not stated: reference at the floor',
      expanded: '',
      note: f.notes.join('; '),
      stated,
      db: null,
      expandedDb: null,
      bound: 'unknown',
    };
  const v = signed
    ? `${f.value >= 0 ? '+' : ''}${f1(f.value)} dB`
    : `${f.bound === 'atLeast' ? '≥ ' : ''}${f1(f.value)} dB${below}`;
  return {
    label,
    value: v,
    expanded: `± ${f1(K_EXPANDED * f.u)} dB`,
    note: f.notes.join('; '),
    stated,
    db: f.value,
    expandedDb: K_EXPANDED * f.u,
    bound: f.bound,
  };
}

const ORDER: PointRole[] = [
  'imd5l',
  'imd3l',
  'lower',
  'carrier',
  'reference',
  'upper',
  'imd3u',
  'imd5u',
  'floor',
  'h2',
  'h3',
  'h4',
  'h5',
];
const PLAN_LABEL: Partial<Record<PointRole, string>> = {
  carrier: 'C',
  upper: 'USB',
  lower: 'LSB',
  imd3u: 'IMD3',
  imd3l: 'IMD3',
  imd5u: 'IMD5',
  imd5l: 'IMD5',
  reference: 'ref',
};

/** Splits the kept carrier readings into passes of one trimmer (the others held still). */
function nullPasses(r: SessionResult): SheetModel['nullCharts'] {
  const carrier = r.kept.filter((k) => k.role === 'carrier');
  const trims = r.session.trims;
  const passes: { key: string | null; pts: typeof carrier }[] = [];
  for (const k of carrier) {
    const cur = passes[passes.length - 1];
    const prev = cur?.pts[cur.pts.length - 1];
    const moved = prev ? trims.filter((t) => k.trims[t.key] !== prev.trims[t.key]).map((t) => t.key) : [];
    if (cur && moved.length === 1 && (cur.key === null || cur.key === moved[0])) {
      cur.key = moved[0];
      cur.pts.push(k);
    } else if (cur && moved.length === 0) cur.pts.push(k);
    else passes.push({ key: null, pts: [k] });
  }
  const last = carrier[carrier.length - 1];
  return trims
    .map((t) => {
      const mine = passes.filter((p) => p.key === t.key && p.pts.length >= 2);
      const others = trims.filter((o) => o.key !== t.key);
      const series: NullSeries[] = mine.map((p, i) => ({
        label: `pass ${i + 1}${others.map((o) => ` ${o.key} = ${Number(p.pts[0].trims[o.key]?.toFixed(3))}`).join(',')}`,
        points: p.pts
          .filter((x) => typeof x.trims[t.key] === 'number')
          .map((x) => ({ x: x.trims[t.key], y: x.dbm, atFloor: x.floorLimited })),
      }));
      const final =
        last && typeof last.trims[t.key] === 'number' ? { x: last.trims[t.key], y: last.dbm } : null;
      return { trim: t, series, final };
    })
    .filter((c) => c.series.length > 0);
}

/** Builds the sheet of a unit from the database. */
export function buildSheet(store: Store, unitId: string, opts: SheetOptions = {}): SheetModel {
  const records = new Records(store);
  const unit = store.getUnit(unitId);
  const settings = records.sheetSettings(unitId);
  const sessionId = opts.sessionId ?? settings.sessionId ?? sessionsWithResults(store, unitId)[0]?.id;
  if (!sessionId)
    throw new BenchError(
      'ENOTFOUND',
      `unit ${unit.serial} has no session with kept readings yet: measure it first`,
      'unit',
    );
  const r = loadSessionResult(store, sessionId);
  if (r.unit.id !== unitId)
    throw new BenchError('EINVAL', `session ${sessionId} belongs to unit ${r.unit.serial}`, 'session');
  const reference = opts.reference ?? settings.reference;
  if (!SUPPRESSION_REFERENCES.includes(reference))
    throw new BenchError('EINVAL', `must be one of ${SUPPRESSION_REFERENCES.join(', ')}`, 'reference');
  const sets = (opts.limitSetIds ?? settings.limitSetIds).map((id, i) =>
    records.limitSet(id, `limitSetIds[${i}]`),
  );
  const f = r.figures;
  const s = r.session;
  const path = analysePath(validatePath(s.path));
  const ctx = { carrierHz: s.carrierHz };
  const verdicts = sets.map((set) => ({
    ...evaluateSet(set, f, ctx),
    source: set.source,
    standing: set.standing,
    standingLabel: STANDING_LABELS[set.standing],
  }));
  const rank = { fail: 3, indeterminate: 2, pass: 1, 'not-applicable': 0 } as const;
  const overall = verdicts.reduce<Verdict | 'not-applicable'>(
    (w, v) => (rank[v.overall] > rank[w] ? v.overall : w),
    'not-applicable',
  );

  const figures: FigureRow[] = [];
  for (const ref of SUPPRESSION_REFERENCES)
    figures.push(
      figureRow(
        `Carrier suppression, against ${ref === 'pep' ? 'PEP' : REFERENCE_LABELS[ref]}`,
        f.carrier[ref],
        ` below ${ref === 'pep' ? 'PEP' : REFERENCE_LABELS[ref]}`,
        ref === reference,
      ),
    );
  if (f.emission === 'dsb')
    figures.push(figureRow('Sideband balance (upper − lower)', f.balance, '', false, true));
  else figures.push(figureRow('Opposite sideband suppression', f.opposite, ' below the wanted sideband'));
  if (f.emission === 'dsb') {
    figures.push(figureRow('IMD3 (worse line), against one tone', f.imd3.tone, ' below one tone'));
    figures.push(figureRow('IMD3 (worse line), against PEP', f.imd3.pep, ' below PEP'));
  }
  for (const h of f.harmonics)
    figures.push(
      figureRow(
        `${['', '', '2nd', '3rd', '4th', '5th'][h.order]} harmonic (${(h.freqHz / 1e6).toFixed(3)} MHz), against the mean power`,
        h.belowMean,
        ' below the mean power',
      ),
    );

  const points: PointRow[] = ORDER.filter((role) => f.points[role]).map((role) => {
    const p = f.points[role]!;
    const flags = [
      p.floorLimited ? 'at receiver floor (true level lower)' : '',
      p.overload ? 'near overload' : '',
    ]
      .filter(Boolean)
      .join('; ');
    return {
      role,
      label: ROLE_LABELS[role],
      freqHz: p.freqHz,
      dbm: p.dbm,
      expandedDb: K_EXPANDED * p.uDb,
      at: new Date(p.t).toISOString().slice(11, 19),
      flags,
    };
  });

  const planPoints: PlanPoint[] = ORDER.filter((role) => f.points[role] && PLAN_LABEL[role]).map((role) => {
    const p = f.points[role]!;
    return {
      label: PLAN_LABEL[role]!,
      offsetHz: roleFrequencyHz(role, s.carrierHz, s.toneHz) - s.carrierHz,
      dbm: p.dbm,
      atFloor: p.floorLimited,
      hollow: role === 'reference',
    };
  });
  const refLevel =
    reference === 'tone' ? f.tone?.dbm : reference === 'pep' ? f.pep?.dbm : f.points.reference?.dbm;
  const lines: PlanLine[] = [];
  if (refLevel !== undefined)
    lines.push({
      label: `${reference === 'pep' ? 'PEP' : REFERENCE_LABELS[reference]} ${dbmText(refLevel)}`,
      dbm: refLevel,
      kind: 'reference',
    });
  for (const v of verdicts) {
    const set = sets.find((x) => x.id === v.setId)!;
    set.rules.forEach((rule, i) => {
      if (rule.metric !== 'carrier') return;
      const base =
        rule.reference === 'tone'
          ? f.tone?.dbm
          : rule.reference === 'pep'
            ? f.pep?.dbm
            : f.points.reference?.dbm;
      const applies = v.outcomes.some((o) => o.rule === i && o.status !== 'not-applicable');
      const label = `carrier limit: ${f1(rule.minDb)} dB below ${rule.reference === 'pep' ? 'PEP' : REFERENCE_LABELS[rule.reference]}`;
      if (base !== undefined && applies && !lines.some((l) => l.label === label))
        lines.push({ label, dbm: base - rule.minDb, kind: 'limit' });
    });
  }
  if (f.floorDbm !== null)
    lines.push({ label: `receiver floor ${dbmText(f.floorDbm)}`, dbm: f.floorDbm, kind: 'floor' });

  const lastOf = (key: string) => {
    const c = [...r.kept].reverse().find((k) => typeof k.trims[key] === 'number');
    return c ? c.trims[key] : null;
  };
  const started = s.startedAt.slice(0, 10);
  const sheetRef = `${unit.serial}-${started.replace(/-/g, '')}-${s.id.slice(0, 8)}`;
  const cautions = [
    RF_CAUTION,
    VERIFY_CAUTION,
    'The figures describe this unit as measured on this bench on the date stated; they are not a type approval.',
  ];
  if (r.calibration.isDefault)
    cautions.unshift(
      'The receiver was not calibrated (IARU R.1 S-meter scale assumed): absolute levels and dBc figures carry a few dB of uncertainty.',
    );
  return {
    title: `Test sheet — ${unit.serial}`,
    sheetRef,
    issuedAt: opts.issuedAt ?? new Date().toISOString(),
    paper: opts.paper ?? 'a4',
    fileName: `nullbench-sheet-${unit.serial.replace(/[^A-Za-z0-9._-]+/g, '_')}-${started}.pdf`,
    identity: {
      serial: unit.serial,
      design: r.design.name,
      designNotes: r.design.notes,
      revision: r.revision.name,
      revisionChanges: r.revision.changes,
      buildDate: unit.buildDate,
      builder: unit.builder,
      unitNotes: unit.notes,
    },
    session: {
      id: s.id,
      startedAt: s.startedAt,
      endedAt: s.endedAt,
      operator: s.operator,
      notes: s.notes,
      emission: EMISSION_LABELS[r.emission],
      keptCount: r.kept.length,
    },
    setup: {
      receiver: s.receiver.name,
      source: s.receiver.source,
      bandwidthHz: s.receiver.bandwidthHz,
      maxInputDbm: s.receiver.maxInputDbm,
      calibration: r.calibration.name,
      calibrationDate:
        r.calibration.madeAt ?? (r.calibration.isDefault ? 'none (not calibrated)' : 'not stated'),
      calibrationU: r.calibration.uDb,
      calibrationIsDefault: r.calibration.isDefault,
      path: path.terms.map((t) => ({ label: t.label, lossDb: t.lossDb, uDb: t.uDb })),
      pathLossDb: path.lossDb,
      pathUDb: path.uDb,
      carrierHz: s.carrierHz,
      toneHz: s.toneHz,
      txPepDbm: s.txPepDbm,
      rxPepDbm: s.rxPepDbm,
      trims: s.trims.map((t) => ({ ...t, final: lastOf(t.key) })),
    },
    reference,
    referenceLabel: reference === 'pep' ? 'PEP of the test signal' : REFERENCE_LABELS[reference],
    figures,
    points,
    levels: {
      tone: f.tone ? `${dbmText(f.tone.dbm)} ± ${f1(K_EXPANDED * f.tone.uAbs)} dB` : 'not measured',
      pep: f.pep ? `${dbmText(f.pep.dbm)} ± ${f1(K_EXPANDED * f.pep.uAbs)} dB` : 'not measured',
      mean: f.mean ? `${dbmText(f.mean.dbm)} ± ${f1(K_EXPANDED * f.mean.uAbs)} dB` : 'not measured',
      floor: f.floorDbm !== null ? dbmText(f.floorDbm) : 'not measured',
    },
    verdicts,
    overall,
    nullCharts: nullPasses(r),
    plan: { toneHz: s.toneHz, points: planPoints, lines },
    warnings: f.warnings,
    notes: opts.notes ?? settings.notes,
    uncertaintyNote:
      `Uncertainties are expanded, k = ${K_EXPANDED} (about 95 %). Figures in dB relative to another line on the same ` +
      'receiver through the same path leave the path out (it cancels) and keep the receiver calibration and meter ' +
      'step; harmonics, far from the fundamental in frequency, keep every part. A figure marked ≥ was limited by ' +
      'the receiver floor: the true value is at least that. The result of each point is its last kept reading.',
    cautions,
  };
}
