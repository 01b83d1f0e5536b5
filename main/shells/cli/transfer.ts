// Runs in Node. `nullbench export` and `nullbench import`: move designs, units, sessions and readings between
// benches as one JSON bundle keyed by stable IDs (merged without duplicates), or readings out as CSV.
import { readFileSync } from 'node:fs';
import { BUNDLE_KINDS } from '../../../app/bundle';
import { CSV_SEPARATORS, type CsvSeparator } from '../../../app/csv';
import { BenchError } from '../../../app/errors';
import { parseOptions, reportError, type Command, machineJson } from './command';
import { readRecords, withRecords, writeWhole } from './records';
import { defaultDbPath } from '../../paths';

export const exportCommand: Command = {
  name: 'export',
  usage: `nullbench export --out FILE [--design NAME] [--csv [--unit SERIAL | --session ID] [--separator S]] [--db FILE]

Options:
  --out FILE        where to write (the file is written whole or not at all); - writes to standard output
  --design NAME     only this design and everything under it
  --csv             the readings as CSV (RFC 4180, one row per reading, units in the header)
  --unit SERIAL     with --csv: only this unit's readings
  --session ID      with --csv: only this session's readings
  --separator S     with --csv: comma (decimal point, the default) or semicolon (decimal comma, for
                    spreadsheets set to a decimal-comma locale)
  --db FILE         database (default: ${defaultDbPath()})`,
  async run(argv, io) {
    try {
      const { values } = parseOptions(argv, {
        db: { type: 'string' },
        out: { type: 'string' },
        design: { type: 'string' },
        csv: { type: 'boolean', default: false },
        unit: { type: 'string' },
        session: { type: 'string' },
        separator: { type: 'string' },
        help: { type: 'boolean', short: 'h', default: false },
      });
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      if (!values.out) throw new BenchError('EINVAL', 'is required', '--out');
      if (
        !values.csv &&
        (values.unit !== undefined || values.session !== undefined || values.separator !== undefined)
      )
        throw new BenchError(
          'EINVAL',
          'only with --csv (a bundle holds whole designs)',
          values.unit !== undefined ? '--unit' : values.session !== undefined ? '--session' : '--separator',
        );
      const separator = values.separator;
      if (separator !== undefined && !(CSV_SEPARATORS as readonly string[]).includes(separator))
        throw new BenchError(
          'EINVAL',
          `"${separator}" is not a separator; give ${CSV_SEPARATORS.join(' or ')}`,
          '--separator',
        );
      await readRecords(values.db, async ({ service, records }) => {
        const designId =
          values.design !== undefined ? records.findDesign(values.design, '--design').id : undefined;
        if (values.csv) {
          const unitId =
            values.unit !== undefined ? records.unitBySerial(values.unit.trim(), '--unit').id : undefined;
          const r = await service.invoke('exportCsv', {
            designId,
            unitId,
            sessionId: values.session,
            separator: separator as CsvSeparator | undefined,
          });
          if (values.out === '-') {
            io.out(r.csv);
            io.err(`${r.rows} readings written to standard output\n`);
          } else {
            writeWhole(values.out!, r.csv);
            io.out(`${r.rows} readings written to ${values.out}\n`);
          }
        } else {
          const r = await service.invoke('exportBundle', { designId });
          const counts = Object.entries(r.counts)
            .map(([k, n]) => `${n} ${k}`)
            .join(', ');
          // With --out - the bundle is the output and the summary goes to stderr, so a pipe gets pure JSON.
          if (values.out === '-') {
            io.out(r.json);
            io.err(`Bundle written to standard output: ${counts}\n`);
          } else {
            writeWhole(values.out!, r.json);
            io.out(`Bundle written to ${values.out}: ${counts}\n`);
          }
        }
      });
      return 0;
    } catch (e) {
      return reportError(e, io);
    }
  },
};

export const importCommand: Command = {
  name: 'import',
  usage: `nullbench import FILE.json [--db FILE] [--json]

Records already here (the same ID, or a design, revision or unit of the same name or serial) are not
added twice; where the local record differs, the local one is kept and the difference reported. The
whole file is checked first and merged in one transaction: a bad file is refused with the line or the
field at fault, and nothing is written.

Options:
  --db FILE   database (default: ${defaultDbPath()})
  --json      print the summary as JSON`,
  async run(argv, io) {
    try {
      const { values, positionals } = parseOptions(
        argv,
        {
          db: { type: 'string' },
          json: { type: 'boolean', default: false },
          help: { type: 'boolean', short: 'h', default: false },
        },
        true,
      );
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      if (positionals.length !== 1)
        throw new BenchError('EINVAL', 'give exactly one bundle file', 'arguments');
      const file = positionals[0];
      let text: string;
      try {
        text = readFileSync(file, 'utf8');
      } catch (e) {
        throw new BenchError(
          'EIO',
          `cannot read: ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}`,
          file,
        );
      }
      await withRecords(values.db, async ({ service }) => {
        let s;
        try {
          s = await service.invoke('importBundle', { text });
        } catch (e) {
          if (e instanceof BenchError)
            throw new BenchError(
              e.code,
              `${e.message.replace(e.field ? `${e.field}: ` : '', '')} (nothing was imported)`,
              `${file}: ${e.field ?? ''}`.replace(/: $/, ''),
            );
          throw e;
        }
        if (values.json) {
          io.out(machineJson(s, 2) + '\n');
          return;
        }
        const added = BUNDLE_KINDS.filter((k) => s.added[k]).map((k) => `${s.added[k]} ${k}`);
        const same = BUNDLE_KINDS.filter((k) => s.unchanged[k]).map((k) => `${s.unchanged[k]} ${k}`);
        io.out(
          `Imported ${file}: added ${added.join(', ') || 'nothing'}; already here ${same.join(', ') || 'nothing'}.\n`,
        );
        for (const m of s.matchedByName) io.out(`  ${m}\n`);
        for (const k of s.keptLocal) io.out(`  ${k}\n`);
      });
      return 0;
    } catch (e) {
      return reportError(e, io);
    }
  },
};
