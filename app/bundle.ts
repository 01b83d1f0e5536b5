// Runs anywhere (app/ is runtime-free). The bundle: everything one bench knows (or one design of it) as
// one JSON file keyed by stable IDs, so benches can move designs and sessions between databases and merge
// them without duplicates. This file is the shape; main/store/bundles.ts reads and writes it.
import { z } from 'zod';
import { EMISSIONS, SUPPRESSION_REFERENCES } from './analysis';
import {
  BuildDate,
  isCalendarDate,
  PointRoleSchema,
  ReceiverProfileSchema,
  TrimDefSchema,
  TrimPositionsSchema,
} from './api/schemas';
import { LimitSetSchema } from './limits';

export const BUNDLE_FORMAT = 'nullbench-bundle';
export const BUNDLE_VERSION = 1;

const Id = z.string().min(1, 'must not be empty').max(64);
const Text = z.string().max(4000);
const Name = z.string().trim().min(1, 'must not be empty').max(120);
const Num = z.number({ error: 'must be a finite number' });
/** A moment as the store writes it: ISO 8601 in UTC, a real calendar day and time. */
const When = z
  .string()
  .max(40)
  .refine(
    (s) =>
      /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}(\.\d{1,3})?Z$/.test(s) &&
      isCalendarDate(s.slice(0, 10)) &&
      Number.isFinite(Date.parse(s)),
    { error: 'must be a time in ISO 8601 UTC, e.g. 2026-03-14T19:40:00.000Z' },
  );
/**
 * A level in dBm that a bench can meet: from far below any receiver's floor to 10 MW. A value outside is a
 * damaged or hand-edited file, refused like a live reading would be.
 */
const Dbm = Num.min(-300, 'must be at least -300 dBm').max(100, 'must be at most +100 dBm (10 MW)');
/** A reading's time, ms since 1970: between 1970 and the year 3000. */
const Ms = Num.min(0, 'must be a time after 1970 (ms)').max(
  32_503_680_000_000,
  'must be a time before 3000 (ms)',
);

export const BundleDesignSchema = z.strictObject({ id: Id, name: Name, notes: Text, createdAt: When });
export const BundleRevisionSchema = z.strictObject({
  id: Id,
  designId: Id,
  name: Name,
  changes: Text,
  createdAt: When,
});
export const BundleUnitSchema = z.strictObject({
  id: Id,
  revisionId: Id,
  serial: z.string().trim().min(1, 'must not be empty').max(60),
  buildDate: BuildDate,
  builder: z.string().max(120),
  notes: Text,
  createdAt: When,
});
export const BundleSessionSchema = z.strictObject({
  id: Id,
  unitId: Id,
  receiver: ReceiverProfileSchema,
  path: z.array(z.unknown()).max(20),
  carrierHz: Num.positive().max(1e12),
  toneHz: Num.positive().max(1e9),
  txPepDbm: Dbm,
  rxPepDbm: Dbm,
  operator: z.string().max(120),
  notes: Text,
  trims: z.array(TrimDefSchema).min(1).max(4),
  startedAt: When,
  endedAt: When.nullable(),
  emission: z.enum(EMISSIONS),
});
/** A calibration + path pair that corrected readings, keyed by the SHA-256 of its stored text. */
export const BundleCorrectionSchema = z.strictObject({
  digest: z.string().regex(/^[0-9a-f]{64}$/, 'must be 64 hex digits (SHA-256)'),
  calibration: z.unknown(),
  path: z.array(z.unknown()),
});
export const BundleReadingSchema = z.strictObject({
  uid: Id,
  sessionId: Id,
  t: Ms,
  freqHz: Num.min(0).max(1e12),
  role: PointRoleSchema,
  raw: Num.min(-1e6).max(1e6),
  dbmRx: Dbm,
  dbmDut: Dbm,
  uDb: Num.min(0).max(100, 'must be at most 100 dB'),
  settled: z.boolean(),
  kept: z.boolean(),
  floorLimited: z.boolean(),
  overload: z.boolean(),
  trims: TrimPositionsSchema,
  correction: z.string().regex(/^[0-9a-f]{64}$/, 'must be the digest of one of the corrections'),
  note: z.string().max(400),
});
export const BundleGapSchema = z.strictObject({
  sessionId: Id,
  tStartMs: Ms,
  tEndMs: Ms.nullable(),
  code: z.string().max(20),
  message: z.string().max(2000),
});
export const BundleLimitSetSchema = LimitSetSchema.extend({ createdAt: When, updatedAt: When });
export const BundleSheetSchema = z.strictObject({
  unitId: Id,
  limitSetIds: z.array(Id).max(20),
  reference: z.enum(SUPPRESSION_REFERENCES),
  sessionId: Id.nullable(),
  notes: Text,
  updatedAt: When,
});

export const BundleSchema = z.strictObject({
  format: z.literal(BUNDLE_FORMAT, { error: `must be "${BUNDLE_FORMAT}"` }),
  version: z.literal(BUNDLE_VERSION, { error: `must be ${BUNDLE_VERSION}` }),
  /** what was exported: every design, or the one named */
  scope: z.strictObject({ design: z.string().nullable() }),
  designs: z.array(BundleDesignSchema),
  revisions: z.array(BundleRevisionSchema),
  units: z.array(BundleUnitSchema),
  sessions: z.array(BundleSessionSchema),
  corrections: z.array(BundleCorrectionSchema),
  readings: z.array(BundleReadingSchema),
  gaps: z.array(BundleGapSchema),
  limitSets: z.array(BundleLimitSetSchema),
  sheets: z.array(BundleSheetSchema),
});

export type Bundle = z.infer<typeof BundleSchema>;
export type BundleSession = z.infer<typeof BundleSessionSchema>;
export type BundleReading = z.infer<typeof BundleReadingSchema>;

/** What an import did: how many records of each kind were added, already there, or kept as they were here. */
export interface ImportSummary {
  added: Record<BundleKind, number>;
  unchanged: Record<BundleKind, number>;
  /** Records here that differ from the bundle's: the local one is kept. One line each. */
  keptLocal: string[];
  /** Bundle records matched to local ones by name or serial (different IDs): one line each. */
  matchedByName: string[];
}

export const BUNDLE_KINDS = [
  'designs',
  'revisions',
  'units',
  'sessions',
  'readings',
  'gaps',
  'limitSets',
  'sheets',
] as const;
export type BundleKind = (typeof BUNDLE_KINDS)[number];

/**
 * Writes a bundle with one record per line inside each list, so a diff or an error message points at a
 * record, and the same content always gives the same bytes.
 */
export function formatBundle(b: Bundle): string {
  const head = `{\n  "format": ${JSON.stringify(b.format)},\n  "version": ${b.version},\n  "scope": ${JSON.stringify(b.scope)}`;
  const lists = (
    [
      'designs',
      'revisions',
      'units',
      'sessions',
      'corrections',
      'readings',
      'gaps',
      'limitSets',
      'sheets',
    ] as const
  ).map((k) => {
    const items = b[k] as unknown[];
    if (!items.length) return `  ${JSON.stringify(k)}: []`;
    return `  ${JSON.stringify(k)}: [\n${items.map((x) => `    ${JSON.stringify(x)}`).join(',\n')}\n  ]`;
  });
  return `${head},\n${lists.join(',\n')}\n}\n`;
}
