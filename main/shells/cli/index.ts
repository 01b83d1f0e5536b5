// Runs in Node. The command-line shell: one explicit list of commands, one line each.
import { version } from '../../../package.json';
import type { Command, Io } from './command';
import { compareCommand } from './compare';
import { addCommand, editCommand } from './edit';
import { limitsCommand } from './limits';
import { sheetCommand } from './sheet';
import { exportCommand, importCommand } from './transfer';
import { designsCommand, unitsCommand } from './units';
import { demoCommand } from './demo';
import { fitCommand } from './fit';
import { logCommand } from './log';
import { measureCommand } from './measure';
import { planCommand } from './plan';
import { readCommand } from './read';
import { receiversCommand } from './receivers';
import { serveCommand } from './serve';
import { templatesCommand } from './templates';
import { existsSync } from 'node:fs';
import { defaultDbPath } from '../../paths';
import { discardIfEmpty } from '../../store/db';
import { supportLogPath } from '../../service/supportlog';

export const COMMANDS: Command[] = [
  readCommand,
  serveCommand,
  demoCommand,
  measureCommand,
  logCommand,
  fitCommand,
  planCommand,
  receiversCommand,
  templatesCommand,
  designsCommand,
  unitsCommand,
  addCommand,
  editCommand,
  compareCommand,
  limitsCommand,
  sheetCommand,
  exportCommand,
  importCommand,
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
  const cmd = COMMANDS.find((c) => c.name === name);
  if (!cmd) {
    io.err(`error (EINVAL): unknown command "${name}"\n\n${usage()}`);
    return 2;
  }
  // A command that fails leaves no database behind that it made itself and stored nothing in.
  const db = databaseOf(rest);
  const isNew = db !== ':memory:' && !existsSync(db);
  const code = await cmd.run(rest, io);
  if (code !== 0 && isNew) {
    try {
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
