// Runs anywhere (app/ is runtime-free). The calls for real receivers: serial command-set templates, stored
// receiver profiles and guided calibration. Spread into CALLS (contract.ts); their
// results into CallResults (service.ts).
import { z } from 'zod';
import type { Calibration } from '../calibration';
import type { StoredReceiver } from '../receiver';
import type { SerialTemplate } from '../serialtemplate';

const Id = z.string().min(1).max(64);

export const RECEIVER_CALLS = {
  /** Built-in and stored serial command-set templates. */
  listTemplates: z.object({}),
  /** Create or replace a stored template (validated); `replace: false` refuses an existing name. */
  saveTemplate: z.object({ template: z.unknown(), replace: z.boolean().default(true) }),
  deleteTemplate: z.object({ name: z.string().min(1).max(40) }),
  listReceivers: z.object({}),
  /** Create (no id) or update (with id) a receiver profile; validated in app/receiver. */
  saveReceiver: z.object({ receiver: z.unknown() }),
  deleteReceiver: z.object({ id: Id }),
  /**
   * Guided calibration, one step: read the receiver of a profile `count` times at `freqHz` (the generator's
   * frequency) and return the mean. Refused while an open session reads the same receiver.
   */
  calibrationRead: z.object({
    receiverId: Id,
    freqHz: z.number().positive().max(300e9),
    count: z.number().int().min(1).max(200).default(10),
  }),
  /** Fit a calibration table from injections (generator level, pad, reading) and, with save, store it. */
  fitCalibration: z.object({
    receiverId: Id,
    injections: z.array(z.unknown()).min(2).max(200),
    name: z.string().trim().min(1).max(120).optional(),
    save: z.boolean().default(false),
  }),
  /** The serial ports of the machine the service runs on, stable /dev/serial/by-id names first. */
  listSerialPorts: z.object({}),
} as const;

/** A serial port to offer for a receiver's link. */
export interface SerialPortEntry {
  /** The path to put in serial:PATH@BAUD: the by-id name where the device has one. */
  path: string;
  /** The device it is today (the by-id link's target, e.g. /dev/ttyUSB0; the path itself otherwise). */
  device: string;
  /** True for a /dev/serial/by-id name (the same whichever ttyUSB number the adapter gets). */
  stable: boolean;
  /** For people: the device, what it is, and its USB vendor:product where known. */
  label: string;
}

export interface TemplateEntry {
  template: SerialTemplate;
  builtin: boolean;
  updatedAt: string | null;
}

export interface CalibrationReadResult {
  /** Mean of the readings in the receiver's own quantity (the generator is steady: a plain mean). */
  raw: number;
  n: number;
  /** Largest minus smallest reading. */
  spread: number;
  quantity: string;
  freqHz: number;
}

export interface FitResult {
  calibration: Calibration;
  /** Each injection's level at the receiver (generator minus pad) and what the fitted table gives for its reading. */
  points: { raw: number; dbm: number }[];
  receiver: StoredReceiver | null;
}

export interface ReceiverCallResults {
  listTemplates: TemplateEntry[];
  saveTemplate: SerialTemplate;
  deleteTemplate: null;
  listReceivers: StoredReceiver[];
  saveReceiver: StoredReceiver;
  deleteReceiver: null;
  calibrationRead: CalibrationReadResult;
  fitCalibration: FitResult;
  listSerialPorts: SerialPortEntry[];
}
