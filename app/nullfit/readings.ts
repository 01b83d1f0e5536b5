// Runs anywhere (app/ is runtime-free). What the null fits share about readings: power in dB and mW,
// the measurement floor, and which readings are censored.
//
// A reading is the receiver's level: the residual carrier P and the receiver's own noise F add as powers,
// so the model of a reading is 10·log10(P + F). A reading at or just above F tells us little more than
// "the carrier is no louder than the floor": it enters the fit as censored, that is as the one-sided
// statement P ≤ max(reading, F), and is penalised only when the model puts the carrier above it.

import { BenchError, check } from '../errors';
import type { Loss } from './lm';

/** 10/ln 10: dB per neper of power. */
export const DB_PER_NP = 10 / Math.LN10;

export function dbmToMw(dbm: number): number {
  return Math.pow(10, dbm / 10);
}

export function mwToDbm(mw: number): number {
  return 10 * Math.log10(mw);
}

/** Options shared by the 1-D and 2-D fits. */
export interface FitOptions {
  /** Receiver measurement floor (its noise in the measurement bandwidth), dBm. Omit if unknown. */
  floorDbm?: number;
  /** Readings at or below floorDbm + censorMarginDb count as censored, dB ≥ 0; default 0.5. */
  censorMarginDb?: number;
  /** Robust loss on the dB residuals; default 'soft_l1'. */
  loss?: Loss;
  /** Loss scale: residuals beyond it weigh less than quadratically, dB > 0; default 1. */
  lossScaleDb?: number;
  /**
   * Standard uncertainty of one reading, dB ≥ 0; default 0.1. The spread used for intervals is never
   * taken smaller than this, so that a lucky near-perfect fit does not claim a needle-sharp interval.
   */
  uDb?: number;
  /** Confidence level of the intervals, 0.5–0.999; default 0.95. */
  level?: number;
}

export interface ResolvedFitOptions {
  floorDbm: number | null;
  floorMw: number;
  censorMarginDb: number;
  loss: Loss;
  lossScaleDb: number;
  uDb: number;
  level: number;
}

export function resolveFitOptions(opts: FitOptions | undefined, where: string): ResolvedFitOptions {
  const o = opts ?? {};
  const num = (v: unknown, name: string, min: number, max: number): void => {
    check(
      typeof v === 'number' && Number.isFinite(v) && v >= min && v <= max,
      `${where}.opts.${name}`,
      `must be a number between ${min} and ${max}, got ${String(v)}`,
    );
  };
  if (o.floorDbm !== undefined) num(o.floorDbm, 'floorDbm', -250, 100);
  if (o.censorMarginDb !== undefined) num(o.censorMarginDb, 'censorMarginDb', 0, 20);
  if (o.lossScaleDb !== undefined) num(o.lossScaleDb, 'lossScaleDb', 1e-3, 100);
  if (o.uDb !== undefined) num(o.uDb, 'uDb', 0, 20);
  if (o.level !== undefined) num(o.level, 'level', 0.5, 0.999);
  check(
    o.loss === undefined || o.loss === 'linear' || o.loss === 'soft_l1' || o.loss === 'huber',
    `${where}.opts.loss`,
    `must be 'linear', 'soft_l1' or 'huber', got ${String(o.loss)}`,
  );
  const floorDbm = o.floorDbm ?? null;
  return {
    floorDbm,
    floorMw: floorDbm === null ? 0 : dbmToMw(floorDbm),
    censorMarginDb: o.censorMarginDb ?? 0.5,
    loss: o.loss ?? 'soft_l1',
    lossScaleDb: o.lossScaleDb ?? 1,
    uDb: o.uDb ?? 0.1,
    level: o.level ?? 0.95,
  };
}

/** A reading checked and classified: censored readings carry the bound the carrier stays under. */
export interface Classified {
  dbm: number;
  censored: boolean;
  /** For censored readings: the carrier alone is at most this, dBm. */
  boundDbm: number;
}

export function classify(dbm: number, censored: boolean | undefined, o: ResolvedFitOptions): Classified {
  const atFloor = o.floorDbm !== null && dbm <= o.floorDbm + o.censorMarginDb;
  const isCensored = censored === true || atFloor;
  return { dbm, censored: isCensored, boundDbm: Math.max(dbm, o.floorDbm ?? -Infinity) };
}

/** Check that a field of a reading is a finite number. */
export function checkNumber(v: unknown, field: string): number {
  if (typeof v !== 'number' || !Number.isFinite(v)) {
    throw new BenchError('EINVAL', `must be a finite number, got ${String(v)}`, field);
  }
  return v;
}
