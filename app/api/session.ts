// Runs anywhere (app/ is runtime-free). The session calls: designs, revisions, units and sessions, the open
// session's live bench (tune, trimmers, keep, sweep), its readings, and the demo. Spread into CALLS
// (contract.ts); their results into CallResults (service.ts). main/service/session.ts implements them.
import { z } from 'zod';
import {
  DesignInputSchema,
  PointRoleSchema,
  RevisionInputSchema,
  SessionInputSchema,
  SessionSetupSchema,
  TrimPositionsSchema,
  UnitInputSchema,
} from './schemas';
import type { Series } from '../decimate';
import type { Design, Reading, Revision, Session, SessionSummary, Status, Tree, Unit } from './schemas';

const SessionRef = z.object({ sessionId: z.string().min(1).max(64) });

export const SESSION_CALLS = {
  status: z.object({}),
  tree: z.object({}),
  createDesign: DesignInputSchema,
  createRevision: RevisionInputSchema,
  createUnit: UnitInputSchema,
  createSession: SessionInputSchema,
  listSessions: z.object({ unitId: z.string().min(1).max(64).optional() }),
  getSession: SessionRef,
  /**
   * Make a session the active one and start reading the receiver live. An ended session is opened for
   * review only: its readings are shown and nothing new is stored in it.
   */
  openSession: SessionRef,
  closeSession: z.object({}),
  /** End the open session for good: stop reading and record its end. Its readings stay. */
  endSession: z.object({}),
  /**
   * Take an ended session up again and open it for reading: new readings join it, and its notes record
   * when it had ended and when it was continued.
   */
  continueSession: SessionRef,
  /**
   * End a session by its id, from outside the bench (the CLI): refused while a running program reads it.
   */
  endSessionById: SessionRef,
  /** Start (and open) a new session with the set-up of an earlier one: same unit, receiver, path and power. */
  repeatSession: SessionRef,
  /** Tune the receiver to one of the session's points. */
  tune: z.object({ role: PointRoleSchema }),
  /** Tell the bench where the trimmers now stand (the simulated bench moves its own). */
  setTrims: z.object({ trims: TrimPositionsSchema }),
  /** Keep the latest live reading as a point of the session, with the trimmer positions. */
  keep: z.object({
    note: z.string().max(400).default(''),
    /** Wait for the next settled reading after the last change of trimmers or tuning, then keep that one. */
    waitSettled: z.boolean().default(false),
  }),
  /** Simulated bench only: step one trimmer and keep a settled reading at each step. */
  sweep: z.object({
    trim: z.string().min(1).max(16),
    from: z.number().finite(),
    to: z.number().finite(),
    steps: z.number().int().min(2).max(200),
  }),
  /** Fill the database with the invented demo scenario (refused when it is already there). */
  loadDemo: z.object({}),
  readings: SessionRef.extend({
    keptOnly: z.boolean().default(false),
    limit: z.number().int().min(1).max(1e6).default(5000),
  }),
  /** A session's levels decimated for a chart: min and max per time bucket, so no null is averaged away. */
  series: SessionRef.extend({
    fromT: z.number().finite().optional(),
    toT: z.number().finite().optional(),
    buckets: z.number().int().min(1).max(5000).default(1000),
    role: PointRoleSchema.optional(),
  }),
  /**
   * Start a session by names: the design, revision and unit serial are found or created, and the session
   * stored, in one transaction, only after every check (the receiver safety check among them) has passed:
   * a refused set-up writes nothing. With `open` the session is opened for live reading at once.
   */
  startSession: SessionSetupSchema.extend({
    design: z.string().trim().min(1, 'must not be empty').max(120),
    revision: z.string().trim().min(1, 'must not be empty').max(60),
    serial: z.string().trim().min(1, 'must not be empty').max(60),
    open: z.boolean().default(false),
  }),
} as const;

export interface SweepResult {
  readings: Reading[];
}

export interface SessionCallResults {
  status: Status;
  tree: Tree;
  createDesign: Design;
  createRevision: Revision;
  createUnit: Unit;
  createSession: Session;
  startSession: Session;
  listSessions: SessionSummary[];
  getSession: Session;
  openSession: Session;
  closeSession: null;
  endSession: Session;
  continueSession: Session;
  endSessionById: Session;
  repeatSession: Session;
  tune: Status;
  setTrims: Status;
  keep: Reading;
  sweep: SweepResult;
  readings: Reading[];
  series: Series;
  loadDemo: { designId: string; units: number; sessions: number; keptReadings: number };
}
