// Runs anywhere (app/ is runtime-free). The null navigator's calls: the fit of a session's kept carrier
// readings and the guide's next setting. Spread into CALLS (contract.ts); their results into CallResults
// (service.ts).
import { z } from 'zod';
import type { NullFitSummary, TrialSummary } from '../nullfit/align';
import { TrimPositionsSchema } from './schemas';

const NullArgs = z.object({
  /** Default: the open session. */
  sessionId: z.string().min(1).max(64).optional(),
  /** One trimmer's key (the others held) or two; default the session's first two trimmers. */
  trims: z.array(z.string().min(1).max(16)).min(1).max(2).optional(),
  /** Where the other trimmers are held; default where they stand now. */
  at: TrimPositionsSchema.optional(),
  /** Only kept readings with a larger id count: a fresh start after resoldering or a long break. */
  sinceId: z.number().int().min(0).optional(),
  /**
   * Repeatability of one reading, dB: the guide stops when the predicted gain is smaller. Default 0.3
   * (a meter in 1 dB steps: 1/√12 dB, plus a little noise).
   */
  uDb: z.number().min(0.05).max(10).optional(),
});

export const NULL_CALLS = {
  /** Fit the carrier null to a session's kept carrier readings (floor-limited ones as bounds). */
  nullFit: NullArgs,
  /** Guided alignment: the next setting to try, with its predicted level, or the advice to stop. */
  nextTrial: NullArgs,
} as const;

export type NullArgsInput = z.input<typeof NullArgs>;

export interface NullCallResults {
  nullFit: NullFitSummary;
  nextTrial: TrialSummary;
}

export type { CurvePoint, MapModel, NullFitSummary, TrialSummary } from '../nullfit/align';
