// Runs anywhere (app/ is runtime-free). Limit sets: named thresholds with their sources, the presets we
// ship (each with where its figures come from), and verdicts: pass, fail, or indeterminate when the
// uncertainty or the receiver floor straddles the limit.
import { z } from 'zod';
import {
  EMISSIONS,
  K_EXPANDED,
  REFERENCE_LABELS,
  SUPPRESSION_REFERENCES,
  type Emission,
  type Figure,
  type LevelFigure,
  type SessionFigures,
} from './analysis';
import { BenchError } from './errors';
import { benchErrorFromZod } from './zodissue';

/** Shown beside every limit set, preset or not. */
export const VERIFY_CAUTION =
  'Verify against your local rules: limits differ between countries, services and licence classes, and ' +
  'rules change. These figures are a convenience, not legal advice.';

const dB = (what: string, max = 150) =>
  z
    .number({ error: `must be a number of dB (${what})` })
    .min(0, 'must be >= 0 dB')
    .max(max, `must be <= ${max} dB`);
const dBm = z
  .number({ error: 'must be a level in dBm' })
  .min(-150, 'must be >= -150 dBm')
  .max(90, 'must be <= +90 dBm');

/** Where a rule applies: the carrier frequency range and the emissions; absent = everywhere. */
const scope = {
  /** the rule applies when the carrier is at or above this, Hz */
  carrierFromHz: z.number().min(0).optional(),
  /** ... and below this, Hz */
  carrierBelowHz: z.number().positive().optional(),
  emissions: z.array(z.enum(EMISSIONS)).min(1).optional(),
  /** a short remark printed with the rule (e.g. the exact wording it stands for) */
  note: z.string().max(400).optional(),
};

export const LimitRuleSchema = z.discriminatedUnion(
  'metric',
  [
    z.strictObject({
      metric: z.literal('carrier'),
      /** what the suppression is stated against */
      reference: z.enum(SUPPRESSION_REFERENCES),
      /** the carrier at least this many dB below the reference */
      minDb: dB('minimum suppression'),
      ...scope,
    }),
    z.strictObject({
      metric: z.literal('opposite'),
      /** the unwanted sideband at least this many dB below the wanted one */
      minDb: dB('minimum suppression'),
      ...scope,
    }),
    z.strictObject({
      metric: z.literal('imd3'),
      reference: z.enum(['tone', 'pep']),
      /** the worse IMD3 line at least this many dB below the reference */
      minDb: dB('minimum suppression'),
      ...scope,
    }),
    z.strictObject({
      metric: z.literal('balance'),
      /** |upper − lower| at most this, dB */
      maxDb: dB('largest difference', 40),
      ...scope,
    }),
    z.strictObject({
      metric: z.literal('spurious'),
      /** the fundamental power the rule is stated against: mean power or PEP */
      reference: z.enum(['mean', 'pep']),
      /** each harmonic at least this many dB below the reference */
      minDb: dB('minimum attenuation'),
      /** ... and in any case at most this level, dBm */
      absMaxDbm: dBm.optional(),
      /** ... but never required to be below this level, dBm (the rule's "need not be below") */
      needNotBelowDbm: dBm.optional(),
      /** the rule applies when the measured mean power is above this, W */
      meanAboveW: z.number().min(0).optional(),
      /** ... and at most this, W */
      meanAtMostW: z.number().positive().optional(),
      ...scope,
    }),
  ],
  { error: 'metric must be one of carrier, opposite, imd3, balance, spurious' },
);
export type LimitRule = z.infer<typeof LimitRuleSchema>;
export type RuleMetric = LimitRule['metric'];

/**
 * How much weight a set's figures carry:
 * regulation          a legal text (still: verify against your local rules and the current text)
 * secondary-source    a standard known here only from a secondary source (confirm)
 * other-service       a rule of another radio service, offered as an optional yardstick
 * common-practice     a rule of thumb of the trade, not a standard
 * user                the user's own thresholds
 */
export const STANDINGS = [
  'regulation',
  'secondary-source',
  'other-service',
  'common-practice',
  'user',
] as const;
export type Standing = (typeof STANDINGS)[number];
export const STANDING_LABELS: Record<Standing, string> = {
  regulation: 'regulation',
  'secondary-source': 'from a secondary source: confirm',
  'other-service': 'optional: another radio service',
  'common-practice': 'common practice',
  user: 'user-defined',
};

export const LimitSetSchema = z.strictObject({
  id: z.string().trim().min(1).max(64),
  name: z.string().trim().min(1, 'must not be empty').max(120),
  /** where the figures come from */
  source: z.string().max(600).default(''),
  standing: z.enum(STANDINGS).default('user'),
  notes: z.string().max(4000).default(''),
  rules: z.array(LimitRuleSchema).min(1, 'needs at least one rule').max(40),
});
export type LimitSet = z.infer<typeof LimitSetSchema>;
export type LimitSetInput = z.input<typeof LimitSetSchema>;

/** Checks a limit set from outside; errors are EINVAL naming the field, e.g. "rules[1].minDb". */
export function validateLimitSet(input: unknown): LimitSet {
  const r = LimitSetSchema.safeParse(input);
  if (!r.success) throw benchErrorFromZod(r.error);
  const set = r.data;
  set.rules.forEach((rule, i) => {
    if (rule.carrierFromHz !== undefined && rule.carrierBelowHz !== undefined)
      if (!(rule.carrierFromHz < rule.carrierBelowHz))
        throw new BenchError('EINVAL', 'must be above carrierFromHz', `rules[${i}].carrierBelowHz`);
    if (rule.metric === 'spurious') {
      if (
        rule.meanAboveW !== undefined &&
        rule.meanAtMostW !== undefined &&
        !(rule.meanAboveW < rule.meanAtMostW)
      )
        throw new BenchError('EINVAL', 'must be above meanAboveW', `rules[${i}].meanAtMostW`);
      if (
        rule.absMaxDbm !== undefined &&
        rule.needNotBelowDbm !== undefined &&
        rule.needNotBelowDbm > rule.absMaxDbm
      )
        throw new BenchError('EINVAL', 'must not be above absMaxDbm', `rules[${i}].needNotBelowDbm`);
    }
  });
  return set;
}

/** Preset ids start with this; user sets may not. */
export const PRESET_PREFIX = 'preset:';

const W_25UW_DBM = 10 * Math.log10(25e-3); // 25 µW = −16.02 dBm
const W_10UW_DBM = 10 * Math.log10(10e-3); // 10 µW = −20.00 dBm

/**
 * The limit sets we ship. Sources as given in docs/references.md § Emission limits; each is marked for how
 * much it can be relied on, and every one carries VERIFY_CAUTION.
 */
export const PRESETS: readonly LimitSet[] = [
  {
    id: 'preset:us-97.307d',
    name: 'US amateur, fundamental below 30 MHz (47 CFR 97.307(d))',
    source:
      '47 CFR 97.307(d): the mean power of any spurious emission at least 43 dB below the mean power of the ' +
      'fundamental, for a transmitter installed after 1 January 2003, fundamental below 30 MHz.',
    standing: 'regulation',
    notes:
      'Applied to the harmonics kept in the session, against the mean power measured in the same session.',
    rules: [{ metric: 'spurious', reference: 'mean', minDb: 43, carrierBelowHz: 30e6 }],
  },
  {
    id: 'preset:us-97.307e',
    name: 'US amateur, fundamental 30–225 MHz (47 CFR 97.307(e))',
    source:
      '47 CFR 97.307(e): spurious emissions at least 60 dB below the mean power of the fundamental; for a ' +
      'mean power of 25 W or less, at most 25 µW and at least 40 dB below, but need not be below 10 µW.',
    standing: 'regulation',
    notes: 'The mean power is the one measured in the session.',
    rules: [
      {
        metric: 'spurious',
        reference: 'mean',
        minDb: 60,
        meanAboveW: 25,
        carrierFromHz: 30e6,
        carrierBelowHz: 225e6,
      },
      {
        metric: 'spurious',
        reference: 'mean',
        minDb: 40,
        absMaxDbm: W_25UW_DBM,
        needNotBelowDbm: W_10UW_DBM,
        meanAtMostW: 25,
        carrierFromHz: 30e6,
        carrierBelowHz: 225e6,
      },
    ],
  },
  {
    id: 'preset:itu-sm329-a',
    name: 'ITU-R SM.329 category A, amateur below 30 MHz',
    source:
      'ITU-R Recommendation SM.329, category A, amateur services below 30 MHz: spurious attenuation ' +
      '43 + 10·log10(PEP in W) dB or 50 dBc, whichever is less stringent (from a secondary source; confirm ' +
      'against the Recommendation).',
    standing: 'secondary-source',
    notes:
      '43 + 10·log10(P) dB below P is an absolute −13 dBm; the less stringent of that and PEP − 50 dB applies.',
    rules: [
      {
        metric: 'spurious',
        reference: 'pep',
        minDb: 50,
        needNotBelowDbm: -13,
        carrierBelowHz: 30e6,
      },
    ],
  },
  {
    id: 'preset:us-80.207-maritime',
    name: 'Maritime SSB carrier, 40 dB below PEP (47 CFR 80.207) — optional',
    source:
      '47 CFR 80.207 (US maritime service, not amateur): suppressed-carrier SSB, carrier at least 40 dB below ' +
      'PEP. The only published carrier-suppression figure found; offered as an optional yardstick.',
    standing: 'other-service',
    notes: 'Not an amateur rule. Applies to SSB (USB/LSB) sessions only.',
    rules: [{ metric: 'carrier', reference: 'pep', minDb: 40, emissions: ['usb', 'lsb'] }],
  },
  {
    id: 'preset:common-practice',
    name: 'Good SSB/DSB rig (common practice)',
    source:
      'Common practice, no standard: carrier suppression of 40 dB or more and opposite sideband 40–50 dB for a ' +
      'good SSB rig. Taken here against PEP (the way SSB carrier figures are usually quoted; from memory).',
    standing: 'common-practice',
    notes: 'The opposite-sideband rule uses the lower end of the 40–50 dB range.',
    rules: [
      { metric: 'carrier', reference: 'pep', minDb: 40 },
      { metric: 'opposite', minDb: 40, emissions: ['usb', 'lsb'] },
    ],
  },
  {
    id: 'preset:common-practice-careful',
    name: 'Carefully laid-out board (common practice)',
    source:
      'Common practice, no standard: 60 dB and more of carrier suppression is reachable on a carefully laid-out ' +
      'board; opposite sideband at the upper end of 40–50 dB. Taken against PEP (from memory).',
    standing: 'common-practice',
    notes: 'A target for a good layout rather than a requirement.',
    rules: [
      { metric: 'carrier', reference: 'pep', minDb: 60 },
      { metric: 'opposite', minDb: 50, emissions: ['usb', 'lsb'] },
    ],
  },
].map((s) => validateLimitSet(s));

export const DEFAULT_SHEET_LIMIT_SETS = ['preset:common-practice', 'preset:us-97.307d'];

export function isPresetId(id: string): boolean {
  return id.startsWith(PRESET_PREFIX);
}

// ---- verdicts ---------------------------------------------------------------------------------

export type Verdict = 'pass' | 'fail' | 'indeterminate';
export type RuleStatus = Verdict | 'not-measured' | 'not-applicable';

export interface RuleOutcome {
  /** index of the rule in its set */
  rule: number;
  /** what was checked, e.g. "Carrier ≥ 40.0 dB below PEP" or "2nd harmonic ≤ −16.0 dBm" */
  label: string;
  status: RuleStatus;
  /** the measured figure as text, with its expanded uncertainty */
  measured: string;
  /** the limit as text */
  limit: string;
  /** how far inside the limit (positive) or outside (negative), dB */
  marginDb: number | null;
  /** expanded uncertainty (k = 2) of the margin, dB */
  expandedDb: number | null;
  /** why this status, in one sentence */
  reason: string;
}

export interface SetOutcome {
  setId: string;
  setName: string;
  standing: Standing;
  overall: Verdict | 'not-applicable';
  reason: string;
  outcomes: RuleOutcome[];
}

export interface VerdictContext {
  carrierHz: number;
}

function fmt(x: number, d = 1): string {
  const s = Math.abs(x).toFixed(d);
  return `${x < 0 && Number(s) !== 0 ? '−' : ''}${s}`;
}

/** dBm with a sign always shown, e.g. "+7.0 dBm", "−16.0 dBm". */
export function fmtDbm(x: number, d = 1): string {
  return `${x >= 0 ? '+' : ''}${fmt(x, d)} dBm`;
}

/** Level in W with a sensible unit, e.g. "25 µW", "1.00 W". */
export function fmtWatts(dbm: number): string {
  const w = 10 ** (dbm / 10) / 1000;
  if (w >= 1) return `${w.toPrecision(3)} W`;
  if (w >= 1e-3) return `${(w * 1e3).toPrecision(3)} mW`;
  if (w >= 1e-6) return `${(w * 1e6).toPrecision(3)} µW`;
  return `${(w * 1e9).toPrecision(3)} nW`;
}

const REF_TEXT: Record<string, string> = {
  ...REFERENCE_LABELS,
  mean: 'the mean power',
  pep: 'PEP',
};

/** One-line text of a rule, e.g. "Carrier at least 40 dB below PEP". */
export function ruleText(rule: LimitRule): string {
  switch (rule.metric) {
    case 'carrier':
      return `Carrier at least ${fmt(rule.minDb)} dB below ${rule.reference === 'pep' ? 'PEP' : REFERENCE_LABELS[rule.reference]}`;
    case 'opposite':
      return `Opposite sideband at least ${fmt(rule.minDb)} dB below the wanted one`;
    case 'imd3':
      return `IMD3 at least ${fmt(rule.minDb)} dB below ${rule.reference === 'pep' ? 'PEP' : 'one tone'}`;
    case 'balance':
      return `Sideband balance within ±${fmt(rule.maxDb)} dB`;
    case 'spurious': {
      const parts = [`Harmonics at least ${fmt(rule.minDb)} dB below ${REF_TEXT[rule.reference]}`];
      if (rule.absMaxDbm !== undefined)
        parts.push(`at most ${fmtWatts(rule.absMaxDbm)} (${fmtDbm(rule.absMaxDbm)})`);
      if (rule.needNotBelowDbm !== undefined)
        parts.push(`need not be below ${fmtWatts(rule.needNotBelowDbm)} (${fmtDbm(rule.needNotBelowDbm)})`);
      const power: string[] = [];
      if (rule.meanAboveW !== undefined) power.push(`mean power above ${rule.meanAboveW} W`);
      if (rule.meanAtMostW !== undefined) power.push(`mean power ${rule.meanAtMostW} W or less`);
      return parts.join(', ') + (power.length ? ` (${power.join(', ')})` : '');
    }
  }
}

/**
 * The spurious limit in dBm for a given fundamental power: the relative part, capped by absMaxDbm, but
 * never below needNotBelowDbm. Also says which part set it (for the uncertainty of the margin).
 */
export function spuriousLimitDbm(
  rule: Extract<LimitRule, { metric: 'spurious' }>,
  referenceDbm: number,
): { dbm: number; relative: boolean } {
  let dbm = referenceDbm - rule.minDb;
  let relative = true;
  if (rule.absMaxDbm !== undefined && rule.absMaxDbm < dbm) {
    dbm = rule.absMaxDbm;
    relative = false;
  }
  if (rule.needNotBelowDbm !== undefined && rule.needNotBelowDbm > dbm) {
    dbm = rule.needNotBelowDbm;
    relative = false;
  }
  return { dbm, relative };
}

/**
 * The verdict on a margin (how far the measurement is inside the limit, dB) with its expanded uncertainty.
 * `boundOnly`: the measurement is a bound on the good side (a floor reading): it can show a pass, never a fail.
 */
export function verdictOf(
  marginDb: number,
  expandedDb: number,
  boundOnly: boolean,
): { status: Verdict; reason: string } {
  if (marginDb - expandedDb >= 0)
    return {
      status: 'pass',
      reason:
        marginDb - expandedDb === 0
          ? 'inside the limit by exactly the uncertainty'
          : `inside the limit by ${fmt(marginDb)} dB, more than the ±${fmt(expandedDb)} dB uncertainty`,
    };
  if (boundOnly)
    return {
      status: 'indeterminate',
      reason:
        'the receiver floor straddles the limit: the true level is lower than read, so it may still pass; ' +
        'measure with less attenuation or a quieter receiver',
    };
  if (marginDb + expandedDb < 0)
    return {
      status: 'fail',
      reason: `outside the limit by ${fmt(-marginDb)} dB, more than the ±${fmt(expandedDb)} dB uncertainty`,
    };
  return {
    status: 'indeterminate',
    reason: `${marginDb >= 0 ? 'inside' : 'outside'} the limit by ${fmt(Math.abs(marginDb))} dB, within the ±${fmt(expandedDb)} dB uncertainty`,
  };
}

function inScope(rule: LimitRule, emission: Emission, ctx: VerdictContext): string | null {
  if (rule.carrierFromHz !== undefined && ctx.carrierHz < rule.carrierFromHz)
    return `the carrier (${(ctx.carrierHz / 1e6).toFixed(3)} MHz) is below ${rule.carrierFromHz / 1e6} MHz`;
  if (rule.carrierBelowHz !== undefined && ctx.carrierHz >= rule.carrierBelowHz)
    return `the carrier (${(ctx.carrierHz / 1e6).toFixed(3)} MHz) is not below ${rule.carrierBelowHz / 1e6} MHz`;
  if (rule.emissions && !rule.emissions.includes(emission))
    return `applies to ${rule.emissions.map((e) => e.toUpperCase()).join('/')} only, this session is ${emission.toUpperCase()}`;
  return null;
}

function suppressionOutcome(
  i: number,
  label: string,
  f: Figure | null,
  minDb: number,
  missing: string,
): RuleOutcome {
  if (!f)
    return {
      rule: i,
      label,
      status: 'not-measured',
      measured: '—',
      limit: `≥ ${fmt(minDb)} dB`,
      marginDb: null,
      expandedDb: null,
      reason: missing,
    };
  const U = K_EXPANDED * f.u;
  if (f.bound === 'unknown')
    return {
      rule: i,
      label,
      status: 'indeterminate',
      measured: 'not stated (reference at the floor)',
      limit: `≥ ${fmt(minDb)} dB`,
      marginDb: null,
      expandedDb: null,
      reason: `${f.notes[0] ?? 'the reference read at the receiver floor'}: is the transmitter keyed, the path right?`,
    };
  const margin = f.value - minDb;
  const v = verdictOf(margin, U, f.bound === 'atLeast');
  return {
    rule: i,
    label,
    status: v.status,
    measured: `${f.bound === 'atLeast' ? '≥ ' : ''}${fmt(f.value)} ± ${fmt(U)} dB`,
    limit: `≥ ${fmt(minDb)} dB`,
    marginDb: margin,
    expandedDb: U,
    reason: v.reason,
  };
}

const ORDINAL = ['', '', '2nd', '3rd', '4th', '5th'];

function spuriousOutcomes(
  i: number,
  rule: Extract<LimitRule, { metric: 'spurious' }>,
  f: SessionFigures,
): RuleOutcome[] {
  const label = ruleText(rule);
  const notMeasured = (reason: string): RuleOutcome[] => [
    {
      rule: i,
      label,
      status: 'not-measured',
      measured: '—',
      limit: '',
      marginDb: null,
      expandedDb: null,
      reason,
    },
  ];
  const ref: LevelFigure | null = rule.reference === 'mean' ? f.mean : f.pep;
  if (!ref || !f.mean) return notMeasured('the tones were not kept, so the fundamental power is unknown');
  const meanW = 10 ** (f.mean.dbm / 10) / 1000;
  if (rule.meanAboveW !== undefined && !(meanW > rule.meanAboveW))
    return [
      {
        rule: i,
        label,
        status: 'not-applicable',
        measured: '',
        limit: '',
        marginDb: null,
        expandedDb: null,
        reason: `the measured mean power (${fmtWatts(f.mean.dbm)}) is not above ${rule.meanAboveW} W`,
      },
    ];
  if (rule.meanAtMostW !== undefined && !(meanW <= rule.meanAtMostW))
    return [
      {
        rule: i,
        label,
        status: 'not-applicable',
        measured: '',
        limit: '',
        marginDb: null,
        expandedDb: null,
        reason: `the measured mean power (${fmtWatts(f.mean.dbm)}) is above ${rule.meanAtMostW} W`,
      },
    ];
  if (!f.harmonics.length) return notMeasured('no harmonic was kept: keep the 2nd and 3rd harmonic points');
  return f.harmonics.map((h) => {
    const lim = spuriousLimitDbm(rule, ref.dbm);
    // A relative limit moves with the fundamental's level, so its uncertainty counts too.
    const U = K_EXPANDED * (lim.relative ? Math.hypot(ref.uAbs, h.uDb) : h.uDb);
    const margin = lim.dbm - h.dbm;
    // A limit relative to the fundamental means nothing when the tones it is measured from sat at the floor.
    const refUnknown = lim.relative && h.belowMean?.bound === 'unknown';
    const v = refUnknown
      ? {
          status: 'indeterminate' as const,
          reason: `${h.belowMean!.notes[0]}: the limit relative to it is unknown; is the transmitter keyed?`,
        }
      : verdictOf(margin, U, h.atMost);
    return {
      rule: i,
      label: `${ORDINAL[h.order]} harmonic ≤ ${fmtDbm(lim.dbm)} (${lim.relative ? `${fmt(rule.minDb)} dB below ${REF_TEXT[rule.reference]} of ${fmtDbm(ref.dbm)}` : 'absolute limit'})`,
      status: v.status,
      measured: `${h.atMost ? '≤ ' : ''}${fmtDbm(h.dbm)} ± ${fmt(U)} dB`,
      limit: `≤ ${fmtDbm(lim.dbm)}`,
      marginDb: margin,
      expandedDb: U,
      reason: v.reason,
    };
  });
}

/** Every outcome of one rule (a spurious rule gives one per kept harmonic). */
export function evaluateRule(
  rule: LimitRule,
  i: number,
  f: SessionFigures,
  ctx: VerdictContext,
): RuleOutcome[] {
  const out = inScope(rule, f.emission, ctx);
  if (out)
    return [
      {
        rule: i,
        label: ruleText(rule),
        status: 'not-applicable',
        measured: '',
        limit: '',
        marginDb: null,
        expandedDb: null,
        reason: out,
      },
    ];
  switch (rule.metric) {
    case 'carrier':
      return [
        suppressionOutcome(
          i,
          ruleText(rule),
          f.carrier[rule.reference],
          rule.minDb,
          rule.reference === 'unbalanced'
            ? 'the unbalanced-carrier reference was not kept'
            : 'the carrier or the tones were not kept',
        ),
      ];
    case 'opposite':
      return [
        suppressionOutcome(i, ruleText(rule), f.opposite, rule.minDb, 'the opposite sideband was not kept'),
      ];
    case 'imd3':
      return [
        suppressionOutcome(
          i,
          ruleText(rule),
          rule.reference === 'pep' ? f.imd3.pep : f.imd3.tone,
          rule.minDb,
          f.emission === 'dsb'
            ? 'the IMD3 lines or the tones were not kept'
            : 'IMD3 needs the two-tone (DSB) points',
        ),
      ];
    case 'balance': {
      const b = f.balance;
      if (!b)
        return [
          {
            rule: i,
            label: ruleText(rule),
            status: 'not-measured',
            measured: '—',
            limit: `≤ ±${fmt(rule.maxDb)} dB`,
            marginDb: null,
            expandedDb: null,
            reason: 'both tones are needed',
          },
        ];
      const U = K_EXPANDED * b.u;
      const margin = rule.maxDb - Math.abs(b.value);
      const v = verdictOf(margin, U, false);
      return [
        {
          rule: i,
          label: ruleText(rule),
          status: v.status,
          measured: `${b.value >= 0 ? '+' : ''}${fmt(b.value)} ± ${fmt(U)} dB`,
          limit: `≤ ±${fmt(rule.maxDb)} dB`,
          marginDb: margin,
          expandedDb: U,
          reason: v.reason,
        },
      ];
    }
    case 'spurious':
      return spuriousOutcomes(i, rule, f);
  }
}

/**
 * Verdicts of a whole set: fail if any rule fails; indeterminate if any is indeterminate or could not be
 * checked for want of a reading; pass only when every applicable rule passes.
 */
export function evaluateSet(set: LimitSet, f: SessionFigures, ctx: VerdictContext): SetOutcome {
  const outcomes = set.rules.flatMap((r, i) => evaluateRule(r, i, f, ctx));
  const applicable = outcomes.filter((o) => o.status !== 'not-applicable');
  let overall: SetOutcome['overall'];
  let reason: string;
  const count = (s: RuleStatus) => applicable.filter((o) => o.status === s).length;
  if (!applicable.length) {
    overall = 'not-applicable';
    reason = 'no rule of this set applies to this session';
  } else if (count('fail')) {
    overall = 'fail';
    reason = `${count('fail')} of ${applicable.length} checks fail`;
  } else if (count('indeterminate') || count('not-measured')) {
    overall = 'indeterminate';
    const parts = [];
    if (count('indeterminate'))
      parts.push(`${count('indeterminate')} within the uncertainty or at the floor`);
    if (count('not-measured')) parts.push(`${count('not-measured')} not measured`);
    reason = `${parts.join(', ')}; no check fails`;
  } else {
    overall = 'pass';
    reason = `all ${applicable.length} applicable checks pass`;
  }
  // A spurious-emission rule speaks of any spurious emission, but only the kept harmonics were read:
  // the verdict says so wherever it is shown, so a pass is never read as a full spurious survey.
  const spurious = applicable.some((o) => set.rules[o.rule]?.metric === 'spurious');
  if (spurious && f.harmonics.length)
    reason +=
      `; spurious emissions: only the ${f.harmonics.map((h) => ORDINAL[h.order]).join(', ')} harmonic ` +
      `${f.harmonics.length === 1 ? 'was' : 'were'} measured, other spurious emissions were not`;
  return { setId: set.id, setName: set.name, standing: set.standing, overall, reason, outcomes };
}

export const VERDICT_LABELS: Record<RuleStatus | 'not-applicable', string> = {
  pass: 'PASS',
  fail: 'FAIL',
  indeterminate: 'INDETERMINATE',
  'not-measured': 'NOT MEASURED',
  'not-applicable': 'N/A',
};
