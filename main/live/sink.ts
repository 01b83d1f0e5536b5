// Runs in Node. What the live loops write to, declared here so main/live/ stands below the store
// (docs/design.md § The house): the store implements these; a test or the demo may pass its own.
import type { PointRole, Reading, TrimPositions } from '../../app/api';
import type { PlanRun, PlanState, PointAverage } from '../../app/plan';

export interface NewReading {
  sessionId: string;
  t: number;
  freqHz: number;
  role: PointRole;
  raw: number;
  dbmRx: number;
  dbmDut: number;
  uDb: number;
  settled: boolean;
  kept: boolean;
  floorLimited: boolean;
  overload: boolean;
  trims: TrimPositions;
  /** The calibration and the path this reading was corrected with. */
  calibration: unknown;
  path: unknown[];
  note?: string;
  uid?: string;
}

/** Where the poller stores readings and the gaps of a broken link. */
export interface ReadingSink {
  addReading(r: NewReading): Reading;
  addGap(sessionId: string, tStartMs: number, code: string, message: string): number;
  closeGap(id: number, tEndMs: number): void;
}

/** Where a plan runner reads its run and records each point's state and average. */
export interface PlanRecorder {
  getRun(id: string): PlanRun;
  setState(id: string, state: PlanState, message?: string): void;
  completePoint(
    runId: string,
    idx: number,
    avg: PointAverage,
    readingIds: number[],
    tStartMs: number,
    tEndMs: number,
  ): void;
}
