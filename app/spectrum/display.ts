// Runs anywhere (app/ is runtime-free). A stretch of an averaged spectrum cut down to a given number of
// points for drawing: each point keeps the strongest bin it covers, so a tone never drops out of the
// trace however far it is decimated.
import { check } from '../errors';
import type { AveragedSpectrum } from './averager';

export interface SpectrumTrace {
  /** Frequency of each point, Hz from the centre of the capture. */
  hz: Float64Array;
  /** Level of each point, dBFS per bin (0 dBFS = complex tone of amplitude 1.0). */
  dbfs: Float32Array;
  /** Bins per point (>= 1). */
  binsPerPoint: number;
}

/** dBFS shown for an empty bin, so the trace stays finite. */
const FLOOR_DBFS = -300;

/**
 * Max-hold decimation of the bins between fromHz and toHz into at most `points` points.
 * @param fromHz lower edge, Hz from the centre, >= -sampleRate/2
 * @param toHz upper edge, Hz from the centre, <= sampleRate/2, > fromHz
 * @param points 2..65536
 */
export function traceSpectrum(
  spectrum: AveragedSpectrum,
  sampleRate: number,
  fromHz: number,
  toHz: number,
  points: number,
): SpectrumTrace {
  const { power } = spectrum;
  const scale = spectrum.scale ?? 1;
  const n = power.length;
  check(
    sampleRate > 0 && Number.isFinite(sampleRate),
    'sampleRate',
    `must be positive, got ${String(sampleRate)}`,
  );
  check(
    Number.isInteger(points) && points >= 2 && points <= 65536,
    'points',
    `must be 2..65536, got ${String(points)}`,
  );
  check(
    fromHz >= -sampleRate / 2 && toHz <= sampleRate / 2 && toHz > fromHz,
    'span',
    `must lie within +/-${sampleRate / 2} Hz with from < to, got ${fromHz}..${toHz}`,
  );
  const lo = Math.ceil((fromHz / sampleRate) * n);
  const hi = Math.min(Math.floor((toHz / sampleRate) * n), Math.ceil(n / 2) - 1);
  const bins = Math.max(1, hi - lo + 1);
  const per = Math.max(1, Math.ceil(bins / points));
  const count = Math.ceil(bins / per);
  const hz = new Float64Array(count);
  const dbfs = new Float32Array(count);
  for (let i = 0; i < count; i++) {
    let best = 0;
    let bestBin = lo + i * per;
    for (let j = 0; j < per; j++) {
      const b = lo + i * per + j;
      if (b > hi) break;
      const v = power[((b % n) + n) % n];
      if (v > best) {
        best = v;
        bestBin = b;
      }
    }
    hz[i] = (bestBin * sampleRate) / n;
    dbfs[i] = best > 0 ? Math.max(FLOOR_DBFS, 10 * Math.log10(best * scale)) : FLOOR_DBFS;
  }
  return { hz, dbfs, binsPerPoint: per };
}
