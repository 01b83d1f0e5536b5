// Runs in Node. `nullbench templates`: list, show, export, import and remove serial command-set templates.
import { readFile, writeFile } from 'node:fs/promises';
import { BenchError } from '../../../app/errors';
import { escapeControls, type SerialTemplate } from '../../../app/serialtemplate';
import { defaultDbPath } from '../../paths';
import { ReceiverRepo } from '../../store/receivers';
import { Store } from '../../store/store';
import { parseOptions, reportError, type Command, type Io, machineJson } from './command';

function line(t: SerialTemplate): string {
  const par = t.parity === 'none' ? 'N' : t.parity === 'even' ? 'E' : 'O';
  return `${t.dataBits}${par}${t.stopBits} @ ${t.defaultBaud}`;
}

function describe(t: SerialTemplate, builtin: boolean): string {
  const sf = t.setFrequency;
  return [
    `name            ${t.name}${builtin ? ' (built in: save a copy under another name to change it)' : ''}`,
    `description     ${t.description || '—'}`,
    `line            ${line(t)} baud by default (data bits, parity, stop bits)`,
    `terminator      "${escapeControls(t.terminator)}"`,
    `level query     "${escapeControls(t.query)}"`,
    `reply pattern   ${t.response}   (${t.valueFormat}; value x ${t.scale} + ${t.offset} = ${t.quantity})`,
    `set frequency   ${sf ? `"${escapeControls(sf.command)}"${sf.ack ? `, acknowledged by ${sf.ack}` : ', no reply'}` : 'none (tuned by hand)'}`,
    `init commands   ${t.init.length ? t.init.map((c) => `"${escapeControls(c)}"`).join(', ') : 'none'}`,
    `timing          ${t.interCommandDelayMs} ms between commands, ${t.timeoutMs} ms reply timeout`,
  ].join('\n');
}

const USAGE = `nullbench templates list [--json] [--db FILE]
nullbench templates show NAME [--json] [--db FILE]
nullbench templates export NAME [--out FILE] [--db FILE]
nullbench templates import FILE.json [--replace] [--db FILE]
nullbench templates remove NAME [--db FILE]

A template is the command set of a receiver on a serial line: the level query and its reply pattern, what
the number means (dB relative to S9, S-units, raw counts or dBm), the set-frequency command, the line settings
and timing. Built-in templates are examples of our own; import a JSON file (as export writes it) to add yours.
Options:
  --json      machine-readable output
  --out FILE  write the exported JSON to FILE instead of standard output
  --replace   let import overwrite a stored template of the same name
  --db FILE   database (default: ${defaultDbPath()})`;

export const templatesCommand: Command = {
  name: 'templates',
  usage: USAGE,
  async run(argv, io: Io) {
    let store: Store | null = null;
    try {
      const { values, positionals } = parseOptions(
        argv,
        {
          json: { type: 'boolean', default: false },
          out: { type: 'string' },
          replace: { type: 'boolean', default: false },
          db: { type: 'string' },
          help: { type: 'boolean', short: 'h', default: false },
        },
        true,
      );
      if (values.help) {
        io.out(USAGE + '\n');
        return 0;
      }
      const [action, arg, ...extra] = positionals;
      if (extra.length) throw new BenchError('EINVAL', `unexpected "${extra.join(' ')}"`, 'arguments');
      const need = (what: string) => {
        if (!arg) throw new BenchError('EINVAL', `needs ${what}`, `templates ${action}`);
        return arg;
      };
      store = new Store(values.db ?? defaultDbPath());
      const repo = new ReceiverRepo(store);
      switch (action) {
        case 'list': {
          const all = repo.listTemplates();
          if (values.json)
            io.out(machineJson(all.map((e) => ({ ...e.template, builtin: e.builtin }))) + '\n');
          else
            for (const e of all)
              io.out(
                `${e.template.name.padEnd(20)} ${e.builtin ? 'built in' : 'stored  '}  ${e.template.quantity.padEnd(11)} ` +
                  `${line(e.template).padEnd(12)}  ${e.template.description}\n`,
              );
          return 0;
        }
        case 'show': {
          const t = repo.template(need('a template name'));
          const builtin = repo.listTemplates().some((e) => e.builtin && e.template.name === t.name);
          io.out(values.json ? machineJson(t) + '\n' : describe(t, builtin) + '\n');
          return 0;
        }
        case 'export': {
          const t = repo.template(need('a template name'));
          const text = JSON.stringify(t, null, 2) + '\n';
          if (values.out) {
            await writeFile(values.out, text);
            io.err(`template "${t.name}" written to ${values.out}\n`);
          } else io.out(text);
          return 0;
        }
        case 'import': {
          const file = need('a JSON file');
          let data: unknown;
          try {
            data = JSON.parse(await readFile(file, 'utf8'));
          } catch (e) {
            const code = (e as NodeJS.ErrnoException).code;
            throw new BenchError(
              'EINVAL',
              code === 'ENOENT' ? 'no such file' : `not a JSON file: ${(e as Error).message}`,
              file,
            );
          }
          try {
            const t = repo.saveTemplate(data, values.replace);
            io.out(`template "${t.name}" imported\n`);
          } catch (e) {
            if (e instanceof BenchError && e.field?.startsWith('template'))
              throw new BenchError(
                e.code,
                e.message.replace(/^[^:]*: /, ''),
                `${file}: ${e.field.replace(/^template\.?/, '') || '(top level)'}`,
              );
            throw e;
          }
          return 0;
        }
        case 'remove': {
          const name = need('a template name');
          repo.deleteTemplate(name);
          io.out(`template "${name}" removed\n`);
          return 0;
        }
        default:
          throw new BenchError(
            'EINVAL',
            `expected list, show, export, import or remove, got "${action ?? ''}"`,
            'templates',
          );
      }
    } catch (e) {
      return reportError(e, io);
    } finally {
      (store as Store | null)?.close();
    }
  },
};
