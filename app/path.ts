// Runs anywhere (app/ is runtime-free). The signal path from the transmitter under test to the receiver:
// pads, cables, a sampler, corrections and mismatch, each with an uncertainty; levels referred either way.
import { z } from 'zod';
import { RF_CAUTION } from './caution';
import { BenchError, check } from './errors';
import { benchErrorFromZod } from './zodissue';

// Default tolerances when an element gives none. All are limits of a rectangular distribution.
/** Fixed coaxial pads are commonly specified to about +/-0.3 dB at HF (common practice, from memory). */
export const DEFAULT_PAD_TOL_DB = 0.3;
/** A cable loss taken from a data sheet at the frequency in use (common practice, from memory). */
export const DEFAULT_CABLE_TOL_DB = 0.1;
/** Coupling factor of a sampler or directional coupler (common practice, from memory). */
export const DEFAULT_COUPLER_TOL_DB = 0.5;
/** An offset is the user's own correction; its uncertainty belongs to whoever measured it. */
export const DEFAULT_OFFSET_TOL_DB = 0;
/** Resistors read with a bench multimeter, about 1 % (common practice). */
export const DEFAULT_RESISTOR_TOL_PCT = 1;

const num = (what: string) => z.number({ error: `must be a finite number (${what})` });
const tolDb = num('tolerance in dB').min(0, 'must be >= 0 dB').max(20, 'must be <= 20 dB').optional();
const label = z.string().max(80, 'must be at most 80 characters').optional();
const ohms = num('ohms').gt(0, 'must be > 0 ohm').lte(1e7, 'must be <= 10 Mohm');
const vswr = num('VSWR').min(1, 'must be >= 1 (1 is a perfect match)').lte(100, 'must be <= 100');

/** A fixed attenuator of nominal `db` (0 < db <= 80). */
export const PadSchema = z.strictObject({
  kind: z.literal('pad'),
  db: num('dB').gt(0, 'must be > 0 dB').lte(80, 'must be <= 80 dB'),
  tolDb,
  label,
});

/**
 * An attenuator built from measured resistors, placed between 50 ohm terminations. `shunt2Ohm` (pi) or
 * `series2Ohm` (T) give the second arm when it differs from the first. `tolPct` is the resistance tolerance.
 */
export const PadMeasuredSchema = z.strictObject({
  kind: z.literal('pad-measured'),
  topology: z.enum(['pi', 't'], { error: 'must be "pi" or "t"' }),
  shuntOhm: ohms,
  seriesOhm: ohms,
  shunt2Ohm: ohms.optional(),
  series2Ohm: ohms.optional(),
  tolPct: num('percent').min(0, 'must be >= 0 %').max(50, 'must be <= 50 %').optional(),
  label,
});

/** A cable's loss at the frequency in use (0..30 dB). */
export const CableSchema = z.strictObject({
  kind: z.literal('cable'),
  lossDb: num('dB').min(0, 'must be >= 0 dB').lte(30, 'must be <= 30 dB'),
  tolDb,
  label,
});

/** A directional coupler or sampler: the receiver sees the coupled port, `couplingDb` below the line. */
export const CouplerSchema = z.strictObject({
  kind: z.literal('coupler'),
  couplingDb: num('dB').gt(0, 'must be > 0 dB').lte(80, 'must be <= 80 dB'),
  tolDb,
  label,
});

/** A correction in dB with the sign of a loss: +1.5 means the DUT is 1.5 dB above what the chain gives. */
export const OffsetSchema = z.strictObject({
  kind: z.literal('offset'),
  db: num('dB').min(-40, 'must be >= -40 dB').max(40, 'must be <= 40 dB'),
  tolDb,
  label,
});

/** Mismatch between the transmitter's output (source) and the path as seen by it, or the receiver input. */
export const MismatchSchema = z.strictObject({
  kind: z.literal('mismatch'),
  sourceVswr: vswr,
  loadVswr: vswr,
  label,
});

export const PathElementSchema = z.discriminatedUnion(
  'kind',
  [PadSchema, PadMeasuredSchema, CableSchema, CouplerSchema, OffsetSchema, MismatchSchema],
  {
    error: (iss) =>
      iss.code === 'invalid_union'
        ? 'kind must be one of pad, pad-measured, cable, coupler, offset, mismatch'
        : undefined,
  },
);

export type PathElement = z.infer<typeof PathElementSchema>;
export type PathElementKind = PathElement['kind'];

export const PathSchema = z.array(PathElementSchema, { error: 'must be a list of path elements' });

// ---------------------------------------------------------------------------------------------
// Attenuator pads

function padDbArg(db: number): number {
  check(typeof db === 'number' && Number.isFinite(db), 'db', `must be a finite number, got ${String(db)}`);
  check(db > 0 && db <= 80, 'db', `must be > 0 and <= 80 dB, got ${db}`);
  return db;
}

function z0Arg(z0: number): number {
  check(
    typeof z0 === 'number' && Number.isFinite(z0) && z0 > 0,
    'z0',
    `must be a positive impedance in ohms, got ${z0}`,
  );
  return z0;
}

/** Resistors of a matched symmetric pi pad of `db` (0 < db <= 80) in a z0-ohm system. */
export function piPad(db: number, z0 = 50): { shuntOhm: number; seriesOhm: number } {
  const k = 10 ** (padDbArg(db) / 20);
  z0Arg(z0);
  return { shuntOhm: (z0 * (k + 1)) / (k - 1), seriesOhm: (z0 * (k * k - 1)) / (2 * k) };
}

/** Resistors of a matched symmetric T pad of `db` (0 < db <= 80) in a z0-ohm system. */
export function tPad(db: number, z0 = 50): { seriesOhm: number; shuntOhm: number } {
  const k = 10 ** (padDbArg(db) / 20);
  z0Arg(z0);
  return { seriesOhm: (z0 * (k - 1)) / (k + 1), shuntOhm: (2 * z0 * k) / (k * k - 1) };
}

type Abcd = [a: number, b: number, c: number, d: number];

function cascade(x: Abcd, y: Abcd): Abcd {
  return [
    x[0] * y[0] + x[1] * y[2],
    x[0] * y[1] + x[1] * y[3],
    x[2] * y[0] + x[3] * y[2],
    x[2] * y[1] + x[3] * y[3],
  ];
}
const seriesR = (r: number): Abcd => [1, r, 0, 1];
const shuntR = (r: number): Abcd => [1, 0, 1 / r, 1];

/**
 * Insertion loss in dB of a resistive pad between z0 source and z0 load, from its resistor values, by the
 * ABCD network: IL = 20*log10|(A + B/z0 + C*z0 + D) / 2|. Exact for any values, so a pad built from
 * off-nominal resistors gives its true loss (which is what a receiver behind it sees).
 * @param secondOhm the other shunt of a pi, or the other series arm of a T (default: same as the first)
 */
export function padAttenuationDb(
  topology: 'pi' | 't',
  shuntOhm: number,
  seriesOhm: number,
  z0 = 50,
  secondOhm?: number,
): number {
  check(topology === 'pi' || topology === 't', 'topology', `must be "pi" or "t", got ${String(topology)}`);
  const pos = (v: number, f: string) =>
    check(typeof v === 'number' && Number.isFinite(v) && v > 0, f, `must be a resistance > 0 ohm, got ${v}`);
  pos(shuntOhm, 'shuntOhm');
  pos(seriesOhm, 'seriesOhm');
  if (secondOhm !== undefined) pos(secondOhm, topology === 'pi' ? 'shunt2Ohm' : 'series2Ohm');
  z0Arg(z0);
  const net =
    topology === 'pi'
      ? cascade(cascade(shuntR(shuntOhm), seriesR(seriesOhm)), shuntR(secondOhm ?? shuntOhm))
      : cascade(cascade(seriesR(seriesOhm), shuntR(shuntOhm)), seriesR(secondOhm ?? seriesOhm));
  const [a, b, c, d] = net;
  return 20 * Math.log10((a + b / z0 + c * z0 + d) / 2);
}

// ---------------------------------------------------------------------------------------------
// Mismatch (Pozar, Microwave Engineering, ch. 2)

function vswrArg(v: number, field: string): number {
  check(typeof v === 'number' && Number.isFinite(v) && v >= 1, field, `must be a VSWR >= 1, got ${v}`);
  return v;
}

/** |Gamma| = (VSWR - 1) / (VSWR + 1). */
export function gammaFromVswr(vswr: number): number {
  vswrArg(vswr, 'vswr');
  return (vswr - 1) / (vswr + 1);
}

/** Return loss in dB, -20*log10|Gamma| (Infinity for a perfect match). */
export function returnLossDb(vswr: number): number {
  return -20 * Math.log10(gammaFromVswr(vswr));
}

/** Mismatch loss in dB, -10*log10(1 - |Gamma|^2). */
export function mismatchLossDb(vswr: number): number {
  const g = gammaFromVswr(vswr);
  // Written as 10*log10(1/x) so a perfect match gives +0, not -0.
  return 10 * Math.log10(1 / (1 - g * g));
}

/**
 * Limits of the mismatch error when the phases are unknown: 20*log10(1 +/- |Gs||GL|) dB
 * (common practice in RF metrology). plusDb >= 0, minusDb <= 0.
 */
export function mismatchLimitsDb(sourceVswr: number, loadVswr: number): { plusDb: number; minusDb: number } {
  vswrArg(sourceVswr, 'sourceVswr');
  vswrArg(loadVswr, 'loadVswr');
  const gg = gammaFromVswr(sourceVswr) * gammaFromVswr(loadVswr);
  return { plusDb: 20 * Math.log10(1 + gg), minusDb: 20 * Math.log10(1 - gg) };
}

// ---------------------------------------------------------------------------------------------
// Analysis

export interface PathTerm {
  label: string;
  /** dB, positive = attenuation between DUT and receiver */
  lossDb: number;
  /** standard uncertainty, dB */
  uDb: number;
  /** worst-case limits of this term's error, dB (loss may be up to +plus or down to -minus) */
  limitDb: number;
}

export interface PathAnalysis {
  /** total dB from DUT to receiver, positive = attenuation */
  lossDb: number;
  /** combined standard uncertainty, root-sum-square of the terms, dB */
  uDb: number;
  terms: PathTerm[];
  /** least loss the tolerances allow (arithmetic worst case), for receiver-safety checks */
  minLossDb: number;
  /** most loss the tolerances allow (arithmetic worst case) */
  maxLossDb: number;
}

const SQRT3 = Math.sqrt(3);
const SQRT2 = Math.SQRT2;

function fmt(x: number, digits = 2): string {
  return String(Number(x.toFixed(digits)));
}

function rss(values: readonly number[]): number {
  return Math.sqrt(values.reduce((s, v) => s + v * v, 0));
}

/** Loss and uncertainty of a measured pad; each physical resistor's tolerance propagated by sensitivity. */
function measuredPadTerm(e: Extract<PathElement, { kind: 'pad-measured' }>): {
  lossDb: number;
  uDb: number;
  limitDb: number;
} {
  const second = e.topology === 'pi' ? e.shunt2Ohm : e.series2Ohm;
  // Three physical resistors: pi = shunt, series, shunt2; T = series, shunt, series2.
  const r = [e.shuntOhm, e.seriesOhm, second ?? (e.topology === 'pi' ? e.shuntOhm : e.seriesOhm)];
  const loss = (v: number[]) => padAttenuationDb(e.topology, v[0], v[1], 50, v[2]);
  const lossDb = loss(r);
  const tol = (e.tolPct ?? DEFAULT_RESISTOR_TOL_PCT) / 100;
  // Each resistor within +/-tol (rectangular limits): u(R) = R*tol/sqrt(3). Central difference for dIL/dR.
  let u2 = 0;
  let limit = 0;
  for (let i = 0; i < 3; i++) {
    const h = r[i] * 1e-6;
    const up = r.slice();
    const dn = r.slice();
    up[i] += h;
    dn[i] -= h;
    const sens = (loss(up) - loss(dn)) / (2 * h);
    u2 += (sens * r[i] * tol) ** 2 / 3;
    limit += Math.abs(sens * r[i] * tol);
  }
  return { lossDb, uDb: Math.sqrt(u2), limitDb: limit };
}

/** Short text for one element, e.g. "20 dB pad", "0.4 dB cable", "mismatch 1.5:1/1.2:1". */
export function formatElement(e: PathElement): string {
  let text: string;
  switch (e.kind) {
    case 'pad':
      text = `${fmt(e.db)} dB pad`;
      break;
    case 'pad-measured': {
      const second = e.topology === 'pi' ? e.shunt2Ohm : e.series2Ohm;
      const loss = padAttenuationDb(e.topology, e.shuntOhm, e.seriesOhm, 50, second);
      const rs =
        e.topology === 'pi'
          ? [e.shuntOhm, e.seriesOhm, ...(second === undefined ? [] : [second])]
          : [e.seriesOhm, e.shuntOhm, ...(second === undefined ? [] : [second])];
      text = `${fmt(loss)} dB ${e.topology === 'pi' ? 'pi' : 'T'} pad (measured ${rs.map((v) => fmt(v, 1)).join('/')} Ω)`;
      break;
    }
    case 'cable':
      text = `${fmt(e.lossDb)} dB cable`;
      break;
    case 'coupler':
      text = `${fmt(e.couplingDb)} dB coupler`;
      break;
    case 'offset':
      text = `${fmt(e.db)} dB offset`;
      break;
    case 'mismatch':
      text = `mismatch ${fmt(e.sourceVswr)}:1/${fmt(e.loadVswr)}:1`;
      break;
  }
  return e.label ? `${text} "${e.label}"` : text;
}

function elementTerm(e: PathElement): Omit<PathTerm, 'label'> {
  // Tolerances are limits of a rectangular distribution (u = tol/sqrt(3)): a maker's "+/-0.3 dB" promises
  // only that the value lies within the band, nothing about where in it (GUM 4.3.7).
  switch (e.kind) {
    case 'pad': {
      const tol = e.tolDb ?? DEFAULT_PAD_TOL_DB;
      return { lossDb: e.db, uDb: tol / SQRT3, limitDb: tol };
    }
    case 'pad-measured':
      return measuredPadTerm(e);
    case 'cable': {
      const tol = e.tolDb ?? DEFAULT_CABLE_TOL_DB;
      return { lossDb: e.lossDb, uDb: tol / SQRT3, limitDb: tol };
    }
    case 'coupler': {
      const tol = e.tolDb ?? DEFAULT_COUPLER_TOL_DB;
      return { lossDb: e.couplingDb, uDb: tol / SQRT3, limitDb: tol };
    }
    case 'offset': {
      const tol = e.tolDb ?? DEFAULT_OFFSET_TOL_DB;
      return { lossDb: e.db, uDb: tol / SQRT3, limitDb: tol };
    }
    case 'mismatch': {
      // The phases are unknown, so no nominal loss, only a U-shaped spread (u = half-width / sqrt(2)).
      // The half-width is the mean of the two (nearly equal) limits.
      const { plusDb, minusDb } = mismatchLimitsDb(e.sourceVswr, e.loadVswr);
      const half = (plusDb - minusDb) / 2;
      return { lossDb: 0, uDb: half / SQRT2, limitDb: Math.max(plusDb, -minusDb) };
    }
  }
}

/** Check a path from outside (a file, a request, the database): zod errors become EINVAL at "path[i].key". */
export function validatePath(input: unknown): PathElement[] {
  const r = PathSchema.safeParse(input);
  if (!r.success) throw benchErrorFromZod(r.error, 'path');
  r.data.forEach((e, i) => checkElementExtras(e, `path[${i}]`));
  return r.data;
}

// Rules zod's shape cannot say: which second arm goes with which topology, and the 80 dB ceiling on what
// the measured resistors actually make. Returns the offending key and why, or null.
function elementProblem(e: PathElement): { key: string; message: string } | null {
  if (e.kind !== 'pad-measured') return null;
  if (e.topology === 'pi' && e.series2Ohm !== undefined) {
    return {
      key: 'series2Ohm',
      message: 'a pi pad has one series resistor; give its second shunt as shunt2Ohm',
    };
  }
  if (e.topology === 't' && e.shunt2Ohm !== undefined) {
    return {
      key: 'shunt2Ohm',
      message: 'a T pad has one shunt resistor; give its second series arm as series2Ohm',
    };
  }
  const loss = padAttenuationDb(
    e.topology,
    e.shuntOhm,
    e.seriesOhm,
    50,
    e.topology === 'pi' ? e.shunt2Ohm : e.series2Ohm,
  );
  if (loss > 80)
    return {
      key: 'seriesOhm',
      message: `these resistors make a ${fmt(loss)} dB pad; at most 80 dB is accepted`,
    };
  return null;
}

function checkElementExtras(e: PathElement, field: string): void {
  const problem = elementProblem(e);
  if (problem) throw new BenchError('EINVAL', problem.message, `${field}.${problem.key}`);
}

/** Total loss, its combined standard uncertainty (RSS of independent terms) and worst-case limits. */
export function analysePath(elements: readonly PathElement[]): PathAnalysis {
  const path = validatePath(elements);
  const terms: PathTerm[] = path.map((e) => ({ label: formatElement(e), ...elementTerm(e) }));
  const lossDb = terms.reduce((s, t) => s + t.lossDb, 0);
  const limit = terms.reduce((s, t) => s + t.limitDb, 0);
  return {
    lossDb,
    uDb: rss(terms.map((t) => t.uDb)),
    terms,
    minLossDb: lossDb - limit,
    maxLossDb: lossDb + limit,
  };
}

/** A receiver-input level referred to the DUT output: dbm = dbmRx + loss, u = RSS(uRx, path u). */
export function rxToDut(
  dbmRx: number,
  uRxDb: number,
  elements: readonly PathElement[],
): { dbm: number; uDb: number } {
  check(
    typeof dbmRx === 'number' && !Number.isNaN(dbmRx) && dbmRx !== Infinity,
    'dbm',
    `must be a level in dBm, got ${dbmRx}`,
  );
  check(
    typeof uRxDb === 'number' && Number.isFinite(uRxDb) && uRxDb >= 0,
    'uDb',
    `must be an uncertainty >= 0 dB, got ${uRxDb}`,
  );
  const a = analysePath(elements);
  return { dbm: dbmRx + a.lossDb, uDb: rss([uRxDb, a.uDb]) };
}

/** The level a DUT output of dbmDut puts at the receiver input (nominal path loss). */
export function dutToRx(dbmDut: number, elements: readonly PathElement[]): number {
  check(
    typeof dbmDut === 'number' && !Number.isNaN(dbmDut) && dbmDut !== Infinity,
    'dbm',
    `must be a level in dBm, got ${dbmDut}`,
  );
  return dbmDut - analysePath(elements).lossDb;
}

/**
 * Refuse a set-up that would put more than the receiver's rated maximum into its input. Uses the least loss
 * the tolerances allow, so a pad at the bottom of its tolerance cannot tip it over.
 * @returns nominal and worst-case receiver input levels, dBm
 * @throws BenchError EUNSAFE with the extra attenuation needed (callers that show it add the one caution text,
 *   app/caution.ts)
 */
export function assertReceiverSafe(
  dbmDut: number,
  elements: readonly PathElement[],
  rxMaxDbm: number,
): { rxDbm: number; worstRxDbm: number } {
  check(Number.isFinite(dbmDut), 'dbm', `must be a finite level in dBm, got ${dbmDut}`);
  check(Number.isFinite(rxMaxDbm), 'rxMaxDbm', `must be a finite level in dBm, got ${rxMaxDbm}`);
  const a = analysePath(elements);
  const rxDbm = dbmDut - a.lossDb;
  const worstRxDbm = dbmDut - a.minLossDb;
  if (worstRxDbm > rxMaxDbm) {
    const need = worstRxDbm - rxMaxDbm;
    throw new BenchError(
      'EUNSAFE',
      `${fmt(dbmDut)} dBm at the transmitter through ${fmt(a.lossDb)} dB of path (${fmt(a.minLossDb)} dB at the ` +
        `low end of its tolerances) puts up to ${fmt(worstRxDbm)} dBm into the receiver, above its rated maximum of ` +
        `${fmt(rxMaxDbm)} dBm. Add at least ${fmt(Math.ceil(need * 10 - 1e-9) / 10, 1)} dB more attenuation before keying ` +
        'the transmitter.',
      'path',
    );
  }
  return { rxDbm, worstRxDbm };
}

// ---------------------------------------------------------------------------------------------
// Text form for the command line

const SPEC_HELP =
  'pad:dB[/tol], cable:dB[/tol], coupler:dB[/tol], offset:dB[/tol], pi:shunt/series[/shunt2ohm][/tol%], ' +
  't:series/shunt[/series2ohm][/tol%], vswr:source/load';

/** A number with an optional unit suffix (dB, ohm, %, or ":1" after a VSWR). */
function specNumber(text: string, what: string, suffix: RegExp): number {
  const t = text
    .trim()
    .replace(/\u2212/g, '-')
    .replace(suffix, '')
    .trim();
  const v = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/.test(t) ? Number(t) : NaN;
  if (!Number.isFinite(v)) throw new Error(`${what} "${text.trim()}" is not a number`);
  return v;
}

/**
 * Parse a path typed on the command line, e.g. "pad:20,cable:0.4,coupler:30,offset:-1.5,pi:61.1/247.5,
 * t:40.9/10.1,vswr:1.5/1.2". Items are comma-separated and run from the transmitter to the receiver.
 * Empty text is an empty path. Errors name the item: `--path item 2 ("cabel:0.4")`.
 */
export function parsePathSpec(spec: string, option = '--path'): PathElement[] {
  check(typeof spec === 'string', option, `must be text like "pad:20,cable:0.4"`);
  if (spec.trim() === '') return [];
  return spec.split(',').map((raw, i) => {
    const item = raw.trim();
    const field = `${option} item ${i + 1} ("${item}")`;
    if (item === '')
      throw new BenchError('EINVAL', `is empty (two commas in a row?); expected one of ${SPEC_HELP}`, field);
    const colon = item.indexOf(':');
    if (colon < 0) throw new BenchError('EINVAL', `has no "kind:value"; expected one of ${SPEC_HELP}`, field);
    const kind = item.slice(0, colon).trim().toLowerCase();
    const args = item.slice(colon + 1).split('/');
    const want = (min: number, max: number, form: string) => {
      if (args.length < min || args.length > max) {
        throw new BenchError(
          'EINVAL',
          `"${kind}" takes ${form}, got ${args.length} value${args.length === 1 ? '' : 's'}`,
          field,
        );
      }
    };
    const dB = /\s*db$/i;
    const ohm = /\s*(?:ohms?|\u03a9|\u2126|r)$/i;
    let element: Record<string, unknown>;
    try {
      switch (kind) {
        case 'pad':
        case 'cable':
        case 'coupler':
        case 'offset': {
          want(1, 2, `${kind}:dB or ${kind}:dB/tol`);
          const value = specNumber(args[0], 'the dB value', dB);
          const tol = args[1] === undefined ? undefined : specNumber(args[1], 'the tolerance', dB);
          const key = kind === 'cable' ? 'lossDb' : kind === 'coupler' ? 'couplingDb' : 'db';
          element = { kind, [key]: value, ...(tol === undefined ? {} : { tolDb: tol }) };
          break;
        }
        case 'pi':
        case 't': {
          const names =
            kind === 'pi'
              ? { first: 'the shunt resistance', mid: 'the series resistance', second: 'second shunt' }
              : { first: 'the series resistance', mid: 'the shunt resistance', second: 'second series arm' };
          want(
            2,
            4,
            kind === 'pi'
              ? 'pi:shunt/series, or pi:shunt/series/shunt2 for unequal shunts, each optionally with /tol%'
              : 't:series/shunt, or t:series/shunt/series2 for unequal arms, each optionally with /tol%',
          );
          const a = specNumber(args[0], names.first, ohm);
          const b = specNumber(args[1], names.mid, ohm);
          // A third value is the other outer resistor or a tolerance; a bare number could be either, and
          // the two readings differ by dB, so it must say which (49.9ohm, or 1%). With four values the
          // third is the resistor and the fourth the tolerance.
          let second: number | undefined;
          let tol: number | undefined;
          const third = args[2]?.trim();
          if (args.length === 4) {
            second = specNumber(args[2], `the ${names.second}`, ohm);
            tol = specNumber(args[3], 'the tolerance', /\s*%$/);
          } else if (third !== undefined) {
            if (/%$/.test(third)) tol = specNumber(third, 'the tolerance', /\s*%$/);
            else if (ohm.test(third)) second = specNumber(third, `the ${names.second}`, ohm);
            else
              throw new BenchError(
                'EINVAL',
                `the third value "${third}" could be a tolerance or the ${names.second}: write "${third}%" for a tolerance or "${third}ohm" for the ${names.second}`,
                field,
              );
          }
          element = {
            kind: 'pad-measured',
            topology: kind,
            shuntOhm: kind === 'pi' ? a : b,
            seriesOhm: kind === 'pi' ? b : a,
            ...(second === undefined ? {} : kind === 'pi' ? { shunt2Ohm: second } : { series2Ohm: second }),
            ...(tol === undefined ? {} : { tolPct: tol }),
          };
          break;
        }
        case 'vswr':
        case 'mismatch': {
          want(2, 2, 'vswr:source/load');
          element = {
            kind: 'mismatch',
            sourceVswr: specNumber(args[0], 'the source VSWR', /\s*:\s*1$/),
            loadVswr: specNumber(args[1], 'the load VSWR', /\s*:\s*1$/),
          };
          break;
        }
        default:
          throw new BenchError('EINVAL', `unknown element "${kind}"; expected one of ${SPEC_HELP}`, field);
      }
    } catch (e) {
      if (e instanceof BenchError) throw e;
      throw new BenchError('EINVAL', `${(e as Error).message}; expected ${SPEC_HELP}`, field);
    }
    const r = PathElementSchema.safeParse(element);
    if (!r.success) {
      const issue = r.error.issues[0];
      throw new BenchError('EINVAL', `${issue.path.join('.')} ${issue.message}`, field);
    }
    const problem = elementProblem(r.data);
    if (problem) throw new BenchError('EINVAL', problem.message, field);
    return r.data;
  });
}

/** Short text for a whole path, e.g. "20 dB pad + 0.4 dB cable"; an empty path is "direct (no elements)". */
export function formatPath(elements: readonly PathElement[]): string {
  return elements.length === 0 ? 'direct (no elements)' : elements.map(formatElement).join(' + ');
}

/**
 * assertReceiverSafe for a session's declared set-up, as every door refuses it: "refused: …" with the one RF
 * caution (app/caution.ts), at `field`.
 */
export function refuseUnsafeSetup(
  dbmDut: number,
  elements: readonly PathElement[],
  rxMaxDbm: number,
  field: string,
): { rxDbm: number; worstRxDbm: number } {
  try {
    return assertReceiverSafe(dbmDut, elements, rxMaxDbm);
  } catch (e) {
    if (e instanceof BenchError && e.code === 'EUNSAFE')
      throw new BenchError('EUNSAFE', `refused: ${e.message} ${RF_CAUTION}`, field);
    throw e;
  }
}
