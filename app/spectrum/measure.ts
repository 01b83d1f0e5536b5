// Runs anywhere (app/ is runtime-free). Two-tone (DSB with one audio tone, or SSB) levels from complex
// samples: carrier, both sidebands, IMD3 and IMD5, noise floor, and suppression; a component too close
// to the floor becomes a bound, never a made-up number.
import { BenchError, check } from '../errors';
import { SpectrumAverager, type AveragedSpectrum } from './averager';
import { floorBetween, type Zone } from './floor';
import { noiseExceedance } from './stats';
import { binOf, findPeak, readAt, type ToneReading } from './tone';
import { Window, type WindowName } from './window';

export type ComponentRole =
  'carrier' | 'upper' | 'lower' | 'imd3Upper' | 'imd3Lower' | 'imd5Upper' | 'imd5Lower';

/** Order of the sideband each role sits on: carrier + order * tone. */
export const COMPONENT_ORDER: Record<ComponentRole, number> = {
  carrier: 0,
  upper: 1,
  lower: -1,
  imd3Upper: 3,
  imd3Lower: -3,
  imd5Upper: 5,
  imd5Lower: -5,
};

export interface TwoToneParams {
  /** Complex sample rate, Hz, > 0. */
  sampleRate: number;
  /** Carrier offset from the centre of the recording, Hz, |carrierHz| < sampleRate/2. Default 0. */
  carrierHz?: number;
  /** Audio tone, Hz, > 0: the sidebands are at carrierHz +/- toneHz, inside the band. */
  toneHz: number;
  /**
   * How far from where expected a sideband may be found, Hz: wide enough for a transmitter's crystal being
   * off. Default 0.45 × toneHz (never half the tone or more, where the search would meet the carrier).
   */
  searchHz?: number;
  /** A component must read this many dB above the local mean floor to be measured (default 6, common practice). */
  marginDb?: number;
}

export interface ComponentLevel {
  role: ComponentRole;
  /** Where it was read, Hz from the centre of the recording. */
  offsetHz: number;
  /** False when the component lies outside the band (then dbfs is null). */
  inBand: boolean;
  /** Level in dBFS (0 dBFS = complex tone of amplitude 1.0); an upper bound when floorLimited. */
  dbfs: number | null;
  /** True when the component was not distinguishable from noise: dbfs is then "at most". */
  floorLimited: boolean;
  /**
   * Standard uncertainty of dbfs from the noise in its bin, dB (1 sigma, the larger side), given the
   * number of averages; null for a bound or out of band. Calibration is not included.
   */
  uDb: number | null;
  /** Mean noise power per bin around it, dBFS. */
  floorDbfs: number;
}

/** A ratio in dB and whether it is a bound (a limit of the measurement floor) rather than a value. */
export interface BoundedDb {
  db: number;
  /** True: the true value is at least (suppressions) or at most (IMD levels) this. */
  floorLimited: boolean;
  /** Standard uncertainty from noise, dB (root sum of squares of the levels involved); null for a bound. */
  uDb: number | null;
}

export interface TwoToneMeasurement {
  sampleRate: number;
  fftSize: number;
  averages: number;
  window: WindowName;
  /** Bin spacing, Hz. */
  binHz: number;
  /** Equivalent noise bandwidth of one bin, Hz. */
  enbwHz: number;
  /** Carrier position found, Hz from the centre (midpoint of the sidebands when both are seen). */
  carrierHz: number;
  /** Tone spacing found (half the sideband separation when both are seen, else as given), Hz. */
  toneHz: number;
  components: Record<ComponentRole, ComponentLevel>;
  /** Mean noise per bin over the span of the components, dBFS. */
  noiseFloorDbfs: number;
  /** The same as a density: dBFS in 1 Hz. */
  noiseDensityDbfsHz: number;
  /**
   * Carrier suppression: mean power of the two sidebands over the carrier, dB. A lower bound when
   * floorLimited. Null when neither sideband was seen.
   */
  suppression: BoundedDb | null;
  /** Worse IMD3 product relative to one tone, dBc (negative); an upper bound when floorLimited. */
  imd3: (BoundedDb & { pepDb: number }) | null;
  imd5: (BoundedDb & { pepDb: number }) | null;
  /**
   * Present when one sideband is at least 10 dB above the other (an SSB signal): which one is wanted,
   * how far the other is below it (opposite-sideband suppression, dB, positive), and the carrier below
   * the wanted tone (dB, positive).
   */
  ssb: { wanted: 'upper' | 'lower'; opposite: BoundedDb; carrier: BoundedDb } | null;
  /** True when the suppression figure is a bound set by the noise floor. */
  floorLimited: boolean;
  /** How far from where expected each sideband was searched, Hz. */
  searchHz: number;
  /**
   * Sidebands found at the very edge of their search window: the true line may lie beyond it, so its level
   * (and every figure from it) may be a neighbour's. The SSB call is not made then.
   */
  searchEdge: ('upper' | 'lower')[];
}

/** The default search half-width as a fraction of the tone (see TwoToneParams.searchHz). */
export const DEFAULT_SEARCH_OF_TONE = 0.45;

/** A sideband this much stronger than the other marks an SSB signal (our choice). */
const SSB_DOMINANCE_DB = 10;
/** False-alarm probability for one component read as seen when only noise is there. */
const FALSE_ALARM = 1e-3;
/** The span's floor is a median over at most this many bins (evenly spread). */
const SPAN_FLOOR_BINS = 1024;
/** A bound this close to the value (dB) is reported as a value. */
const NEGLIGIBLE_DB = 0.05;

const db = (p: number): number => 10 * Math.log10(p);
const rss = (...xs: number[]): number => Math.sqrt(xs.reduce((a, x) => a + x * x, 0));

/** Validates the parameters against the band and resolution; returns them with defaults filled in. */
export function checkTwoToneParams(
  p: TwoToneParams,
  fftSize: number,
  window: Window,
): Required<TwoToneParams> {
  const fs = p.sampleRate;
  check(
    typeof fs === 'number' && Number.isFinite(fs) && fs > 0,
    'sampleRate',
    `must be a positive number of Hz, got ${String(fs)}`,
  );
  const half = fs / 2;
  const carrierHz = p.carrierHz ?? 0;
  check(
    Number.isFinite(carrierHz) && Math.abs(carrierHz) < half,
    'carrierHz',
    `the carrier at ${carrierHz} Hz is outside the band (+/-${half} Hz at ${fs} samples/s)`,
  );
  check(
    Number.isFinite(p.toneHz) && p.toneHz > 0,
    'toneHz',
    `must be a positive number of Hz, got ${String(p.toneHz)}`,
  );
  for (const s of [1, -1]) {
    const f = carrierHz + s * p.toneHz;
    check(
      Math.abs(f) < half,
      'toneHz',
      `the ${s > 0 ? 'upper' : 'lower'} sideband at ${f} Hz is outside the band (+/-${half} Hz at ${fs} samples/s)`,
    );
  }
  const binHz = fs / fftSize;
  const needBins = minimumToneBins(window);
  check(
    p.toneHz >= needBins * binHz,
    'toneHz',
    `${p.toneHz} Hz is only ${(p.toneHz / binHz).toFixed(1)} bins at fftSize ${fftSize}; the ${window.name} window ` +
      `needs at least ${needBins} bins (${(needBins * binHz).toFixed(1)} Hz): use a larger FFT`,
  );
  const searchHz = p.searchHz ?? DEFAULT_SEARCH_OF_TONE * p.toneHz;
  check(
    Number.isFinite(searchHz) && searchHz >= 0 && searchHz < p.toneHz / 2,
    'searchHz',
    `must be from 0 to below half the tone (${p.toneHz / 2} Hz), got ${String(searchHz)}`,
  );
  const marginDb = p.marginDb ?? 6;
  check(
    Number.isFinite(marginDb) && marginDb >= 0 && marginDb <= 40,
    'marginDb',
    `must be 0..40 dB, got ${String(marginDb)}`,
  );
  return { sampleRate: fs, carrierHz, toneHz: p.toneHz, searchHz, marginDb };
}

/** Components must be this many bins apart for their main lobes and guards to stay clear of each other. */
export function minimumToneBins(window: Window): number {
  return 2 * (window.mainLobeBins + 2) + 2;
}

/** Measures the components of an averaged spectrum. */
export function measureSpectrum(spectrum: AveragedSpectrum, params: TwoToneParams): TwoToneMeasurement {
  const { power, averages, window } = spectrum;
  const scale = spectrum.scale ?? 1;
  const n = window.n;
  check(power.length === n, 'power', `spectrum has ${power.length} bins, the window ${n}`);
  check(scale > 0 && Number.isFinite(scale), 'scale', `must be a positive number, got ${String(scale)}`);
  const p = checkTwoToneParams(params, n, window);
  const fs = p.sampleRate;
  const binHz = fs / n;
  const toneBins = binOf(p.toneHz, fs, n);
  const guard = window.mainLobeBins + 2;
  const threshold = Math.max(10 ** (p.marginDb / 10), noiseExceedance(averages, FALSE_ALARM));

  // Local floor: the neighbourhood of a component, the components' main lobes and DC left out.
  const wide = Math.min(128, Math.max(32, Math.round(toneBins / 2)));
  const zonesFor = (carrierBin: number, spacing: number): Zone[] => {
    const z: Zone[] = [{ center: 0, halfWidth: guard }];
    for (const o of Object.values(COMPONENT_ORDER))
      z.push({ center: carrierBin + o * spacing, halfWidth: guard });
    return z;
  };
  // Keyed by the nearest bin: the sidebands' floors, taken before the carrier is placed exactly, serve
  // again afterwards (the zones then move by a fraction of a bin at most).
  const floors = new Map<number, number>();
  const localFloor = (bin: number, zones: Zone[]): number => {
    const k = Math.round(bin);
    let f = floors.get(k);
    if (f === undefined) {
      f = floorBetween(power, averages, k - wide, k + wide, zones, scale).mean;
      floors.set(k, f);
    }
    return f;
  };

  // 1. The sidebands: the strongest bin where each is expected. A searched peak is the largest of
  // several noise bins, so it must clear a higher bar to count as seen.
  const carrier0 = binOf(p.carrierHz, fs, n);
  const search = Math.floor(binOf(p.searchHz, fs, n));
  const searchThreshold = Math.max(threshold, noiseExceedance(averages, FALSE_ALARM / (2 * search + 1)));
  const upPeak = findPeak(power, window, carrier0 + toneBins, search);
  const loPeak = findPeak(power, window, carrier0 - toneBins, search);
  // A peak on the last bin of its window: what lies beyond was not looked at.
  const atEdge = (peak: { bin: number }, expected: number) =>
    search > 0 && Math.abs(Math.round(peak.bin) - Math.round(expected)) >= search;
  const zones0 = [
    ...zonesFor(carrier0, toneBins),
    { center: upPeak.bin, halfWidth: guard },
    { center: loPeak.bin, halfWidth: guard },
  ];
  const upSeen = upPeak.binPower * scale >= searchThreshold * localFloor(upPeak.bin, zones0);
  const loSeen = loPeak.binPower * scale >= searchThreshold * localFloor(loPeak.bin, zones0);
  const searchEdge: ('upper' | 'lower')[] = [
    ...(upSeen && atEdge(upPeak, carrier0 + toneBins) ? (['upper'] as const) : []),
    ...(loSeen && atEdge(loPeak, carrier0 - toneBins) ? (['lower'] as const) : []),
  ];

  // Both seen and comparable (DSB): the carrier sits half-way between them, exactly. One dominant
  // (SSB) or only one seen: the carrier is one tone away from it, and the other is read where it belongs.
  let carrierBin = carrier0;
  let spacing = toneBins;
  let upRead: ToneReading | null = null;
  let loRead: ToneReading | null = null;
  if (upSeen && loSeen && Math.abs(db(upPeak.binPower / loPeak.binPower)) < SSB_DOMINANCE_DB) {
    carrierBin = (upPeak.bin + loPeak.bin) / 2;
    spacing = (upPeak.bin - loPeak.bin) / 2;
    upRead = upPeak;
    loRead = loPeak;
  } else if (upSeen || loSeen) {
    const upStrong = upSeen && (!loSeen || upPeak.binPower >= loPeak.binPower);
    if (upStrong) {
      carrierBin = upPeak.bin - toneBins;
      upRead = upPeak;
    } else {
      carrierBin = loPeak.bin + toneBins;
      loRead = loPeak;
    }
  }

  // 2. Every component read where the sidebands place it.
  const zones = zonesFor(carrierBin, spacing);
  const half = n / 2;
  const components = {} as Record<ComponentRole, ComponentLevel>;
  const tonePower = {} as Record<ComponentRole, number>;
  for (const [role, order] of Object.entries(COMPONENT_ORDER) as [ComponentRole, number][]) {
    const bin = carrierBin + order * spacing;
    const offsetHz = (bin * fs) / n;
    const floor = localFloor(bin, zones);
    if (!(Math.abs(bin) < half)) {
      components[role] = {
        role,
        offsetHz,
        inBand: false,
        dbfs: null,
        floorLimited: false,
        uDb: null,
        floorDbfs: db(floor),
      };
      continue;
    }
    const r = (order === 1 ? upRead : order === -1 ? loRead : null) ?? readAt(power, window, bin);
    const gain = r.response * r.response;
    const seenPower = r.binPower * scale;
    const limited = seenPower < threshold * floor;
    // Noise adds its mean to the bin; take it off (the noise correction of any level meter).
    const level = limited ? (threshold * floor) / gain : (seenPower - floor) / gain;
    tonePower[role] = limited ? 0 : level;
    // A tone S in noise of mean m: the averaged bin power varies by sqrt(m^2 + 2 S m) / sqrt(K).
    const excess = seenPower - floor;
    const uDb = limited
      ? null
      : db(1 + Math.sqrt(floor * floor + 2 * excess * floor) / Math.sqrt(averages) / excess);
    components[role] = {
      role,
      offsetHz,
      inBand: true,
      dbfs: db(level),
      floorLimited: limited,
      uDb,
      floorDbfs: db(floor),
    };
  }

  const spanLo = Math.round(carrierBin - 5 * spacing) - wide;
  const spanHi = Math.round(carrierBin + 5 * spacing) + wide;
  const floorMean = floorBetween(power, averages, spanLo, spanHi, zones, scale, SPAN_FLOOR_BINS).mean;
  const enbwHz = (window.enbwBins * fs) / n;

  // 3. Ratios.
  const up = components.upper;
  const lo = components.lower;
  const car = components.carrier;
  const upP = tonePower.upper;
  const loP = tonePower.lower;
  let ssb: TwoToneMeasurement['ssb'] = null;
  let suppression: BoundedDb | null = null;
  let refTone = 0;
  let refU = 0;
  let pepOverTone = 4; // two equal tones: PEP = 4 x one tone (docs/references.md § Modulation and power)
  if (upP > 0 || loP > 0) {
    const strong = upP >= loP ? up : lo;
    const weak = upP >= loP ? lo : up;
    const strongP = Math.max(upP, loP);
    const weakDb = (weak.dbfs as number) - (strong.dbfs as number);
    // Mean of the two; a sideband lost in the floor counts as 0 with the bound as its uncertainty.
    const meanLow = (upP + loP) / 2;
    const meanHigh =
      ((up.floorLimited ? 10 ** ((up.dbfs as number) / 10) : upP) +
        (lo.floorLimited ? 10 ** ((lo.dbfs as number) / 10) : loP)) /
      2;
    const carrierP = 10 ** ((car.dbfs as number) / 10);
    const meanIsBound = db(meanHigh) - db(meanLow) > NEGLIGIBLE_DB;
    const seenTones = [up, lo].filter((c) => !c.floorLimited);
    const meanU = rss(...seenTones.map((c) => c.uDb as number)) / seenTones.length;
    const limitedS = car.floorLimited || meanIsBound;
    suppression = {
      db: db(meanLow) - db(carrierP),
      floorLimited: limitedS,
      uDb: limitedS ? null : rss(car.uDb as number, meanU),
    };
    // The DSB/SSB call only when it is unambiguous: not with a sideband found at its window's edge.
    if ((-weakDb >= SSB_DOMINANCE_DB || weak.floorLimited) && searchEdge.length === 0) {
      ssb = {
        wanted: strong.role === 'upper' ? 'upper' : 'lower',
        opposite: {
          db: -weakDb,
          floorLimited: weak.floorLimited,
          uDb: weak.floorLimited ? null : rss(strong.uDb as number, weak.uDb as number),
        },
        carrier: {
          db: db(strongP) - db(carrierP),
          floorLimited: car.floorLimited,
          uDb: car.floorLimited ? null : rss(strong.uDb as number, car.uDb as number),
        },
      };
      refTone = strongP;
      refU = strong.uDb as number;
      pepOverTone = 1; // one tone: PEP is the tone's power
    } else {
      refTone = meanLow;
      refU = meanU;
    }
  }

  const imd = (a: ComponentRole, b: ComponentRole): (BoundedDb & { pepDb: number }) | null => {
    const xs = [components[a], components[b]].filter((c) => c.inBand && c.dbfs !== null);
    if (refTone <= 0 || xs.length === 0) return null;
    const worst = xs.reduce((m, c) => ((c.dbfs as number) > (m.dbfs as number) ? c : m));
    const rel = (worst.dbfs as number) - db(refTone);
    return {
      db: rel,
      floorLimited: worst.floorLimited,
      uDb: worst.floorLimited ? null : rss(worst.uDb as number, refU),
      pepDb: rel - db(pepOverTone),
    };
  };

  return {
    sampleRate: fs,
    fftSize: n,
    averages,
    window: window.name,
    binHz,
    enbwHz,
    carrierHz: (carrierBin * fs) / n,
    toneHz: (spacing * fs) / n,
    components,
    noiseFloorDbfs: db(floorMean),
    noiseDensityDbfsHz: db(floorMean / enbwHz),
    suppression,
    imd3: imd('imd3Upper', 'imd3Lower'),
    imd5: imd('imd5Upper', 'imd5Lower'),
    ssb,
    searchHz: p.searchHz,
    searchEdge,
    floorLimited: suppression === null || suppression.floorLimited,
  };
}

export interface IqMeasureOptions extends TwoToneParams {
  /** Window name (default flat-top, for level accuracy). */
  window?: WindowName;
  /** FFT size; default from the tone spacing (see defaultFftSize). */
  fftSize?: number;
  /** Most frames to average (default: all whole frames in the samples). */
  maxAverages?: number;
}

/**
 * FFT size that places the tone at least 16 equivalent noise bandwidths from the carrier, as a power
 * of two from 4096 to 2^20, no larger than the samples available.
 */
export function defaultFftSize(
  sampleRate: number,
  toneHz: number,
  window: WindowName,
  samples: number,
): number {
  const enbw = Window.byName(window, 1024).enbwBins;
  let n = 4096;
  const want = (16 * enbw * sampleRate) / Math.abs(toneHz);
  while (n < want && n < 1 << 20) n *= 2;
  while (n > 16 && n > samples) n /= 2;
  return n;
}

/**
 * Measures carrier, sidebands and intermodulation in complex samples.
 * @param samples interleaved I,Q, full scale 1.0
 */
export async function measureIq(
  samples: Float32Array,
  options: IqMeasureOptions,
): Promise<TwoToneMeasurement> {
  const count = Math.floor(samples.length / 2);
  check(
    Number.isFinite(options.sampleRate) && options.sampleRate > 0,
    'sampleRate',
    `must be a positive number of Hz, got ${String(options.sampleRate)}`,
  );
  check(
    Number.isFinite(options.toneHz) && options.toneHz > 0,
    'toneHz',
    `must be a positive number of Hz, got ${String(options.toneHz)}`,
  );
  const windowName = options.window ?? 'flat-top';
  const n = options.fftSize ?? defaultFftSize(options.sampleRate, options.toneHz, windowName, count);
  check(count >= n, 'samples', `${count} complex samples are fewer than one FFT frame of ${n}`);
  const window = Window.byName(windowName, n);
  checkTwoToneParams(options, n, window);
  const frames = Math.min(Math.floor(count / n), options.maxAverages ?? Infinity);
  if (!(frames >= 1))
    throw new BenchError('EINVAL', `must be at least 1, got ${String(options.maxAverages)}`, 'maxAverages');
  const avg = await SpectrumAverager.create(window);
  try {
    for (let f = 0; f < frames; f++) avg.pushComplex(samples, f * n);
    return measureSpectrum(avg.spectrum(), options);
  } finally {
    avg.dispose();
  }
}
