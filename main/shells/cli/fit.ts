// Runs in Node. `nullbench fit FILE.csv`: fit the carrier null to trimmer readings from a CSV file and
// print the best setting, its confidence interval and the predicted depth.
import { readFile } from 'node:fs/promises';
import { BenchError } from '../../../app/errors';
import { fitNull1D, fitNull2D, type NullFit1D, type NullFit2D } from '../../../app/nullfit';
import { roundingStep, roundTo, fixed } from '../../../app/nullfit/format';
import { numberOption, parseOptions, reportError, type Command, machineJson } from './command';

/** The two layouts a file may have; columns may come in any order, `censored` is optional. */
const LAYOUTS = {
  '1d': ['position', 'dbm'],
  '2d': ['pos_a', 'pos_b', 'dbm'],
} as const;

interface Table {
  kind: '1d' | '2d';
  rows: { values: Record<string, number>; censored: boolean; line: number }[];
}

const TRUE = new Set(['1', 'true', 'yes', 'y']);
const FALSE = new Set(['', '0', 'false', 'no', 'n']);

/** Parse the CSV text; every error names the line (1-based, as an editor shows it) and the column. */
export function parseFitCsv(text: string, file: string): Table {
  const lines = text.replace(/^\uFEFF/, '').split(/\r?\n/);
  const cells = (s: string): string[] =>
    s.split(',').map((c) =>
      c
        .trim()
        .replace(/^"(.*)"$/, '$1')
        .trim(),
    );
  let header: string[] | null = null;
  let kind: '1d' | '2d' = '1d';
  const rows: Table['rows'] = [];
  lines.forEach((raw, i) => {
    const line = i + 1;
    if (raw.trim() === '' || raw.trimStart().startsWith('#')) return;
    const c = cells(raw);
    if (!header) {
      const names = c.map((x) => x.toLowerCase());
      const want = names.filter((x) => x !== 'censored').sort();
      const match = (Object.keys(LAYOUTS) as ('1d' | '2d')[]).find(
        (k) => [...LAYOUTS[k]].sort().join() === want.join(),
      );
      if (!match || new Set(names).size !== names.length) {
        throw new BenchError(
          'EINVAL',
          `unknown header "${c.join(',')}": expected position,dbm (one trimmer) or pos_a,pos_b,dbm (two trimmers), each optionally with a censored column`,
          `${file} line ${line}`,
        );
      }
      header = names;
      kind = match;
      return;
    }
    if (c.length !== header.length) {
      throw new BenchError(
        'EINVAL',
        `expected ${header.length} cells (${header.join(',')}), got ${c.length}`,
        `${file} line ${line}`,
      );
    }
    const values: Record<string, number> = {};
    let censored = false;
    c.forEach((cell, j) => {
      const name = header![j];
      const where = `${file} line ${line}, column ${j + 1} (${name})`;
      if (name === 'censored') {
        const v = cell.toLowerCase();
        if (TRUE.has(v)) censored = true;
        else if (!FALSE.has(v))
          throw new BenchError('EINVAL', `"${cell}" is not a yes/no value (use 1 or 0)`, where);
        return;
      }
      const n = Number(cell);
      if (cell === '' || !Number.isFinite(n))
        throw new BenchError('EINVAL', `"${cell}" is not a number`, where);
      values[name] = n;
    });
    rows.push({ values, censored, line });
  });
  if (!header) throw new BenchError('EINVAL', 'the file is empty: expected a header line and readings', file);
  if (rows.length === 0) throw new BenchError('EINVAL', 'the file has a header but no readings', file);
  return { kind, rows };
}

/** Numbers in JSON: rounded to a sensible precision, open bounds as null. */
function num(x: number, digits = 6): number | null {
  return Number.isFinite(x) ? Number(x.toPrecision(digits)) : null;
}

function lines(t: Table, idx: number[]): number[] {
  return idx.map((i) => t.rows[i].line);
}

function json1d(f: NullFit1D, t: Table, measurementFloor: number | null): Record<string, unknown> {
  return {
    kind: '1d',
    best_position: num(f.bestPosition, 8),
    best_dbm: num(f.bestDbm, 5),
    best_dbm_is_upper_bound: f.cIsUpperBound,
    best_reading_dbm: num(f.bestReadingDbm, 5),
    ci_low: num(f.ci[0], 8),
    ci_high: num(f.ci[1], 8),
    level: f.level,
    a: num(f.a),
    floor_dbm: num(f.cDbm, 5),
    measurement_floor_dbm: measurementFloor,
    n: f.n,
    n_censored: f.nCensored,
    residual_db: num(f.residualDb, 3),
    sigma_db: num(f.sigmaDb, 3),
    outlier_lines: lines(t, f.outliers),
  };
}

function json2d(f: NullFit2D, t: Table, measurementFloor: number | null): Record<string, unknown> {
  return {
    kind: '2d',
    best_a: num(f.bestA, 8),
    best_b: num(f.bestB, 8),
    best_dbm: num(f.bestDbm, 5),
    best_dbm_is_upper_bound: f.cIsUpperBound,
    best_reading_dbm: num(f.bestReadingDbm, 5),
    ci_a_low: num(f.ciA[0], 8),
    ci_a_high: num(f.ciA[1], 8),
    ci_b_low: num(f.ciB[0], 8),
    ci_b_high: num(f.ciB[1], 8),
    level: f.level,
    collinear: f.collinear,
    angle_deg: num(f.angleDeg, 4),
    floor_dbm: num(f.cDbm, 5),
    measurement_floor_dbm: measurementFloor,
    n: f.n,
    n_censored: f.nCensored,
    residual_db: num(f.residualDb, 3),
    sigma_db: num(f.sigmaDb, 3),
    outlier_lines: lines(t, f.outliers),
  };
}

/** A position with the digits its interval supports, and the interval in words. */
function position(x: number, ci: [number, number]): string {
  const step = roundingStep((ci[1] - ci[0]) / 2, x);
  const interval = Number.isFinite(ci[0])
    ? `${fixed(ci[0], step)} to ${fixed(ci[1], step)}`
    : 'not determined by these readings';
  return `${fixed(roundTo(x, step), step)}   (95 % interval: ${interval})`;
}

function depth(f: NullFit1D | NullFit2D): string {
  const bound = f.cIsUpperBound ? 'at most ' : '';
  const reading =
    f.floorDbm === null
      ? ''
      : `; the receiver would read ${bound}${fixed(f.bestReadingDbm, 0.1)} dBm with its floor`;
  return `${bound}${fixed(f.bestDbm, 0.1)} dBm of carrier the trimmer${f.kind === '2d' ? 's' : ''} cannot cancel${reading}`;
}

function footer(f: NullFit1D | NullFit2D, t: Table): string {
  const out = lines(t, f.outliers);
  return (
    `residual      ${fixed(f.residualDb, 0.01)} dB rms over the readings above the floor` +
    (out.length ? `; treated as outliers: line${out.length > 1 ? 's' : ''} ${out.join(', ')}` : '') +
    '\n'
  );
}

function text1d(f: NullFit1D, t: Table): string {
  const floor =
    f.floorDbm === null
      ? ''
      : `, ${f.nCensored} at or near the measurement floor ${fixed(f.floorDbm, 0.1)} dBm`;
  return (
    `one trimmer, ${f.n} readings${floor}\n` +
    `best position ${position(f.bestPosition, f.ci)}\n` +
    `depth         ${depth(f)}\n` +
    `slope         ${f.a.toPrecision(3)} √mW per position unit\n` +
    footer(f, t)
  );
}

function text2d(f: NullFit2D, t: Table): string {
  const floor =
    f.floorDbm === null
      ? ''
      : `, ${f.nCensored} at or near the measurement floor ${fixed(f.floorDbm, 0.1)} dBm`;
  const pair = f.collinear
    ? 'the two trimmers move the carrier along nearly the same direction: the null is a valley; shown is its point nearest the lowest reading'
    : `the trimmers' directions are ${fixed(f.angleDeg, 1)}° apart`;
  return (
    `two trimmers, ${f.n} readings${floor}\n` +
    `best A        ${position(f.bestA, f.ciA)}\n` +
    `best B        ${position(f.bestB, f.ciB)}\n` +
    `depth         ${depth(f)}\n` +
    `directions    ${pair}\n` +
    footer(f, t)
  );
}

/** Levels in dBm are mostly negative: let "--floor-dbm -95" mean "--floor-dbm=-95" as a user expects. */
function joinNegativeValues(argv: string[], options: string[]): string[] {
  const out: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    if (options.includes(argv[i]) && /^-\d|^-\.\d/.test(argv[i + 1] ?? '')) {
      out.push(`${argv[i]}=${argv[i + 1]}`);
      i++;
    } else out.push(argv[i]);
  }
  return out;
}

export const fitCommand: Command = {
  name: 'fit',
  usage: `nullbench fit FILE.csv [--json] [--floor-dbm F]

FILE.csv has a header line and one reading per line:
  position,dbm          one trimmer (position in any unit: turns, degrees, steps)
  pos_a,pos_b,dbm       two trimmers
  an optional censored column (1/0) marks readings that sat at the receiver's floor;
  blank lines and lines starting with # are skipped.
Options:
  --floor-dbm F   the receiver's measurement floor, dBm: readings within 0.5 dB of it count as censored
  --json          one JSON object: best_position, best_dbm, ci_low, ci_high, a, floor_dbm, n, residual_db
                  (two trimmers: best_a, best_b, best_dbm, ci_a_low ... collinear, angle_deg)
best_dbm and floor_dbm are the carrier left at the best setting (the part the trimmers cannot cancel);
best_reading_dbm adds the receiver's floor.`,
  async run(argv, io) {
    try {
      const { values, positionals } = parseOptions(
        joinNegativeValues(argv, ['--floor-dbm']),
        {
          json: { type: 'boolean', default: false },
          'floor-dbm': { type: 'string' },
          help: { type: 'boolean', short: 'h', default: false },
        },
        true,
      );
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      if (positionals.length !== 1) {
        throw new BenchError(
          'EINVAL',
          `expected one CSV file, got ${positionals.length === 0 ? 'none' : positionals.join(' ')}`,
          'arguments',
        );
      }
      const file = positionals[0];
      const floorDbm =
        values['floor-dbm'] === undefined ? undefined : numberOption(values['floor-dbm'], 'floor-dbm');
      let text: string;
      try {
        text = await readFile(file, 'utf8');
      } catch (e) {
        const code = (e as NodeJS.ErrnoException).code;
        const why =
          code === 'ENOENT' ? 'no such file' : code === 'EISDIR' ? 'is a directory' : (e as Error).message;
        throw new BenchError('EINVAL', `cannot read: ${why}`, file);
      }
      const table = parseFitCsv(text, file);
      const opts = { floorDbm };
      try {
        if (table.kind === '1d') {
          const fit = fitNull1D(
            table.rows.map((r) => ({ position: r.values.position, dbm: r.values.dbm, censored: r.censored })),
            opts,
          );
          io.out(values.json ? machineJson(json1d(fit, table, floorDbm ?? null)) + '\n' : text1d(fit, table));
        } else {
          const fit = fitNull2D(
            table.rows.map((r) => ({
              a: r.values.pos_a,
              b: r.values.pos_b,
              dbm: r.values.dbm,
              censored: r.censored,
            })),
            opts,
          );
          io.out(values.json ? machineJson(json2d(fit, table, floorDbm ?? null)) + '\n' : text2d(fit, table));
        }
      } catch (e) {
        // The fit speaks of "readings"; the user knows the file.
        if (e instanceof BenchError && e.field?.startsWith('readings'))
          throw new BenchError(e.code, e.message.replace(/^[^:]*: /, ''), file);
        throw e;
      }
      return 0;
    } catch (e) {
      return reportError(e, io);
    }
  },
};
