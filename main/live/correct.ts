// Runs in Node (pure). Turns a raw source value into dBm at the receiver (calibration) and at the
// transmitter output (path), with the combined standard uncertainty, and flags floor and overload.
import {
  applyCalibration,
  iaruR1Calibration,
  validateCalibration,
  type Calibration,
} from '../../app/calibration';
import { analysePath, validatePath, type PathElement } from '../../app/path';
import { BenchError } from '../../app/errors';
import type { RawSample } from '../sources/types';

export interface Corrected {
  dbmRx: number;
  dbmDut: number;
  /** Combined standard uncertainty of dbmDut, dB (k = 1): calibration, meter step, path, root-sum-square. */
  uDb: number;
  floorLimited: boolean;
  overload: boolean;
}

export interface CorrectorOptions {
  /** Stored calibration, or null for the IARU R.1 default. */
  calibration: unknown | null;
  path: unknown[];
  /** Receiver's meter step, dB (quantisation adds step/√12). */
  stepDb?: number;
  /** Receiver input above which the reading is flagged as near overload, dBm. */
  overloadDbm?: number;
  /** Receiver noise floor, dBm: readings within 3 dB of it are bounds, not values. */
  noiseFloorDbm?: number;
}

export class Corrector {
  readonly calibration: Calibration;
  readonly path: PathElement[];
  readonly pathLossDb: number;
  private readonly pathUDb: number;
  private readonly stepUDb: number;

  constructor(private readonly opts: CorrectorOptions) {
    this.calibration = opts.calibration == null ? iaruR1Calibration() : validateCalibration(opts.calibration);
    this.path = validatePath(opts.path);
    const p = analysePath(this.path);
    this.pathLossDb = p.lossDb;
    this.pathUDb = p.uDb;
    this.stepUDb = (opts.stepDb ?? 1) / Math.sqrt(12);
  }

  correct(s: RawSample): Corrected {
    if (s.quantity !== this.calibration.quantity) {
      throw new BenchError(
        'EINVAL',
        `the source reports "${s.quantity}" but the calibration "${this.calibration.name}" maps "${this.calibration.quantity}"`,
        'calibration.quantity',
      );
    }
    const c = applyCalibration(this.calibration, s.raw, s.freqHz);
    const dbmRx = c.dbm;
    const dbmDut = dbmRx + this.pathLossDb;
    const uDb = Math.sqrt(c.uDb ** 2 + this.stepUDb ** 2 + this.pathUDb ** 2);
    const nearFloor = this.opts.noiseFloorDbm !== undefined && dbmRx <= this.opts.noiseFloorDbm + 3;
    const { lowest, highest } = this.scaleEnds(s.freqHz);
    // A reading at the bottom of the calibrated scale is a meter at rest (a floor: the level is at most this), one
    // at its top a meter pegged (the level may be anything above): both are flagged, not quoted as measured.
    const clampedLow = c.dbm <= lowest;
    const overload =
      (c.clamped && !clampedLow) ||
      (dbmRx >= highest && !clampedLow) ||
      (this.opts.overloadDbm !== undefined && dbmRx >= this.opts.overloadDbm);
    return { dbmRx, dbmDut, uDb, floorLimited: nearFloor || clampedLow, overload };
  }

  private scaleEnds(freqHz: number): { lowest: number; highest: number } {
    const band =
      this.calibration.bands.find((b) => freqHz >= b.fromHz && freqHz < b.toHz) ?? this.calibration.bands[0];
    return { lowest: band.points[0].dbm, highest: band.points[band.points.length - 1].dbm };
  }
}
