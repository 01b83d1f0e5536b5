// Runs in Node. What every CLI command is: a record with its name, usage text and run(); the list in
// index.ts gives each its one-line summary and loads it when it runs.
import { parseArgs, type ParseArgsConfig } from 'node:util';
import { SupportLog } from '../../service/supportlog';
import { BenchError, errorText } from '../../../app/errors';

export interface Io {
  out(s: string): void;
  err(s: string): void;
}

export interface Command {
  name: string;
  usage: string;
  /** Returns the exit code: 0 done, 1 failed at run time, 2 bad usage or bad input. */
  run(argv: string[], io: Io): Promise<number>;
}

/** A command in the list: what `--help` shows of it, and how to load the rest. */
export interface CommandEntry {
  name: string;
  summary: string;
  load(): Promise<Command>;
}

/** node:util parseArgs with strict checking; a misspelt option becomes a usage error naming it. */
export function parseOptions<T extends NonNullable<ParseArgsConfig['options']>>(
  argv: string[],
  options: T,
  positionals = false,
) {
  try {
    return parseArgs({ args: argv, options, allowPositionals: positionals, strict: true });
  } catch (e) {
    throw new BenchError('EINVAL', (e as Error).message.replace(/\. To specify.*$/s, ''), 'arguments');
  }
}

/** Parses a number option, naming the option on error. */
export function numberOption(value: string | undefined, name: string, fallback?: number): number {
  if (value === undefined) {
    if (fallback === undefined) throw new BenchError('EINVAL', 'is required', `--${name}`);
    return fallback;
  }
  const n = Number(value);
  if (value.trim() === '' || !Number.isFinite(n))
    throw new BenchError('EINVAL', `must be a number, got "${value}"`, `--${name}`);
  return n;
}

/**
 * The transmitter's peak envelope power from --tx-pep-dbm (dBm) or --pep-w (W): every command that declares a
 * set-up takes either, and exactly one. Returns dBm.
 */
export function pepOption(values: { 'tx-pep-dbm'?: string; 'pep-w'?: string }): number {
  const dbm = values['tx-pep-dbm'];
  const w = values['pep-w'];
  if (dbm !== undefined && w !== undefined)
    throw new BenchError(
      'EINVAL',
      'give the PEP once: --tx-pep-dbm (dBm) or --pep-w (W), not both',
      '--pep-w',
    );
  if (w !== undefined) {
    const watts = numberOption(w, 'pep-w');
    if (!(watts > 0)) throw new BenchError('EINVAL', `must be above 0 W, got ${watts}`, '--pep-w');
    return 10 * Math.log10(watts * 1000);
  }
  if (dbm === undefined)
    throw new BenchError('EINVAL', 'is required: the PEP in dBm, or --pep-w in W', '--tx-pep-dbm');
  return numberOption(dbm, 'tx-pep-dbm');
}

/** Prints a BenchError the way every command does, and picks the exit code. */
export function reportError(e: unknown, io: Io): number {
  const log = new SupportLog();
  if (e instanceof BenchError) {
    io.err(`error (${e.code}): ${errorText(e)}\n`);
    log.write({
      event: 'failure',
      call: 'command line',
      code: e.code,
      field: e.field ?? null,
      message: e.message,
    });
    return e.code === 'EINVAL' ? 2 : 1;
  }
  const message = e instanceof Error ? e.message : String(e);
  io.err(`error: ${message}\n`);
  log.write({ event: 'failure', call: 'command line', code: 'EIO', field: null, message });
  return 1;
}

/** Levels in dBm are often negative: let "--max-input-dbm -10" mean "--max-input-dbm=-10" as a user expects. */
export function joinNegativeNumbers(argv: string[], options: string[]): string[] {
  const out: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    if (options.includes(argv[i]) && /^-(\d|\.\d)/.test(argv[i + 1] ?? '')) {
      out.push(`${argv[i]}=${argv[i + 1]}`);
      i++;
    } else out.push(argv[i]);
  }
  return out;
}

/**
 * JSON for scripts: numbers as numbers, and the ASCII hyphen-minus wherever a figure's text carries a
 * minus (the typographic U+2212 is for tables read by people only).
 */
export function machineJson(value: unknown, indent?: number): string {
  return JSON.stringify(value, null, indent).replace(/\u2212/g, '-');
}
