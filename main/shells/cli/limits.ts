// Runs in Node. `nullbench limits`: the limit sets (presets with their sources, and the user's own); save a
// user set from a JSON file, or delete one.
import { readFileSync } from 'node:fs';
import { BenchError } from '../../../app/errors';
import { STANDING_LABELS, VERIFY_CAUTION, ruleText } from '../../../app/limits';
import { parseJsonText } from '../../store/bundles';
import { parseOptions, reportError, type Command, machineJson } from './command';
import { readRecords, withRecords } from './records';
import { defaultDbPath } from '../../paths';

export const limitsCommand: Command = {
  name: 'limits',
  usage: `nullbench limits [--db FILE] [--json] [--save FILE.json | --delete ID]

Options:
  --db FILE          database (default: ${defaultDbPath()})
  --json             the sets as JSON
  --save FILE.json   save a limit set of your own, e.g.
                     {"name": "Kit target", "rules": [{"metric": "carrier", "reference": "pep", "minDb": 50},
                      {"metric": "balance", "maxDb": 1}, {"metric": "imd3", "reference": "pep", "minDb": 30}]}
                     metrics: carrier (reference tone|pep|unbalanced, minDb), opposite (minDb),
                     imd3 (reference tone|pep, minDb), balance (maxDb), spurious (reference mean|pep,
                     minDb, absMaxDbm, needNotBelowDbm, meanAboveW, meanAtMostW); any rule may carry
                     carrierFromHz, carrierBelowHz, emissions and note. Give "id" to replace a set.
  --delete ID        delete one of your own sets (by id or name)
${VERIFY_CAUTION}`,
  async run(argv, io) {
    try {
      const { values } = parseOptions(argv, {
        db: { type: 'string' },
        json: { type: 'boolean', default: false },
        save: { type: 'string' },
        delete: { type: 'string' },
        help: { type: 'boolean', short: 'h', default: false },
      });
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      if (values.save !== undefined && values.delete !== undefined)
        throw new BenchError('EINVAL', 'give --save or --delete, not both', 'arguments');
      // Listing only reads; --save and --delete write.
      const open = values.save === undefined && values.delete === undefined ? readRecords : withRecords;
      await open(values.db, async ({ service, records }) => {
        if (values.save !== undefined) {
          let text: string;
          try {
            text = readFileSync(values.save, 'utf8');
          } catch (e) {
            throw new BenchError(
              'EIO',
              `cannot read: ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}`,
              values.save,
            );
          }
          const saved = await service.invoke('saveLimitSet', { set: parseJsonText(text) });
          io.out(
            values.json
              ? machineJson(saved, 2) + '\n'
              : `saved limit set "${saved.name}" (id ${saved.id}).\n`,
          );
          return;
        }
        if (values.delete !== undefined) {
          const set = records.limitSet(values.delete, '--delete');
          await service.invoke('deleteLimitSet', { limitSetId: set.id });
          io.out(`deleted limit set "${set.name}".\n`);
          return;
        }
        const sets = await service.invoke('limitSets', {});
        if (values.json) {
          io.out(machineJson(sets, 2) + '\n');
          return;
        }
        for (const s of sets) {
          io.out(`${s.id}\n  ${s.name}  [${STANDING_LABELS[s.standing]}]\n`);
          if (s.source) io.out(`  source: ${s.source}\n`);
          for (const r of s.rules) io.out(`  - ${ruleText(r)}\n`);
        }
        io.out(`\n${VERIFY_CAUTION}\n`);
      });
      return 0;
    } catch (e) {
      return reportError(e, io);
    }
  },
};
