// Runs anywhere (app/ is runtime-free). The data shapes of the service contract, as zod schemas.
// Both shells and the renderer use these; the main side parses every argument with them.
import { z } from 'zod';

/** Role of a frequency point relative to the carrier (docs/design.md § Vocabulary). */
export const POINT_ROLES = [
  'carrier',
  'upper',
  'lower',
  'imd3u',
  'imd3l',
  'imd5u',
  'imd5l',
  'h2',
  'h3',
  'h4',
  'h5',
  'reference',
  'floor',
] as const;
export const PointRoleSchema = z.enum(POINT_ROLES);
export type PointRole = z.infer<typeof PointRoleSchema>;

export const ROLE_LABELS: Record<PointRole, string> = {
  carrier: 'Carrier',
  upper: 'Upper tone',
  lower: 'Lower tone',
  imd3u: 'IMD3 upper',
  imd3l: 'IMD3 lower',
  imd5u: 'IMD5 upper',
  imd5l: 'IMD5 lower',
  h2: '2nd harmonic',
  h3: '3rd harmonic',
  h4: '4th harmonic',
  h5: '5th harmonic',
  reference: 'Reference (unbalanced carrier)',
  floor: 'Receiver floor',
};

/** Frequency of a point, Hz, from the carrier and the (audio) tone offset. */
export function roleFrequencyHz(role: PointRole, carrierHz: number, toneHz: number): number {
  switch (role) {
    case 'carrier':
    case 'reference':
      return carrierHz;
    case 'upper':
      return carrierHz + toneHz;
    case 'lower':
      return carrierHz - toneHz;
    case 'imd3u':
      return carrierHz + 3 * toneHz;
    case 'imd3l':
      return carrierHz - 3 * toneHz;
    case 'imd5u':
      return carrierHz + 5 * toneHz;
    case 'imd5l':
      return carrierHz - 5 * toneHz;
    case 'h2':
      return 2 * carrierHz;
    case 'h3':
      return 3 * carrierHz;
    case 'h4':
      return 4 * carrierHz;
    case 'h5':
      return 5 * carrierHz;
    case 'floor':
      // A quiet spot well away from the carrier and its products.
      return carrierHz + 10 * toneHz;
  }
}

const Id = z.string().min(1).max(64);
const Name = z.string().trim().min(1, 'must not be empty').max(120);
const Text = z.string().max(4000);

export const TrimDefSchema = z.object({
  /** Short key used in stored positions, e.g. "A". */
  key: z.string().regex(/^[A-Za-z][A-Za-z0-9_]{0,15}$/, 'must be a short name of letters and digits'),
  /** What the builder calls it, e.g. "balance R". */
  label: z.string().trim().min(1).max(60),
  /** The user's unit: turns, degrees, steps, ... */
  unit: z.string().trim().min(1).max(20),
  min: z.number().finite(),
  max: z.number().finite(),
  /** Smallest step the builder can set and read, in the unit; the guide rounds to it (default 1/2000 of the travel). */
  step: z.number().positive().finite().optional(),
});
export type TrimDef = z.infer<typeof TrimDefSchema>;

export const TrimPositionsSchema = z.record(z.string(), z.number().finite());
export type TrimPositions = z.infer<typeof TrimPositionsSchema>;

/** Which source reads the receiver; `spec` as on the CLI, e.g. "sim", "sim:seed=7", "net:127.0.0.1:4532". */
export const SourceSpecSchema = z.string().trim().min(1).max(300);

export const ReceiverProfileSchema = z.object({
  name: Name,
  source: SourceSpecSchema,
  /** Calibration as stored by app/calibration (validated there); null = IARU R.1 default. */
  calibration: z.unknown().nullable().default(null),
  bandwidthHz: z.number().positive().max(1e6),
  /** Rated maximum input at the antenna socket, dBm: the app refuses set-ups above it. */
  maxInputDbm: z.number().min(-60).max(50),
  /** Serial sources: the command-set template, by name or in full; the session keeps a full copy. */
  template: z.unknown().optional(),
});
export type ReceiverProfile = z.infer<typeof ReceiverProfileSchema>;

export const DesignInputSchema = z.object({ name: Name, notes: Text.default('') });
export const RevisionInputSchema = z.object({ designId: Id, name: Name, changes: Text.default('') });
/** A real calendar day written YYYY-MM-DD (ISO 8601): 2026-13-45 and 2026-02-30 are refused. */
export function isCalendarDate(text: string): boolean {
  if (!/^\d{4}-\d{2}-\d{2}$/.test(text)) return false;
  const t = Date.parse(`${text}T00:00:00Z`);
  return Number.isFinite(t) && new Date(t).toISOString().slice(0, 10) === text;
}

/** When a unit was built: empty, or a calendar day. */
export const BuildDate = z
  .string()
  .trim()
  .max(40)
  .refine(
    (s) => s === '' || isCalendarDate(s),
    'must be a date written YYYY-MM-DD (e.g. 2026-03-14), or empty',
  );

export const UnitInputSchema = z.object({
  revisionId: Id,
  serial: z.string().trim().min(1).max(60),
  buildDate: BuildDate.default(''),
  builder: z.string().max(120).default(''),
  notes: Text.default(''),
});

/** What a session is set up with, apart from the unit it measures. */
export const SessionSetupSchema = z.object({
  receiver: ReceiverProfileSchema,
  /** Signal path DUT -> receiver, elements as app/path validates them. */
  path: z.array(z.unknown()).max(20),
  carrierHz: z.number().positive().max(6e9),
  toneHz: z.number().positive().max(100e3),
  /** Declared transmitter peak envelope power, dBm (for the receiver safety check). */
  txPepDbm: z.number().min(-30).max(70),
  operator: z.string().max(120).default(''),
  notes: Text.default(''),
  trims: z.array(TrimDefSchema).min(1).max(4),
});
export const SessionInputSchema = SessionSetupSchema.extend({ unitId: Id });
export type SessionInput = z.infer<typeof SessionInputSchema>;

export const DesignSchema = z.object({ id: Id, name: z.string(), notes: z.string(), createdAt: z.string() });
export const RevisionSchema = z.object({
  id: Id,
  designId: Id,
  name: z.string(),
  changes: z.string(),
  createdAt: z.string(),
});
export const UnitSchema = z.object({
  id: Id,
  revisionId: Id,
  serial: z.string(),
  buildDate: z.string(),
  builder: z.string(),
  notes: z.string(),
  createdAt: z.string(),
});
export type Design = z.infer<typeof DesignSchema>;
export type Revision = z.infer<typeof RevisionSchema>;
export type Unit = z.infer<typeof UnitSchema>;

export const SessionSchema = z.object({
  id: Id,
  unitId: Id,
  receiver: ReceiverProfileSchema,
  path: z.array(z.unknown()),
  carrierHz: z.number(),
  toneHz: z.number(),
  txPepDbm: z.number(),
  operator: z.string(),
  notes: z.string(),
  trims: z.array(TrimDefSchema),
  startedAt: z.string(),
  endedAt: z.string().nullable(),
  /** Receiver input at PEP computed from the declared power and the path, dBm. */
  rxPepDbm: z.number(),
});
export type Session = z.infer<typeof SessionSchema>;

export const SessionSummarySchema = z.object({
  id: Id,
  unitId: Id,
  serial: z.string(),
  revision: z.string(),
  design: z.string(),
  startedAt: z.string(),
  /** When the session was ended; null while it may still take readings. */
  endedAt: z.string().nullable(),
  operator: z.string(),
  readings: z.number(),
  kept: z.number(),
  bestCarrierDbm: z.number().nullable(),
});
export type SessionSummary = z.infer<typeof SessionSummarySchema>;

export const ReadingSchema = z.object({
  id: z.number().int(),
  sessionId: Id,
  t: z.number(),
  freqHz: z.number(),
  role: PointRoleSchema,
  raw: z.number(),
  dbmRx: z.number(),
  dbmDut: z.number(),
  /** Combined standard uncertainty of dbmDut, dB (k = 1). */
  uDb: z.number(),
  settled: z.boolean(),
  kept: z.boolean(),
  trims: TrimPositionsSchema,
  /** The receiver's meter was at or below its noise floor: the true level is at most this. */
  floorLimited: z.boolean(),
  /** Near or in overload: the reading may read low. */
  overload: z.boolean(),
  note: z.string(),
});
export type Reading = z.infer<typeof ReadingSchema>;

/** A live reading before (or without) storage. */
export const LiveReadingSchema = ReadingSchema.omit({
  id: true,
  sessionId: true,
  kept: true,
  note: true,
}).extend({
  id: z.number().int().nullable(),
  sessionId: Id.nullable(),
  spreadDb: z.number(),
});
export type LiveReading = z.infer<typeof LiveReadingSchema>;

export const TreeSchema = z.array(
  DesignSchema.extend({
    revisions: z.array(RevisionSchema.extend({ units: z.array(UnitSchema) })),
  }),
);
export type Tree = z.infer<typeof TreeSchema>;

export const StatusSchema = z.object({
  version: z.string(),
  mode: z.enum(['desktop', 'web', 'cli']),
  dbPath: z.string(),
  activeSessionId: Id.nullable(),
  /** The open session has ended: it is shown for review, and nothing new is stored in it. */
  sessionEnded: z.boolean(),
  live: z.boolean(),
  source: z.string().nullable(),
  tunedRole: PointRoleSchema.nullable(),
  trims: TrimPositionsSchema,
  lastError: z.string().nullable(),
  /**
   * The rule by which this bench stops reading on its own: after this many seconds with no window open on
   * it (web mode), so an unattended server does not store readings for nobody. Null where the owner is the
   * window or the process itself (desktop: closing the window ends the app; CLI: the command runs as long
   * as it is asked to).
   */
  unattendedStopS: z.number().nullable(),
  /** Reading was stopped by that rule; the next call from a window resumes the session. */
  pausedSessionId: Id.nullable(),
  /**
   * What the open session's source can do, as its driver declares it (main/sources): the renderer reads
   * this, never the spec string. Null with no session open.
   */
  sourceCaps: z
    .object({
      tune: z.boolean(),
      trims: z.boolean(),
      unbalance: z.boolean(),
      template: z.boolean(),
      simulated: z.boolean(),
    })
    .nullable(),
});
export type Status = z.infer<typeof StatusSchema>;
