// Runs in Node. `nullbench compare`: the spread of each headline figure over the units and sessions of
// every revision of a design, and whether each revision did better or worse than the one before.
import {
  METRICS,
  METRIC_LABELS,
  SUPPRESSION_REFERENCES,
  type SuppressionReference,
} from '../../../app/analysis';
import { BenchError } from '../../../app/errors';
import { parseOptions, reportError, type Command, machineJson } from './command';
import { readRecords } from './records';
import { defaultDbPath } from '../../paths';

const f1 = (x: number) => {
  const s = Math.abs(x).toFixed(1);
  return `${x < 0 && Number(s) !== 0 ? '-' : ''}${s}`;
};

export const compareCommand: Command = {
  name: 'compare',
  usage: `nullbench compare --design NAME [--reference pep|tone|unbalanced] [--db FILE] [--json]

Options:
  --design NAME       the design whose revisions to compare
  --reference REF     what carrier suppression (and IMD3) is stated against: pep (default), tone or unbalanced
  --db FILE           database (default: ${defaultDbPath()})
  --json              the whole comparison as JSON (every value with its unit, session and uncertainty)
A revision is called better or worse than the one before when the medians differ by more than the
measurement can tell apart (the larger of 1 dB and twice the combined typical uncertainty).`,
  async run(argv, io) {
    try {
      const { values } = parseOptions(argv, {
        db: { type: 'string' },
        design: { type: 'string' },
        reference: { type: 'string', default: 'pep' },
        json: { type: 'boolean', default: false },
        help: { type: 'boolean', short: 'h', default: false },
      });
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      if (!values.design) throw new BenchError('EINVAL', 'is required', '--design');
      const ref = values.reference as SuppressionReference;
      if (!SUPPRESSION_REFERENCES.includes(ref))
        throw new BenchError('EINVAL', `must be one of ${SUPPRESSION_REFERENCES.join(', ')}`, '--reference');
      await readRecords(values.db, async ({ service, records }) => {
        const d = records.findDesign(values.design!, '--design');
        const c = await service.invoke('compareRevisions', { designId: d.id, reference: ref });
        if (values.json) {
          io.out(machineJson(c, 2) + '\n');
          return;
        }
        io.out(
          `${c.design}: ${c.revisions.length} revisions; carrier and IMD3 against ${ref === 'pep' ? 'PEP' : ref === 'tone' ? 'one tone' : 'the unbalanced carrier'} (dB below; balance as |upper - lower|)\n`,
        );
        for (const m of METRICS) {
          io.out(
            `\n${METRIC_LABELS[m]} (dB)\n  revision  units  sessions     min      q1  median      q3     max\n`,
          );
          for (const r of c.revisions) {
            const s = r.metrics[m];
            io.out(
              `  ${r.name.padEnd(8)}  ${String(r.unitCount).padStart(5)}  ${String(r.sessionCount).padStart(8)}  ` +
                (s
                  ? [s.min, s.q1, s.median, s.q3, s.max].map((v) => f1(v).padStart(6)).join('  ')
                  : '  not measured') +
                '\n',
            );
          }
          for (const ch of c.changes.filter((x) => x.metric === m))
            io.out(
              `  ${ch.from} -> ${ch.to}: ${ch.kind === 'same' ? 'no difference the measurement can tell' : ch.kind === 'better' ? 'BETTER' : 'WORSE (regression)'} ` +
                `(median ${ch.betterByDb >= 0 ? 'better' : 'worse'} by ${f1(Math.abs(ch.betterByDb))} dB; threshold ${f1(ch.thresholdDb)} dB)\n`,
            );
        }
      });
      return 0;
    } catch (e) {
      return reportError(e, io);
    }
  },
};
