// Runs in Node. The command-line shell: one explicit list of commands, one line each.
import { version } from '../../../package.json';
import type { CommandEntry, Io } from './command';
import { existsSync } from 'node:fs';
import { defaultDbPath } from '../../paths';
import { supportLogPath } from '../../service/supportlog';

/**
 * Every command, one line each: its name and summary here, its code loaded only when it runs (so
 * `--version` and `--help` start about as fast as Node itself; test/bench/startup.bench.ts).
 */
export const COMMANDS: CommandEntry[] = [
  {
    name: 'read',
    summary: 'read levels from a receiver (or the simulated bench) and print them corrected',
    load: async () => (await import('./read')).readCommand,
  },
  {
    name: 'serve',
    summary: 'run the local web mode (browser UI + API) on this machine',
    load: async () => (await import('./serve')).serveCommand,
  },
  {
    name: 'demo',
    summary: 'fill a database with an invented demo scenario (one design, two revisions, six units, sweeps)',
    load: async () => (await import('./demo')).demoCommand,
  },
  {
    name: 'measure',
    summary: 'measure carrier suppression, sidebands and IMD in an IQ recording (WAV or SigMF) by FFT',
    load: async () => (await import('./measure')).measureCommand,
  },
  {
    name: 'log',
    summary: 'log readings into a session at a set rate; each printed JSON line is already safe on disk',
    load: async () => (await import('./log')).logCommand,
  },
  {
    name: 'fit',
    summary: 'fit the carrier null to trimmer readings in a CSV file: best setting, interval, depth',
    load: async () => (await import('./fit')).fitCommand,
  },
  {
    name: 'plan',
    summary: 'run, resume, show or list frequency-stepped plans (carrier, tones, IMD, harmonics, reference)',
    load: async () => (await import('./plan')).planCommand,
  },
  {
    name: 'receivers',
    summary: 'stored receiver profiles and their guided calibration (signal generator through a known pad)',
    load: async () => (await import('./receivers')).receiversCommand,
  },
  {
    name: 'templates',
    summary: 'list, show, export, import or remove serial command-set templates',
    load: async () => (await import('./templates')).templatesCommand,
  },
  {
    name: 'designs',
    summary: 'list designs with their revisions, what changed in each, and how many units',
    load: async () => (await import('./units')).designsCommand,
  },
  {
    name: 'units',
    summary: 'list the units (serial, design, revision, builder, sessions)',
    load: async () => (await import('./units')).unitsCommand,
  },
  {
    name: 'add',
    summary: 'add a design, a board revision of it, and a unit (what already exists is left as it is)',
    load: async () => (await import('./edit')).addCommand,
  },
  {
    name: 'edit',
    summary: "rename a design or revision, note what changed, correct a unit, set a session's emission",
    load: async () => (await import('./edit')).editCommand,
  },
  {
    name: 'compare',
    summary:
      'compare the revisions of a design: spread of carrier suppression, balance, opposite sideband, IMD3',
    load: async () => (await import('./compare')).compareCommand,
  },
  {
    name: 'limits',
    summary: 'list limit sets (presets with sources, and your own); save or delete your own',
    load: async () => (await import('./limits')).limitsCommand,
  },
  {
    name: 'sheet',
    summary: 'print the test sheet of a unit to PDF (or HTML): identity, set-up, results, verdicts, charts',
    load: async () => (await import('./sheet')).sheetCommand,
  },
  {
    name: 'export',
    summary: 'export everything (or one design) as a JSON bundle, or the readings as CSV',
    load: async () => (await import('./transfer')).exportCommand,
  },
  {
    name: 'import',
    summary: 'merge a JSON bundle into the database (no duplicates; a bad file changes nothing)',
    load: async () => (await import('./transfer')).importCommand,
  },
];

export function usage(): string {
  const w = Math.max(...COMMANDS.map((c) => c.name.length));
  return (
    'nullbench: measure and align carrier suppression of DSB/SSB transmitters\n\n' +
    'Usage: nullbench COMMAND [options]    (nullbench COMMAND --help for its options)\n\nCommands:\n' +
    COMMANDS.map((c) => `  ${c.name.padEnd(w)}  ${c.summary}`).join('\n') +
    '\n\n' +
    `Database (default): ${defaultDbPath()}\n` +
    `Support log (start and stop, link faults, errors with their codes; nothing secret): ${
      supportLogPath() ?? 'off (NULLBENCH_SUPPORT_LOG=off)'
    }\n`
  );
}

export async function main(argv: string[], io: Io): Promise<number> {
  const [name, ...rest] = argv;
  if (!name) {
    // No command is a usage error: the text goes to stderr, so a script's output stays clean.
    io.err(usage());
    return 2;
  }
  if (name === '--help' || name === '-h' || name === 'help') {
    io.out(usage());
    return 0;
  }
  if (name === '--version' || name === '-V') {
    io.out(`nullbench ${version}\n`);
    return 0;
  }
  const entry = COMMANDS.find((c) => c.name === name);
  if (!entry) {
    io.err(`error (EINVAL): unknown command "${name}"\n\n${usage()}`);
    return 2;
  }
  // A command that fails leaves no database behind that it made itself and stored nothing in.
  const db = databaseOf(rest);
  const isNew = db !== ':memory:' && !existsSync(db);
  const cmd = await entry.load();
  const code = await cmd.run(rest, io);
  if (code !== 0 && isNew) {
    try {
      const { discardIfEmpty } = await import('../../store/db');
      discardIfEmpty(db);
    } catch {
      // Whatever is there stays: removing it was only tidying.
    }
  }
  return code;
}

/** The database a command's arguments name (--db FILE or --db=FILE), else the default one. */
function databaseOf(args: string[]): string {
  for (let i = 0; i < args.length; i++) {
    if (args[i] === '--db' && args[i + 1] !== undefined) return args[i + 1];
    if (args[i].startsWith('--db=')) return args[i].slice(5);
  }
  return defaultDbPath();
}
