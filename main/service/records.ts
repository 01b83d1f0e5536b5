// Runs in Node. The service's handlers for the records calls (app/api/records), over the store. Arguments arrive parsed by the contract's zod schemas.
import type { RecordCallResults } from '../../app/api/records';
import { BenchError } from '../../app/errors';
import { evaluateSet } from '../../app/limits';
import { sheetPdf, renderSheet } from '../sheet';
import type { GroupHandlers, ServiceContext } from './handlers';
import { formatBundle } from '../../app/bundle';
import { exportBundle, importBundle } from '../store/bundles';
import { readingsCsv } from '../store/csv';
import { Records } from '../store/records';
import { compareDesign, loadSessionResult } from '../sheet/results';

/** Bundle uploads in parts (web mode): the parts so far, and when the last one came. */
const UPLOAD_TTL_MS = 10 * 60_000;
const UPLOAD_MAX_CHARS = 200 * 1024 * 1024;
const MAX_UPLOADS = 4;
/** All the parts held for every upload at once: the server's memory is not a guesser's to fill. */
export const UPLOADS_MAX_CHARS_TOTAL = 256 * 1024 * 1024;

export class RecordCalls {
  private readonly uploads = new Map<string, { parts: (string | undefined)[]; chars: number; at: number }>();

  constructor(private readonly ctx: ServiceContext) {}

  handlers(): GroupHandlers<keyof RecordCallResults> {
    const { store, pdf } = this.ctx;
    const rec = new Records(store);
    const uploads = this.uploads;
    return {
      updateDesign: (a) => rec.updateDesign(a),
      updateRevision: (a) => rec.updateRevision(a),
      updateUnit: (a) => rec.updateUnit(a),
      listUnits: (a) => rec.listUnits(a.designId),
      setEmission: (a) => ({ sessionId: a.sessionId, emission: rec.setEmission(a.sessionId, a.emission) }),
      sessionResults: (a) => {
        const r = loadSessionResult(store, a.sessionId);
        const ids = a.limitSetIds ?? rec.sheetSettings(r.unit.id).limitSetIds;
        const verdicts = ids.map((id, i) => {
          const set = rec.limitSet(id, `limitSetIds[${i}]`);
          return {
            ...evaluateSet(set, r.figures, { carrierHz: r.session.carrierHz }),
            source: set.source,
            standing: set.standing,
          };
        });
        return {
          sessionId: r.session.id,
          unitId: r.unit.id,
          serial: r.unit.serial,
          emission: r.emission,
          figures: r.figures,
          verdicts,
          kept: store.readings(a.sessionId, { keptOnly: true }),
        };
      },
      compareRevisions: (a) => compareDesign(store, a.designId, a.reference),
      limitSets: () => rec.limitSets(),
      saveLimitSet: (a) => rec.saveLimitSet(a.set),
      deleteLimitSet: (a) => {
        rec.deleteLimitSet(a.limitSetId);
        return null;
      },
      sheetSettings: (a) => rec.sheetSettings(a.unitId),
      saveSheetSettings: (a) => rec.saveSheetSettings(a),
      sheetHtml: (a) => {
        const { model: _model, ...rest } = renderSheet(store, a.unitId, {
          sessionId: a.sessionId,
          paper: a.paper,
        });
        return rest;
      },
      sheetPdf: async (a) => {
        const r = await sheetPdf(store, a.unitId, { sessionId: a.sessionId, paper: a.paper }, pdf());
        return {
          base64: Buffer.from(r.pdf).toString('base64'),
          fileName: r.fileName,
          bytes: r.pdf.byteLength,
        };
      },
      exportBundle: (a) => {
        const b = exportBundle(store, a.designId);
        const json = formatBundle(b);
        const name = b.scope.design ? `design-${b.scope.design}` : 'all';
        return {
          json,
          fileName: `nullbench-bundle-${name.replace(/[^A-Za-z0-9._-]+/g, '_')}.json`,
          counts: {
            designs: b.designs.length,
            revisions: b.revisions.length,
            units: b.units.length,
            sessions: b.sessions.length,
            readings: b.readings.length,
          },
        };
      },
      importBundle: (a) => importBundle(store, a.text),
      importBundlePart: (a) => {
        const now = Date.now();
        for (const [id, u] of uploads) if (now - u.at > UPLOAD_TTL_MS) uploads.delete(id);
        let u = uploads.get(a.uploadId);
        // Every check of this part comes before it takes a slot or any memory.
        if (a.part >= a.parts) throw new BenchError('EINVAL', `must be below ${a.parts}`, 'part');
        if (u && u.parts.length !== a.parts)
          throw new BenchError('EINVAL', `this upload has ${u.parts.length} parts, not ${a.parts}`, 'parts');
        const grows = a.text.length - (u?.parts[a.part]?.length ?? 0);
        if ((u?.chars ?? 0) + grows > UPLOAD_MAX_CHARS) {
          uploads.delete(a.uploadId);
          throw new BenchError('EINVAL', 'the bundle is larger than 200 MB', 'text');
        }
        let held = 0;
        for (const x of uploads.values()) held += x.chars;
        if (held + grows > UPLOADS_MAX_CHARS_TOTAL)
          throw new BenchError(
            'ECONFLICT',
            'imports under way already hold 256 MB: wait for one to finish',
            'uploadId',
          );
        if (!u && uploads.size >= MAX_UPLOADS)
          throw new BenchError(
            'ECONFLICT',
            `${MAX_UPLOADS} imports are already under way: wait for one to finish`,
            'uploadId',
          );
        if (!u) {
          u = { parts: new Array<string | undefined>(a.parts).fill(undefined), chars: 0, at: now };
          uploads.set(a.uploadId, u);
        }
        u.chars += grows;
        u.parts[a.part] = a.text;
        u.at = now;
        if (u.parts.some((p) => p === undefined)) return null;
        uploads.delete(a.uploadId);
        return importBundle(store, u.parts.join(''));
      },
      exportCsv: ({ separator, ...scope }) => readingsCsv(store, scope, separator),
    };
  }
}
