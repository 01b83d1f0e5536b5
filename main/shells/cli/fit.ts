// Runs in Node. `nullbench fit FILE.csv`: fit the carrier null to trimmer readings from a CSV file and
// print the best setting, its confidence interval and the predicted depth.
import { readFile } from 'node:fs/promises';
import { parseCsv } from '../../../app/csv';
import { normaliseDecimal } from '../../../app/numbers';
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
  /** Which column of the file each quantity came from, and which rows, said with the result. */
  used: string;
  rows: { values: Record<string, number>; censored: boolean; line: number }[];
}

const TRUE = new Set(['1', 'true', 'yes', 'y']);
const FALSE = new Set(['', '0', 'false', 'no', 'n']);

/**
 * Levels a bench can read at the transmitter, dBm: far below any receiver's floor (thermal noise is
 * −174 dBm/Hz) to far above any amateur transmitter (+100 dBm is 10 MW). A value outside is a typing or
 * export error, and one such value would move the fit and throw the real readings out as outliers.
 */
export const PLAUSIBLE_DBM: readonly [number, number] = [-250, 100];
/** Trimmer positions beyond this (in any unit) are no position a trimmer reaches. */
export const PLAUSIBLE_POSITION = 1e6;

/** Which readings of a readings export to fit (nullbench export --csv). */
export interface ExportChoice {
  session?: string;
  /** trimmer keys: one (a 1-D fit) or two (2-D) */
  trims?: string[];
}

/** The columns of the readings export the fit reads (main/store/csv.ts), as compared: lower case. */
const EXPORT = {
  point: 'point',
  session: 'session id',
  level: 'level at transmitter (dbm)',
  kept: 'kept (1/0)',
  floor: 'at receiver floor (1/0)',
} as const;

/**
 * Parse the CSV text (RFC 4180, comma or semicolon dialect); every error names the line (1-based, as an
 * editor shows it) and the column. Two kinds of file: our own layout (position,dbm or pos_a,pos_b,dbm,
 * optionally censored), or the readings export, whose kept carrier readings of one session are fitted
 * against its trimmer columns.
 */
export function parseFitCsv(text: string, file: string, choice: ExportChoice = {}): Table {
  let read;
  try {
    read = parseCsv(text, { comments: true });
  } catch (e) {
    throw new BenchError('EINVAL', (e as Error).message, file);
  }
  // A decimal comma can only be meant where the comma does not separate fields.
  const decimalComma = read.separator !== 'comma';
  const records = read.records.filter(
    (r) => !(r.fields.length === 1 && (r.fields[0].trim() === '' || r.fields[0].trimStart().startsWith('#'))),
  );
  if (!records.length)
    throw new BenchError('EINVAL', 'the file is empty: expected a header line and readings', file);
  const [head, ...body] = records;
  const names = head.fields.map((x) => x.trim().toLowerCase());
  if (names.includes(EXPORT.point) && names.includes(EXPORT.level))
    return fromExport(
      body,
      names,
      head.fields.map((x) => x.trim()),
      file,
      choice,
      decimalComma,
    );
  if (choice.session !== undefined || choice.trims !== undefined)
    throw new BenchError(
      'EINVAL',
      'only for a readings export (nullbench export --csv)',
      choice.session !== undefined ? '--session' : '--trims',
    );
  const want = names.filter((x) => x !== 'censored').sort();
  const kind = (Object.keys(LAYOUTS) as ('1d' | '2d')[]).find(
    (k) => [...LAYOUTS[k]].sort().join() === want.join(),
  );
  if (!kind || new Set(names).size !== names.length) {
    throw new BenchError(
      'EINVAL',
      `unknown header "${head.fields.join(',')}": expected position,dbm (one trimmer) or pos_a,pos_b,dbm (two trimmers), each optionally with a censored column, or a readings export (nullbench export --csv)`,
      `${file} line ${head.line}`,
    );
  }
  const rows: Table['rows'] = [];
  for (const r of body) {
    if (r.fields.length !== names.length) {
      throw new BenchError(
        'EINVAL',
        `expected ${names.length} cells (${names.join(',')}), got ${r.fields.length}`,
        `${file} line ${r.line}`,
      );
    }
    const values: Record<string, number> = {};
    let censored = false;
    r.fields.forEach((raw, j) => {
      const name = names[j];
      const where = `${file} line ${r.line}, column ${j + 1} (${name})`;
      if (name === 'censored') censored = yesNo(raw, where);
      else values[name] = cellNumber(raw, where, name === 'dbm' ? 'dbm' : 'position', decimalComma);
    });
    rows.push({ values, censored, line: r.line });
  }
  if (rows.length === 0) throw new BenchError('EINVAL', 'the file has a header but no readings', file);
  const sepName = { comma: 'comma', semicolon: 'semicolon', tab: 'tab' }[read.separator];
  return { kind, rows, used: `${sepName}-separated; columns ${names.join(', ')}; every reading line` };
}

function yesNo(raw: string, where: string): boolean {
  const v = raw.trim().toLowerCase();
  if (TRUE.has(v)) return true;
  if (!FALSE.has(v)) throw new BenchError('EINVAL', `"${raw}" is not a yes/no value (use 1 or 0)`, where);
  return false;
}

function cellNumber(raw: string, where: string, what: 'dbm' | 'position', decimalComma: boolean): number {
  const cell = raw.trim();
  const n = Number(decimalComma ? (normaliseDecimal(cell) ?? NaN) : cell);
  if (cell === '' || !Number.isFinite(n)) throw new BenchError('EINVAL', `"${raw}" is not a number`, where);
  if (what === 'dbm' && (n < PLAUSIBLE_DBM[0] || n > PLAUSIBLE_DBM[1]))
    throw new BenchError(
      'EINVAL',
      `${cell} dBm is no level a bench reads (expected ${PLAUSIBLE_DBM[0]} to +${PLAUSIBLE_DBM[1]} dBm); correct or remove the line`,
      where,
    );
  if (what === 'position' && Math.abs(n) > PLAUSIBLE_POSITION)
    throw new BenchError('EINVAL', `${cell} is no trimmer position (beyond ±${PLAUSIBLE_POSITION})`, where);
  return n;
}

/** The kept carrier readings of one session of a readings export, against one or two trimmer columns. */
function fromExport(
  body: { fields: string[]; line: number }[],
  names: string[],
  titles: string[],
  file: string,
  choice: ExportChoice,
  decimalComma: boolean,
): Table {
  const col = (n: string) => names.indexOf(n);
  const at = (r: { fields: string[] }, n: string) => r.fields[col(n)] ?? '';
  const carrier = body.filter(
    (r) =>
      r.fields.length === names.length &&
      at(r, EXPORT.point).trim() === 'carrier' &&
      (col(EXPORT.kept) < 0 || yesNo(at(r, EXPORT.kept), `${file} line ${r.line} (${EXPORT.kept})`)),
  );
  const sessions = [...new Set(carrier.map((r) => at(r, EXPORT.session).trim()))];
  let rows = carrier;
  if (choice.session !== undefined) {
    rows = carrier.filter((r) => at(r, EXPORT.session).trim() === choice.session);
    if (!rows.length)
      throw new BenchError(
        'EINVAL',
        `no kept carrier readings of session ${choice.session} in ${file}`,
        '--session',
      );
  } else if (sessions.length > 1)
    throw new BenchError(
      'EINVAL',
      `the file holds kept carrier readings of ${sessions.length} sessions (${sessions.slice(0, 3).join(', ')}${sessions.length > 3 ? ', …' : ''}); a fit is of one session: give --session ID`,
      file,
    );
  if (!rows.length) throw new BenchError('EINVAL', 'the export holds no kept carrier readings to fit', file);
  // Trimmer columns: "trim A (turns)"; those with a value in every chosen reading, or the ones asked for.
  const trimCols = names.map((n, j) => ({ key: /^trim (\S+)/.exec(n)?.[1], j, n })).filter((t) => t.key);
  const keyOf = (k: string) => trimCols.find((t) => t.key!.toLowerCase() === k.toLowerCase());
  let chosen;
  if (choice.trims) {
    chosen = choice.trims.map((k, i) => {
      const t = keyOf(k);
      if (!t)
        throw new BenchError(
          'EINVAL',
          `no trimmer column "${k}" in ${file} (it has ${trimCols.map((x) => x.key!.toUpperCase()).join(', ') || 'none'})`,
          `--trims[${i}]`,
        );
      return t;
    });
    if (chosen.length < 1 || chosen.length > 2)
      throw new BenchError('EINVAL', 'give one trimmer or two', '--trims');
  } else {
    chosen = trimCols.filter((t) => rows.every((r) => r.fields[t.j].trim() !== ''));
    if (chosen.length === 0)
      throw new BenchError('EINVAL', 'the kept carrier readings carry no trimmer position', file);
    if (chosen.length > 2)
      throw new BenchError(
        'EINVAL',
        `the readings carry ${chosen.length} trimmers (${chosen.map((t) => t.key!.toUpperCase()).join(', ')}): give the one or two to fit with --trims`,
        file,
      );
  }
  const kind: Table['kind'] = chosen.length === 1 ? '1d' : '2d';
  const session = choice.session ?? sessions[0];
  const used =
    `readings export, session ${session}: the ${rows.length} kept carrier readings of ${body.length} rows; ` +
    `${chosen.map((t, i) => `${kind === '1d' ? 'position' : i === 0 ? 'A' : 'B'} from "${titles[t.j]}"`).join(', ')}, ` +
    `level from "${titles[col(EXPORT.level)]}"${col(EXPORT.floor) >= 0 ? `, censored from "${titles[col(EXPORT.floor)]}"` : ''}`;
  const out: Table['rows'] = rows.map((r) => {
    const where = (n: string) => `${file} line ${r.line}, column ${col(n) + 1} (${n})`;
    const level = cellNumber(at(r, EXPORT.level), where(EXPORT.level), 'dbm', decimalComma);
    const pos = chosen.map((t) =>
      cellNumber(
        r.fields[t.j],
        `${file} line ${r.line}, column ${t.j + 1} (${t.n})`,
        'position',
        decimalComma,
      ),
    );
    const censored = col(EXPORT.floor) >= 0 && yesNo(at(r, EXPORT.floor), where(EXPORT.floor));
    const values: Record<string, number> =
      kind === '1d' ? { position: pos[0], dbm: level } : { pos_a: pos[0], pos_b: pos[1], dbm: level };
    return { values, censored, line: r.line };
  });
  return { kind, rows: out, used };
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
    read: t.used,
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
    read: t.used,
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
    `read         ${t.used}\n` +
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
    `read         ${t.used}\n` +
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
  usage: `nullbench fit FILE.csv [--json] [--floor-dbm F] [--session ID] [--trims A[,B]]

FILE.csv has a header line and one reading per line:
  position,dbm          one trimmer (position in any unit: turns, degrees, steps)
  pos_a,pos_b,dbm       two trimmers
  an optional censored column (1/0) marks readings that sat at the receiver's floor;
  blank lines and lines starting with # are skipped. Comma, semicolon or tab separated (found from the
  header; semicolon and tab files may use a decimal comma). Levels outside -250..+100 dBm are refused,
  naming the line. The result says which columns and rows it read.
Or a readings export (nullbench export --csv): its kept carrier readings of one session, against the
trimmer columns they carry (at the receiver floor counts as censored).
Options:
  --session ID    with an export holding several sessions: the one to fit
  --trims A[,B]   with an export whose readings carry more than two trimmers: the one or two to fit
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
          session: { type: 'string' },
          trims: { type: 'string' },
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
      const table = parseFitCsv(text, file, {
        session: values.session,
        trims: values.trims?.split(',').map((k) => k.trim()),
      });
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
