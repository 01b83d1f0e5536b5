// Runs in Node (pure: no I/O). A synthetic DSB transmitter as an SDR would see it: residual carrier,
// two sidebands from one audio tone, IMD3/IMD5 products, white noise; and the 8-bit quantiser of the
// SDR TCP stream. The sample generator of the IQ simulator server until the simulated bench plugs in.
import { check, finiteIn } from '../../app/errors';
import { Rng } from './rng';

/** What the SDR is tuned to when a block is generated. */
export interface IqTuning {
  /** Complex samples per second. */
  sampleRate: number;
  /** Centre frequency, Hz. */
  centerHz: number;
  /** Tuner gain in tenths of a dB, or null for automatic gain. */
  gainTenthsDb: number | null;
}

/**
 * Fills `out` (interleaved I,Q, full scale 1.0) with the samples numbered start, start+1, ... of a
 * continuous stream. The IQ simulator server quantises what it returns.
 */
export type IqGenerator = (out: Float32Array, start: number, tuning: IqTuning) => void;

export interface DsbSpec {
  /** Carrier frequency, Hz; its offset in the samples is carrierHz - tuning.centerHz. */
  carrierHz: number;
  /** Audio tone, Hz: sidebands at carrier +/- toneHz. */
  toneHz: number;
  /** Level of the upper sideband tone, dBFS (0 dBFS = complex amplitude 1.0). Default -12. */
  toneDbfs?: number;
  /** Lower sideband relative to the upper, dB (0 for DSB; -40 for SSB with 40 dB opposite-sideband suppression). */
  lowerRelDb?: number;
  /** Carrier below the mean power of the two sidebands, dB. */
  suppressionDb: number;
  /** Each IMD3 product relative to the upper tone, dBc; null for none. Default null. */
  imd3Dbc?: number | null;
  /** Each IMD5 product relative to the upper tone, dBc; null for none. Default null. */
  imd5Dbc?: number | null;
  /** White noise density, dBFS/Hz; null for none. Default -110 (about -46 dBFS in 2.4 MHz). */
  noiseDbfsHz?: number | null;
  /** Seed of the noise. Default 1. */
  seed?: number;
}

interface Line {
  order: number;
  amp: number;
  phase: number;
}

/**
 * A DSB signal generator. Deterministic in (spec, sample numbers): asking for the same samples twice
 * gives the same carrier and tones; the noise continues its own sequence.
 */
export function dsbGenerator(spec: DsbSpec): IqGenerator {
  finiteIn(spec.carrierHz, 'carrierHz', -1e12, 1e12, 'Hz');
  finiteIn(spec.toneHz, 'toneHz', 1e-3, 1e9, 'Hz');
  finiteIn(spec.suppressionDb, 'suppressionDb', -60, 200, 'dB');
  const toneDbfs = finiteIn(spec.toneDbfs ?? -12, 'toneDbfs', -200, 20, 'dBFS');
  const lowerRelDb = finiteIn(spec.lowerRelDb ?? 0, 'lowerRelDb', -200, 40, 'dB');
  const upperP = 10 ** (toneDbfs / 10);
  const lowerP = upperP * 10 ** (lowerRelDb / 10);
  const carrierP = ((upperP + lowerP) / 2) * 10 ** (-spec.suppressionDb / 10);
  const lines: Line[] = [
    { order: 0, amp: Math.sqrt(carrierP), phase: 0.3 },
    { order: 1, amp: Math.sqrt(upperP), phase: 1.1 },
    { order: -1, amp: Math.sqrt(lowerP), phase: -0.7 },
  ];
  for (const [key, orders] of [
    ['imd3Dbc', [3, -3]],
    ['imd5Dbc', [5, -5]],
  ] as const) {
    const rel = spec[key];
    if (rel === null || rel === undefined) continue;
    finiteIn(rel, key, -200, 0, 'dBc');
    for (const o of orders)
      lines.push({ order: o, amp: Math.sqrt(upperP * 10 ** (rel / 10)), phase: 0.5 * o });
  }
  const noise =
    spec.noiseDbfsHz === null ? null : finiteIn(spec.noiseDbfsHz ?? -110, 'noiseDbfsHz', -250, 0, 'dBFS/Hz');
  const rng = new Rng(spec.seed ?? 1);

  return (out, start, tuning) => {
    const fs = tuning.sampleRate;
    check(fs > 0, 'sampleRate', `must be positive, got ${fs}`);
    const count = out.length >> 1;
    out.fill(0);
    for (const l of lines) {
      const f = spec.carrierHz - tuning.centerHz + l.order * spec.toneHz;
      if (Math.abs(f) >= fs / 2) continue;
      const w = (2 * Math.PI * f) / fs;
      // Exact phase at the block start (start may be large), then a rotating phasor; a block is short
      // enough that its rounding stays far below float32 resolution.
      const cycles = (f / fs) * start;
      const p0 = 2 * Math.PI * (cycles - Math.floor(cycles)) + l.phase;
      let re = l.amp * Math.cos(p0);
      let im = l.amp * Math.sin(p0);
      const cr = Math.cos(w);
      const ci = Math.sin(w);
      for (let i = 0; i < count; i++) {
        out[2 * i] += re;
        out[2 * i + 1] += im;
        const t = re * cr - im * ci;
        im = re * ci + im * cr;
        re = t;
      }
    }
    if (noise !== null) {
      // Total power density * fs, split equally between I and Q.
      const sigma = Math.sqrt((10 ** (noise / 10) * fs) / 2);
      for (let i = 0; i < 2 * count; i++) out[i] += sigma * rng.normal();
    }
  };
}

/**
 * Quantises full-scale-1.0 floats to unsigned bytes the way an 8-bit SDR does: zero at 127.5,
 * full scale 127.5 codes, clipped to 0..255.
 */
export function quantizeU8(
  x: Float32Array,
  out: Uint8Array = new Uint8Array(x.length),
  zero = 127.5,
): Uint8Array {
  check(out.length >= x.length, 'out', `needs ${x.length} bytes, has ${out.length}`);
  const scale = Math.max(zero, 255 - zero);
  for (let i = 0; i < x.length; i++) {
    const v = Math.round(x[i] * scale + zero);
    out[i] = v < 0 ? 0 : v > 255 ? 255 : v;
  }
  return out;
}
