// Runs in Node. `nullbench units` and `nullbench designs`: what the database holds, as text or JSON.
import { parseOptions, reportError, type Command, machineJson } from './command';
import { readRecords } from './records';
import { defaultDbPath } from '../../paths';

export const unitsCommand: Command = {
  name: 'units',
  usage: `nullbench units [--db FILE] [--design NAME] [--json]

Options:
  --db FILE       database (default: ${defaultDbPath()})
  --design NAME   only the units of this design
  --json          a JSON array, one object per unit (serial, id, design, revision, buildDate, builder,
                  notes, sessions, lastSessionAt)`,
  async run(argv, io) {
    try {
      const { values } = parseOptions(argv, {
        db: { type: 'string' },
        design: { type: 'string' },
        json: { type: 'boolean', default: false },
        help: { type: 'boolean', short: 'h', default: false },
      });
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      await readRecords(values.db, ({ records }) => {
        const designId = values.design ? records.findDesign(values.design, '--design').id : undefined;
        const units = records.listUnits(designId);
        if (values.json) {
          io.out(machineJson(units, 2) + '\n');
          return;
        }
        if (!units.length) {
          io.out('No units yet.\n');
          return;
        }
        const w = Math.max(6, ...units.map((u) => u.serial.length));
        const d = Math.max(6, ...units.map((u) => `${u.design} ${u.revision}`.length));
        io.out(`${'serial'.padEnd(w)}  ${'design'.padEnd(d)}  built       sessions  builder\n`);
        for (const u of units)
          io.out(
            `${u.serial.padEnd(w)}  ${`${u.design} ${u.revision}`.padEnd(d)}  ${(u.buildDate || '—').padEnd(10)}  ${String(u.sessions).padStart(8)}  ${u.builder}\n`,
          );
      });
      return 0;
    } catch (e) {
      return reportError(e, io);
    }
  },
};

export const designsCommand: Command = {
  name: 'designs',
  usage: `nullbench designs [--db FILE] [--json]

Options:
  --db FILE   database (default: ${defaultDbPath()})
  --json      the design → revision → unit tree as JSON`,
  async run(argv, io) {
    try {
      const { values } = parseOptions(argv, {
        db: { type: 'string' },
        json: { type: 'boolean', default: false },
        help: { type: 'boolean', short: 'h', default: false },
      });
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      await readRecords(values.db, ({ store }) => {
        const tree = store.tree();
        if (values.json) {
          io.out(machineJson(tree, 2) + '\n');
          return;
        }
        if (!tree.length) io.out('No designs yet.\n');
        for (const d of tree) {
          io.out(`${d.name}${d.notes ? ` — ${d.notes}` : ''}\n`);
          for (const r of d.revisions)
            io.out(
              `  ${r.name}  (${r.units.length} unit${r.units.length === 1 ? '' : 's'}: ${r.units.map((u) => u.serial).join(', ') || 'none'})${r.changes ? `\n      changed: ${r.changes}` : ''}\n`,
            );
        }
      });
      return 0;
    } catch (e) {
      return reportError(e, io);
    }
  },
};
