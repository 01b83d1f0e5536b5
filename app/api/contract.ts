// Runs anywhere (app/ is runtime-free). The service contract: every call and every event,
// each with a zod schema for its argument. Shells parse arguments with these before any handler runs.
import { z } from 'zod';
import {
  DesignInputSchema,
  PointRoleSchema,
  RevisionInputSchema,
  SessionInputSchema,
  TrimPositionsSchema,
  UnitInputSchema,
} from './schemas';
import { RECORD_CALLS } from './records';
import { RECEIVER_CALLS } from './rxcalls';
import { NULL_CALLS } from './nullcalls';
import { SPECTRUM_CALLS } from './spectrumcalls';

const SessionRef = z.object({ sessionId: z.string().min(1).max(64) });

/** Argument schema of every call. The result types live in `ServiceApi` below. */
export const CALLS = {
  ...RECORD_CALLS,
  status: z.object({}),
  tree: z.object({}),
  createDesign: DesignInputSchema,
  createRevision: RevisionInputSchema,
  createUnit: UnitInputSchema,
  createSession: SessionInputSchema,
  listSessions: z.object({ unitId: z.string().min(1).max(64).optional() }),
  getSession: SessionRef,
  /** Make a session the active one and start reading the receiver live. */
  openSession: SessionRef,
  closeSession: z.object({}),
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
  ...RECEIVER_CALLS,
  ...NULL_CALLS,
  ...SPECTRUM_CALLS,
} as const;

export type CallName = keyof typeof CALLS;
export type CallArgs<K extends CallName> = z.input<(typeof CALLS)[K]>;
export type ParsedArgs<K extends CallName> = z.output<(typeof CALLS)[K]>;

export const EVENTS = ['reading', 'status', 'progress', 'notice', 'spectrum'] as const;
export type EventName = (typeof EVENTS)[number];

export interface ProgressEvent {
  task: string;
  done: number;
  total: number;
  message: string;
}
export interface NoticeEvent {
  level: 'info' | 'warn' | 'error';
  code?: string;
  message: string;
}

/** What a call returns on the wire: only the error's code, field and message cross a process boundary. */
export type CallResult<T> =
  { ok: true; value: T } | { ok: false; code: string; message: string; field?: string };

export function isCallName(name: string): name is CallName {
  return Object.prototype.hasOwnProperty.call(CALLS, name);
}
