// Runs in Node. `nullbench add` and `nullbench edit`: keep the records of designs, revisions and units from
// the command line (create what is missing; rename, note what changed on a board, correct a unit's details).
import { EMISSIONS, type Emission } from '../../../app/analysis';
import type { z } from 'zod';
import { DesignInputSchema, RevisionInputSchema, UnitInputSchema } from '../../../app/api/schemas';
import { BenchError } from '../../../app/errors';
import { parseOptions, reportError, type Command, machineJson } from './command';
import { withRecords } from './records';
import { defaultDbPath } from '../../paths';

export const addCommand: Command = {
  name: 'add',
  usage: `nullbench add --design NAME [--revision NAME [--unit SERIAL]] [options]

Options:
  --db FILE            database (default: ${defaultDbPath()})
  --design NAME        the design (created when missing)
  --notes TEXT         notes of a new design
  --revision NAME      a board revision of the design (created when missing)
  --changes TEXT       what changed on a new revision
  --unit SERIAL        a built unit of that revision (created when missing)
  --build-date DATE    when the new unit was built, e.g. 2026-03-14
  --builder NAME       who built the new unit
  --unit-notes TEXT    notes of the new unit
  --json               print what exists now as JSON`,
  async run(argv, io) {
    try {
      const { values } = parseOptions(argv, {
        db: { type: 'string' },
        design: { type: 'string' },
        notes: { type: 'string' },
        revision: { type: 'string' },
        changes: { type: 'string' },
        unit: { type: 'string' },
        'build-date': { type: 'string' },
        builder: { type: 'string' },
        'unit-notes': { type: 'string' },
        json: { type: 'boolean', default: false },
        help: { type: 'boolean', short: 'h', default: false },
      });
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      if (!values.design) throw new BenchError('EINVAL', 'is required', '--design');
      if (values.unit !== undefined && values.revision === undefined)
        throw new BenchError('EINVAL', 'a unit needs its revision: give --revision too', '--unit');
      // Every value is checked before anything is written, so a bad --build-date adds no design or revision.
      checkAll([
        [
          DesignInputSchema,
          { name: values.design, notes: values.notes },
          { name: '--design', notes: '--notes' },
        ],
        ...(values.revision !== undefined
          ? [
              [
                RevisionInputSchema.omit({ designId: true }),
                { name: values.revision, changes: values.changes },
                { name: '--revision', changes: '--changes' },
              ] as const,
            ]
          : []),
        ...(values.unit !== undefined
          ? [
              [
                UnitInputSchema.omit({ revisionId: true }),
                {
                  serial: values.unit,
                  buildDate: values['build-date'],
                  builder: values.builder,
                  notes: values['unit-notes'],
                },
                { serial: '--unit', buildDate: '--build-date', builder: '--builder', notes: '--unit-notes' },
              ] as const,
            ]
          : []),
      ]);
      await withRecords(values.db, async ({ store, service }) => {
        const said: string[] = [];
        let d = store.tree().find((x) => x.name === values.design!.trim());
        if (!d) {
          d = {
            ...(await service.invoke('createDesign', { name: values.design!, notes: values.notes ?? '' })),
            revisions: [],
          };
          said.push(`added design "${d.name}"`);
        } else said.push(`design "${d.name}" is there`);
        let r =
          values.revision !== undefined
            ? d.revisions.find((x) => x.name === values.revision!.trim())
            : undefined;
        if (values.revision !== undefined && !r) {
          r = {
            ...(await service.invoke('createRevision', {
              designId: d.id,
              name: values.revision,
              changes: values.changes ?? '',
            })),
            units: [],
          };
          said.push(`added revision ${r.name}`);
        } else if (r) said.push(`revision ${r.name} is there`);
        let unit = null;
        if (values.unit !== undefined && r) {
          const existing = store.findUnitBySerial(values.unit.trim());
          if (existing && existing.revisionId !== r.id)
            throw new BenchError(
              'ECONFLICT',
              `unit ${existing.serial} already exists under another revision (move it with: nullbench edit --unit ${existing.serial} --move-to REVISION)`,
              '--unit',
            );
          if (existing) {
            unit = existing;
            said.push(`unit ${existing.serial} is there`);
          } else {
            unit = await service.invoke('createUnit', {
              revisionId: r.id,
              serial: values.unit,
              buildDate: values['build-date'] ?? '',
              builder: values.builder ?? '',
              notes: values['unit-notes'] ?? '',
            });
            said.push(`added unit ${unit.serial}`);
          }
        }
        if (values.json) io.out(machineJson({ design: d, revision: r ?? null, unit }, 2) + '\n');
        else io.out(`${said.join('; ')}.\n`);
      });
      return 0;
    } catch (e) {
      return reportError(e, io);
    }
  },
};

export const editCommand: Command = {
  name: 'edit',
  usage: `nullbench edit TARGET [changes] [--db FILE] [--json]

Targets (one):
  --design NAME                    a design;  changes: --rename NEW, --notes TEXT
  --design NAME --revision NAME    a revision;  changes: --rename NEW, --changes TEXT (what changed)
  --unit SERIAL                    a unit;  changes: --serial NEW, --build-date DATE, --builder NAME,
                                   --notes TEXT, --move-to REVISION (of the same design)
  --session ID                     a session;  changes: --emission dsb|usb|lsb (how the transmitter was set),
                                   --end (end it for good: nothing more is stored in it; refused while a
                                   running program reads it)
Options:
  --db FILE                        database (default: ${defaultDbPath()})
  --json                           print what was saved as JSON`,
  async run(argv, io) {
    try {
      const { values } = parseOptions(argv, {
        db: { type: 'string' },
        design: { type: 'string' },
        revision: { type: 'string' },
        unit: { type: 'string' },
        session: { type: 'string' },
        rename: { type: 'string' },
        notes: { type: 'string' },
        changes: { type: 'string' },
        serial: { type: 'string' },
        'build-date': { type: 'string' },
        builder: { type: 'string' },
        'move-to': { type: 'string' },
        emission: { type: 'string' },
        end: { type: 'boolean' },
        json: { type: 'boolean', default: false },
        help: { type: 'boolean', short: 'h', default: false },
      });
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      const targets = [
        values.design !== undefined,
        values.unit !== undefined,
        values.session !== undefined,
      ].filter(Boolean);
      if (targets.length !== 1)
        throw new BenchError(
          'EINVAL',
          'give exactly one of --design (with --revision), --unit or --session',
          'arguments',
        );
      const only = (allowed: string[], target: string) => {
        const given = [
          'rename',
          'notes',
          'changes',
          'serial',
          'build-date',
          'builder',
          'move-to',
          'emission',
          'end',
        ].filter((k) => values[k as keyof typeof values] !== undefined);
        const wrong = given.find((k) => !allowed.includes(k));
        if (wrong) throw new BenchError('EINVAL', `does not apply to ${target}`, `--${wrong}`);
        if (!given.length)
          throw new BenchError(
            'EINVAL',
            `nothing to change: give one of ${allowed.map((a) => `--${a}`).join(', ')}`,
            'arguments',
          );
      };
      await withRecords(values.db, async ({ store, service, records }) => {
        let out: unknown;
        let text: string;
        if (values.design !== undefined && values.revision === undefined) {
          only(['rename', 'notes'], 'a design');
          const d = records.findDesign(values.design, '--design');
          out = await service.invoke('updateDesign', {
            designId: d.id,
            name: values.rename,
            notes: values.notes,
          });
          text = `design "${(out as { name: string }).name}" saved`;
        } else if (values.design !== undefined) {
          only(['rename', 'changes'], 'a revision');
          const d = records.findDesign(values.design, '--design');
          const r = store
            .tree()
            .find((x) => x.id === d.id)!
            .revisions.find((x) => x.name === values.revision!.trim());
          if (!r)
            throw new BenchError(
              'ENOTFOUND',
              `no revision "${values.revision}" in design "${d.name}"`,
              '--revision',
            );
          out = await service.invoke('updateRevision', {
            revisionId: r.id,
            name: values.rename,
            changes: values.changes,
          });
          text = `revision ${(out as { name: string }).name} of "${d.name}" saved`;
        } else if (values.unit !== undefined) {
          only(['serial', 'build-date', 'builder', 'notes', 'move-to'], 'a unit');
          const u = records.unitBySerial(values.unit.trim(), '--unit');
          let revisionId: string | undefined;
          if (values['move-to'] !== undefined) {
            const designId = store.getRevision(u.revisionId).designId;
            const r = store
              .tree()
              .find((x) => x.id === designId)!
              .revisions.find((x) => x.name === values['move-to']!.trim());
            if (!r)
              throw new BenchError(
                'ENOTFOUND',
                `no revision "${values['move-to']}" in this unit's design`,
                '--move-to',
              );
            revisionId = r.id;
          }
          out = await service.invoke('updateUnit', {
            unitId: u.id,
            serial: values.serial,
            buildDate: values['build-date'],
            builder: values.builder,
            notes: values.notes,
            revisionId,
          });
          text = `unit ${(out as { serial: string }).serial} saved`;
        } else if (values.end) {
          only(['end'], 'a session being ended');
          const s = await service.invoke('endSessionById', { sessionId: values.session! });
          out = s;
          text = `session ${s.id} ended ${s.endedAt}`;
        } else {
          only(['emission'], 'a session');
          const e = values.emission!.trim().toLowerCase();
          if (!EMISSIONS.includes(e as Emission))
            throw new BenchError(
              'EINVAL',
              `must be one of ${EMISSIONS.join(', ')}, got "${values.emission}"`,
              '--emission',
            );
          out = await service.invoke('setEmission', { sessionId: values.session!, emission: e as Emission });
          text = `session ${values.session} is ${e.toUpperCase()}`;
        }
        io.out(values.json ? machineJson(out, 2) + '\n' : `${text}.\n`);
      });
      return 0;
    } catch (e) {
      return reportError(e, io);
    }
  },
};

/** Parses each group of option values with its call's schema; the first bad one is refused by its option name. */
function checkAll(
  groups: readonly (readonly [z.ZodType, Record<string, string | undefined>, Record<string, string>])[],
): void {
  for (const [schema, input, options] of groups) {
    const r = schema.safeParse(input);
    if (!r.success) {
      const issue = r.error.issues[0];
      const key = String(issue.path[0] ?? '');
      throw new BenchError('EINVAL', issue.message, options[key] ?? key);
    }
  }
}
