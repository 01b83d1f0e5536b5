// Runs in Node. `nullbench sheet`: the test sheet of one unit as PDF (headless Chromium) or HTML, and a
// summary of what it states.
import { SUPPRESSION_REFERENCES, type SuppressionReference } from '../../../app/analysis';
import { BenchError } from '../../../app/errors';
import { VERDICT_LABELS } from '../../../app/limits';
import { PAPERS, paperForLocale, type Paper } from '../../../app/paper';
import { renderSheet, sheetPdf } from '../../sheet';
import { parseOptions, reportError, type Command, machineJson } from './command';
import { readRecords, writeWhole } from './records';
import { defaultDbPath } from '../../paths';

export const sheetCommand: Command = {
  name: 'sheet',
  usage: `nullbench sheet --unit SERIAL --out FILE.pdf [options]

Options:
  --unit SERIAL       the unit
  --out FILE          where to write: FILE.pdf (headless Chromium) or FILE.html
  --db FILE           database (default: ${defaultDbPath()})
  --session ID        report this session (default: the one chosen for the unit's sheet, else the latest)
  --limits IDS        limit sets, comma-separated ids (see nullbench limits; default: the unit's sheet
                      settings, else common practice and 47 CFR 97.307(d))
  --reference REF     what carrier suppression is stated against: pep, tone or unbalanced
  --paper SIZE        a4 or letter (US Letter); default from the locale (LC_ALL, LC_PAPER, LANG)
  --json              print the summary as JSON
Chromium is found at /usr/bin/chromium or CHROMIUM_PATH.`,
  async run(argv, io) {
    try {
      const { values } = parseOptions(argv, {
        db: { type: 'string' },
        unit: { type: 'string' },
        out: { type: 'string' },
        session: { type: 'string' },
        limits: { type: 'string' },
        reference: { type: 'string' },
        paper: { type: 'string' },
        json: { type: 'boolean', default: false },
        help: { type: 'boolean', short: 'h', default: false },
      });
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      if (!values.unit) throw new BenchError('EINVAL', 'is required', '--unit');
      if (!values.out) throw new BenchError('EINVAL', 'is required (FILE.pdf or FILE.html)', '--out');
      const html = /\.html?$/i.test(values.out);
      if (!html && !/\.pdf$/i.test(values.out))
        throw new BenchError('EINVAL', `must end in .pdf or .html, got "${values.out}"`, '--out');
      if (
        values.reference !== undefined &&
        !SUPPRESSION_REFERENCES.includes(values.reference as SuppressionReference)
      )
        throw new BenchError('EINVAL', `must be one of ${SUPPRESSION_REFERENCES.join(', ')}`, '--reference');
      if (values.paper !== undefined && !(PAPERS as readonly string[]).includes(values.paper.toLowerCase()))
        throw new BenchError('EINVAL', `"${values.paper}" is no paper size; give a4 or letter`, '--paper');
      const paper = (values.paper?.toLowerCase() as Paper | undefined) ?? paperFromEnvironment();
      await readRecords(values.db, async ({ store, records }) => {
        const unit = records.unitBySerial(values.unit!.trim(), '--unit');
        const opts = {
          sessionId: values.session,
          paper,
          reference: values.reference as SuppressionReference | undefined,
          limitSetIds: values.limits
            ?.split(',')
            .map((x) => x.trim())
            .filter(Boolean),
        };
        opts.limitSetIds?.forEach((id, i) => records.limitSet(id, `--limits[${i}]`));
        let model;
        if (html) {
          const s = renderSheet(store, unit.id, opts);
          model = s.model;
          writeWhole(values.out!, s.html);
        } else {
          const s = await sheetPdf(store, unit.id, opts);
          model = s.model;
          writeWhole(values.out!, s.pdf);
        }
        const summary = {
          out: values.out,
          serial: model.identity.serial,
          sheetRef: model.sheetRef,
          session: model.session.id,
          measured: model.session.startedAt,
          reference: model.reference,
          paper: model.paper,
          overall: model.overall,
          // Numbers for scripts (dB, expanded uncertainty k = 2, the kind of figure), the text beside them.
          figures: model.figures.map((f) => ({
            figure: f.label,
            db: f.db,
            expandedDb: f.expandedDb,
            k: 2,
            bound: f.bound,
            text: `${f.value}${f.expanded ? ` ${f.expanded}` : ''}`,
          })),
          verdicts: model.verdicts.map((v) => ({ set: v.setName, overall: v.overall })),
        };
        if (values.json) io.out(machineJson(summary, 2) + '\n');
        else {
          io.out(
            `Test sheet ${model.sheetRef} for ${model.identity.serial} (${model.identity.design} ${model.identity.revision}) written to ${values.out}\n`,
          );
          for (const f of model.figures)
            io.out(
              `  ${f.label}: ${f.value}${f.expanded ? ` ${f.expanded}` : ''}${f.stated ? '  (stated)' : ''}\n`,
            );
          for (const v of model.verdicts)
            io.out(`  ${VERDICT_LABELS[v.overall]}  ${v.setName}: ${v.reason}\n`);
          io.out(`Overall: ${VERDICT_LABELS[model.overall]}\n`);
        }
      });
      return 0;
    } catch (e) {
      return reportError(e, io);
    }
  },
};

/** The paper the locale asks for: the first of LC_ALL, LC_PAPER and LANG that is set, as POSIX orders them. */
export function paperFromEnvironment(env: NodeJS.ProcessEnv = process.env): Paper {
  return paperForLocale([env.LC_ALL, env.LC_PAPER, env.LANG].find((v) => v !== undefined && v !== ''));
}
