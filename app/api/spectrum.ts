// Runs anywhere (app/ is runtime-free). The live spectrum's calls and its event: an SDR sample stream
// measured on the main side (FFT there, never in the page), shown as a decimated trace with the measured
// components, kept as readings of the open session. Spread into CALLS (contract.ts); results into
// CallResults, the event payload into EventPayloads (service.ts).
import { z } from 'zod';
import type { DbfsCalibration } from '../spectrum/dbfs';
import type { Reading } from './schemas';

const Injection = z.object({
  /** Generator output, dBm. */
  generatorDbm: z.number().min(-200).max(50),
  generatorUDb: z.number().min(0).max(20).default(0.5),
  /** Attenuation between generator and SDR input, dB. */
  padDb: z.number().min(0).max(200),
  padUDb: z.number().min(0).max(20).default(0.3),
});

export const SPECTRUM_CALLS = {
  /**
   * Start measuring an SDR stream around the open session's carrier: `iqsim` (a built-in SDR sample
   * server fed by the simulated bench's transmitter) or `iq:HOST:PORT` (an SDR sample server).
   */
  spectrumStart: z.object({
    source: z.string().min(1).max(200).default('iqsim'),
    /** Complex samples per second. */
    sampleRate: z.number().int().min(225_001).max(3_200_000).default(256_000),
    /** FFT size (power of two); default from the tone spacing. */
    fftSize: z
      .number()
      .int()
      .min(1024)
      .max(1 << 20)
      .optional(),
    /** Frames averaged per update. */
    averages: z.number().int().min(1).max(256).default(6),
  }),
  spectrumStop: z.object({}),
  /**
   * Set the receiver's dBm at 0 dBFS: from its profile figure, or from a reference injection (a known
   * generator level through a known pad, read now as the strongest component near the carrier).
   */
  spectrumCalibrate: z.union([
    z.object({
      dbmAtFullScale: z.number().min(-200).max(50),
      uDb: z.number().min(0).max(20).default(1),
    }),
    z.object({ injection: Injection }),
  ]),
  /** Keep the current measurement: one reading per component, with the calibration and path used. */
  spectrumKeep: z.object({ note: z.string().max(400).default('') }),
} as const;

/** One measured component as the live spectrum shows it. */
export interface SpectrumComponent {
  /** Point role it is stored under. */
  role: 'carrier' | 'upper' | 'lower' | 'imd3u' | 'imd3l' | 'imd5u' | 'imd5l';
  /** Hz from the carrier. */
  offsetHz: number;
  inBand: boolean;
  /** dBFS; an upper bound when floorLimited; null out of band. */
  dbfs: number | null;
  /** dBm at the transmitter output (through calibration and path); null without a calibration. */
  dbmDut: number | null;
  floorLimited: boolean;
  /** Noise uncertainty of dbfs, dB (k = 1); null for a bound. */
  uDb: number | null;
}

/** A ratio in dB that may be a bound. */
export interface SpectrumRatio {
  db: number;
  floorLimited: boolean;
  uDb: number | null;
}

/** One update of the live spectrum (the `spectrum` event), after every FFT frame: the last `averages` frames. */
export interface SpectrumFrame {
  sessionId: string;
  source: string;
  t: number;
  /** Where the SDR is tuned, Hz, and the carrier, Hz. */
  centerHz: number;
  carrierHz: number;
  toneHz: number;
  sampleRate: number;
  fftSize: number;
  averages: number;
  /** Width of one bin, Hz. */
  binHz: number;
  /** Decimated trace (max per point): Hz from the carrier, dBFS per bin. */
  traceHz: number[];
  traceDbfs: number[];
  components: SpectrumComponent[];
  noiseFloorDbfs: number;
  /** Carrier below the mean of the two tones, dB: a lower bound when floorLimited. */
  suppression: SpectrumRatio | null;
  /** Worse IMD3 product relative to one tone, dBc. */
  imd3: SpectrumRatio | null;
  /** Samples at the ends of the 8-bit range: the SDR is overdriven. */
  overload: boolean;
  calibration: DbfsCalibration | null;
}

export interface SpectrumState {
  running: boolean;
  source: string | null;
  calibration: DbfsCalibration | null;
}

export interface SpectrumCallResults {
  spectrumStart: SpectrumState;
  spectrumStop: SpectrumState;
  spectrumCalibrate: DbfsCalibration;
  spectrumKeep: Reading[];
}

export type { DbfsCalibration } from '../spectrum/dbfs';
