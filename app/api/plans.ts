// Runs anywhere (app/ is runtime-free). The calls for frequency-stepped plans: start, cancel, resume, answer a
// manual step, and show runs with their result table. Spread into CALLS (contract.ts); their results into
// CallResults (service.ts). main/service/plans.ts implements them.
import { z } from 'zod';
import type { PlanRow, PlanReference, PlanRun } from '../plan';

const Id = z.string().min(1).max(64);

export const PLAN_CALLS = {
  /** Start a frequency-stepped plan on the open session (or open `sessionId` first). */
  planStart: z.object({ sessionId: Id.optional(), plan: z.unknown() }),
  planCancel: z.object({ planId: Id }),
  /** Continue a cancelled or interrupted plan at its first point not yet done. */
  planResume: z.object({ planId: Id }),
  /** Answer a manual step the plan waits for (unbalance the modulator, tune by hand): ok or stop. */
  planContinue: z.object({ planId: Id, ok: z.boolean().default(true) }),
  getPlan: z.object({ planId: Id }),
  listPlans: z.object({ sessionId: Id }),
} as const;

/** A plan run as the UI and CLI show it: the stored run, its result table, and what the runner is doing. */
export interface PlanView extends PlanRun {
  rows: PlanRow[];
  reference: PlanReference | null;
  /** Why there is no reference yet. */
  referenceReason: string | null;
  /** A runner is working on it in this process. */
  active: boolean;
  stage: string | null;
  /** A manual step it waits for. */
  waiting: { prompt: string; role: string; freqHz: number } | null;
}

export interface PlanCallResults {
  planStart: PlanView;
  planCancel: PlanView;
  planResume: PlanView;
  planContinue: PlanView;
  getPlan: PlanView;
  listPlans: PlanView[];
}
