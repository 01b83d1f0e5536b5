// Runs anywhere (app/ is runtime-free). Stored receiver profiles (driver + connection + calibration + bandwidth +
// rated maximum input), the default calibration for each kind of reading, and the guided-calibration steps.
import { z } from 'zod';
import {
  iaruR1Calibration,
  validateCalibration,
  type Calibration,
  type CalibrationQuantity,
} from './calibration';
import { BenchError } from './errors';
import { R1_DB_PER_S, R1_S9_HF_DBM, R1_S9_VHF_DBM } from './levels';
import { TOP_HZ, R1_DEFAULT_U_DB } from './calibration';

const Name = z
  .string({ error: 'must be text' })
  .trim()
  .min(1, 'must not be empty')
  .max(120, 'must be at most 120 characters');

/** What the user saves as a receiver: everything a session needs to read it. */
export const ReceiverInputSchema = z.strictObject({
  /** Replaces the profile with this id; absent: a new profile. */
  id: z.string().min(1).max(64).optional(),
  name: Name,
  /** Source spec as on the command line: "net:127.0.0.1:4532", "serial:/dev/ttyUSB0@38400", "sim". */
  source: z.string({ error: 'must be text' }).trim().min(1, 'must not be empty').max(300),
  /** Serial command-set template name (serial sources only). */
  template: z.string().trim().min(1).max(40).nullable().default(null),
  /** Calibration table (app/calibration); null: the IARU R.1 default for the source's kind of reading. */
  calibration: z.unknown().nullable().default(null),
  bandwidthHz: z
    .number({ error: 'must be a number (Hz)' })
    .positive('must be above 0 Hz')
    .max(1e6, 'must be <= 1 MHz'),
  /** Rated maximum input at the antenna socket, dBm (from the receiver's manual). */
  maxInputDbm: z
    .number({ error: 'must be a number (dBm)' })
    .min(-60, 'must be >= -60 dBm')
    .max(50, 'must be <= +50 dBm'),
  notes: z.string().max(4000).default(''),
});
export type ReceiverInput = z.input<typeof ReceiverInputSchema>;

export interface StoredReceiver {
  id: string;
  name: string;
  source: string;
  template: string | null;
  calibration: Calibration | null;
  bandwidthHz: number;
  maxInputDbm: number;
  notes: string;
  /** The guided-calibration injections the current table was fitted from, if any. */
  injections: InjectionRecord[];
  createdAt: string;
  updatedAt: string;
}

/** One guided-calibration step as stored: the generator level, the pad, and what the receiver read. */
export const InjectionSchema = z.strictObject({
  freqHz: z.number({ error: 'must be a number (Hz)' }).positive('must be above 0 Hz').max(300e9),
  generatorDbm: z
    .number({ error: 'must be a number (dBm)' })
    .min(-200)
    .max(60, 'must be <= +60 dBm for a signal generator'),
  padDb: z.number({ error: 'must be a number (dB)' }).min(0, 'must be >= 0 dB').max(150, 'must be <= 150 dB'),
  raw: z.number({ error: 'must be a number' }).finite(),
  /** Readings averaged into raw, and their spread (largest - smallest). */
  n: z.number().int().min(1).default(1),
  spread: z.number().min(0).default(0),
});
export type InjectionRecord = z.output<typeof InjectionSchema>;

/**
 * R.1 in S-units: dBm = S9 + (S - 9) x 6 dB, S9 = -73 dBm below 30 MHz and -93 dBm from 144 MHz (IARU Region 1
 * Technical Recommendation R.1). Points from S0 to S19 (= S9 + 60 dB); beyond, clamped.
 */
export function iaruR1SUnitCalibration(between30and144MHz: 'hf' | 'vhf' = 'hf'): Calibration {
  const points = (s9: number) => [
    { raw: 0, dbm: s9 - 9 * R1_DB_PER_S },
    { raw: 9, dbm: s9 },
    { raw: 19, dbm: s9 + 10 * R1_DB_PER_S },
  ];
  const mid = between30and144MHz === 'hf' ? R1_S9_HF_DBM : R1_S9_VHF_DBM;
  return validateCalibration({
    name: `IARU R.1 default in S-units (${between30and144MHz === 'hf' ? 'HF' : 'VHF'} S9 for 30-144 MHz)`,
    quantity: 's-units',
    bands: [
      { fromHz: 0, toHz: 30e6, points: points(R1_S9_HF_DBM) },
      { fromHz: 30e6, toHz: 144e6, points: points(mid) },
      { fromHz: 144e6, toHz: TOP_HZ, points: points(R1_S9_VHF_DBM) },
    ],
    uDb: R1_DEFAULT_U_DB,
    note: 'IARU Region 1 Technical Recommendation R.1: 6 dB per S-unit, S9 = -73 dBm below 30 MHz, -93 dBm from 144 MHz.',
  });
}

/** A receiver that already reports dBm: the identity, over the span of any plausible input. */
export function identityDbmCalibration(): Calibration {
  return validateCalibration({
    name: 'receiver reports dBm (no correction)',
    quantity: 'dbm',
    bands: [
      {
        fromHz: 0,
        toHz: TOP_HZ,
        points: [
          { raw: -200, dbm: -200 },
          { raw: 60, dbm: 60 },
        ],
      },
    ],
    uDb: 1,
    note: 'The receiver reports dBm itself; its own accuracy applies (1 dB assumed, from memory of common practice).',
  });
}

/**
 * The calibration used when a receiver has none of its own, by what its readings are: R.1 for dB relative to
 * S9 and for S-units, the identity for dBm. Raw counts have no default: they mean nothing without a table.
 */
export function defaultCalibrationFor(quantity: CalibrationQuantity): Calibration {
  switch (quantity) {
    case 'strength-db':
      return iaruR1Calibration();
    case 's-units':
      return iaruR1SUnitCalibration();
    case 'dbm':
      return identityDbmCalibration();
    case 'raw':
      throw new BenchError(
        'EINVAL',
        'this receiver reports raw counts, which mean nothing without a calibration table: run a guided ' +
          'calibration (signal generator through a known pad) or give a table',
        'calibration',
      );
  }
}

/** The calibration a session will use: the profile's own (checked against what the source reports) or the default. */
export function calibrationFor(own: unknown, quantity: CalibrationQuantity): Calibration {
  if (own == null) return defaultCalibrationFor(quantity);
  const cal = validateCalibration(own);
  if (cal.quantity !== quantity)
    throw new BenchError(
      'EINVAL',
      `the calibration "${cal.name}" maps ${cal.quantity}, but this receiver reports ${quantity}`,
      'calibration.quantity',
    );
  return cal;
}

/**
 * A calibration with one band fitted afresh (a guided calibration on one band): bands it overlaps are cut back
 * at its edges (or dropped when it covers them), so a receiver can be calibrated band by band.
 */
export function mergeBand(existing: Calibration, fresh: Calibration): Calibration {
  if (existing.quantity !== fresh.quantity)
    throw new BenchError(
      'EINVAL',
      `the new table maps ${fresh.quantity} but the receiver's calibration maps ${existing.quantity}`,
      'calibration.quantity',
    );
  const nb = fresh.bands[0];
  const bands = [];
  for (const b of existing.bands) {
    if (b.toHz <= nb.fromHz || b.fromHz >= nb.toHz) bands.push(b);
    else {
      if (b.fromHz < nb.fromHz) bands.push({ ...b, toHz: nb.fromHz });
      if (b.toHz > nb.toHz) bands.push({ ...b, fromHz: nb.toHz });
    }
  }
  bands.push(nb);
  bands.sort((a, b) => a.fromHz - b.fromHz);
  return validateCalibration({
    ...existing,
    bands,
    uDb: Math.max(existing.uDb ?? 0.5, fresh.uDb ?? 0.5),
    ...(fresh.madeAt ? { madeAt: fresh.madeAt } : {}),
    note: `${existing.note ? `${existing.note} ` : ''}${(nb.fromHz / 1e6).toFixed(3)}-${(nb.toHz / 1e6).toFixed(3)} MHz: ${fresh.note ?? 'refitted'}`.slice(
      0,
      2000,
    ),
  });
}
