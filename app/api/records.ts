// Runs anywhere (app/ is runtime-free). The calls for keeping records over time: editing designs,
// revisions and units, session results with verdicts, revision comparison, limit sets, test sheets,
// exports and imports. contract.ts and service.ts take these in with one line each.
import { z } from 'zod';
import { EMISSIONS, SUPPRESSION_REFERENCES, type Emission, type SessionFigures } from '../analysis';
import type { ImportSummary } from '../bundle';
import type { Comparison } from '../compare';
import { CSV_SEPARATORS } from '../csv';
import { PAPERS } from '../paper';
import type { LimitSet, SetOutcome, Standing, Verdict } from '../limits';
import { BuildDate, type Design, type Reading, type Revision, type Unit } from './schemas';

const Id = z.string().min(1).max(64);
const Name = z.string().trim().min(1, 'must not be empty').max(120);
const Text = z.string().max(4000);
const Reference = z.enum(SUPPRESSION_REFERENCES, { error: 'must be one of tone, pep, unbalanced' });

/** Argument schema of every records call. */
export const RECORD_CALLS = {
  updateDesign: z.object({ designId: Id, name: Name.optional(), notes: Text.optional() }),
  updateRevision: z.object({ revisionId: Id, name: Name.optional(), changes: Text.optional() }),
  updateUnit: z.object({
    unitId: Id,
    serial: z.string().trim().min(1, 'must not be empty').max(60).optional(),
    buildDate: BuildDate.optional(),
    builder: z.string().max(120).optional(),
    notes: Text.optional(),
    /** move the unit to another revision of the same design */
    revisionId: Id.optional(),
  }),
  listUnits: z.object({ designId: Id.optional() }),
  setEmission: z.object({ sessionId: Id, emission: z.enum(EMISSIONS) }),
  /** The figures of one session and the verdicts against the given limit sets (default: its unit's sheet settings). */
  sessionResults: z.object({ sessionId: Id, limitSetIds: z.array(Id).max(20).optional() }),
  compareRevisions: z.object({ designId: Id, reference: Reference.default('pep') }),
  limitSets: z.object({}),
  /** A user limit set as app/limits validates it; a new one when `id` is absent. */
  saveLimitSet: z.object({ set: z.unknown() }),
  deleteLimitSet: z.object({ limitSetId: Id }),
  sheetSettings: z.object({ unitId: Id }),
  saveSheetSettings: z.object({
    unitId: Id,
    limitSetIds: z.array(Id).max(20).optional(),
    reference: Reference.optional(),
    sessionId: Id.nullable().optional(),
    notes: Text.optional(),
  }),
  /** The unit's test sheet as HTML (the desktop shell prints it with its own print-to-PDF). */
  sheetHtml: z.object({ unitId: Id, sessionId: Id.optional(), paper: z.enum(PAPERS).optional() }),
  /** The unit's test sheet as PDF, rendered by headless Chromium (web mode) or the desktop shell. */
  sheetPdf: z.object({ unitId: Id, sessionId: Id.optional(), paper: z.enum(PAPERS).optional() }),
  exportBundle: z.object({ designId: Id.optional() }),
  /** A bundle's text as read from the file: parsed, validated and merged in one transaction. */
  importBundle: z.object({ text: z.string().max(200 * 1024 * 1024) }),
  /**
   * One part of a bundle's text, for files larger than one request may carry (web mode): parts are kept
   * until the last arrives, then the whole text is imported as importBundle does. Parts of an upload that
   * stops coming are dropped after 10 minutes.
   */
  importBundlePart: z.object({
    uploadId: z.string().regex(/^[A-Za-z0-9_-]{8,64}$/, 'must be 8-64 letters, digits, _ or -'),
    part: z.number().int().min(0),
    parts: z.number().int().min(1).max(4096),
    text: z.string().max(1024 * 1024),
  }),
  exportCsv: z.object({
    designId: Id.optional(),
    unitId: Id.optional(),
    sessionId: Id.optional(),
    /** comma with a decimal point (default), or semicolon with a decimal comma */
    separator: z.enum(CSV_SEPARATORS).optional(),
  }),
} as const;

export interface UnitListing extends Unit {
  designId: string;
  design: string;
  revision: string;
  sessions: number;
  lastSessionAt: string | null;
}

export interface LimitSetEntry extends LimitSet {
  preset: boolean;
  createdAt: string | null;
  updatedAt: string | null;
}

export interface SheetSettings {
  unitId: string;
  limitSetIds: string[];
  reference: (typeof SUPPRESSION_REFERENCES)[number];
  /** null = the latest session with kept readings */
  sessionId: string | null;
  notes: string;
  updatedAt: string | null;
}

export interface SessionResults {
  sessionId: string;
  unitId: string;
  serial: string;
  emission: Emission;
  figures: SessionFigures;
  verdicts: (SetOutcome & { source: string; standing: Standing })[];
  kept: Reading[];
}

export interface DesignComparison extends Comparison {
  designId: string;
  design: string;
}

export interface SheetHtml {
  /** a whole document with its stylesheet inlined, ready to print */
  html: string;
  /** the sheet alone (an <article>), to show inside the app with sheet.css */
  fragment: string;
  fileName: string;
  sheetRef: string;
  overall: Verdict | 'not-applicable';
}

export interface RecordCallResults {
  updateDesign: Design;
  updateRevision: Revision;
  updateUnit: Unit;
  listUnits: UnitListing[];
  setEmission: { sessionId: string; emission: Emission };
  sessionResults: SessionResults;
  compareRevisions: DesignComparison;
  limitSets: LimitSetEntry[];
  saveLimitSet: LimitSetEntry;
  deleteLimitSet: null;
  sheetSettings: SheetSettings;
  saveSheetSettings: SheetSettings;
  sheetHtml: SheetHtml;
  sheetPdf: { base64: string; fileName: string; bytes: number };
  exportBundle: { json: string; fileName: string; counts: Record<string, number> };
  importBundle: ImportSummary;
  /** null until the last part has arrived */
  importBundlePart: ImportSummary | null;
  exportCsv: { csv: string; fileName: string; rows: number };
}
