// Runs in Node. `nullbench measure FILE`: carrier, sidebands, IMD and suppression from an IQ recording
// (two-channel WAV or SigMF) by FFT, as a table or one JSON object.
import { BenchError } from '../../../app/errors';
import { SpectrumAverager } from '../../../app/spectrum/averager';
import { isFftSize } from '../../../app/spectrum/fft';
import {
  defaultFftSize,
  measureSpectrum,
  type ComponentRole,
  type TwoToneMeasurement,
} from '../../../app/spectrum/measure';
import { Window, WINDOW_NAMES } from '../../../app/spectrum/window';
import { openRecording } from '../../sources/iq/open';
import { clipLevel, type IqRecording } from '../../sources/iq/recording';
import {
  CLIP_REFUSE_FRACTION,
  clipFlag,
  coincidenceFlags,
  searchEdgeFlags,
  type IqFlag,
} from '../../../app/spectrum/flags';
import { numberOption, parseOptions, reportError, type Command, type Io, machineJson } from './command';

const DEFAULT_AVERAGES = 100;

const LABELS: Record<ComponentRole, string> = {
  carrier: 'carrier',
  upper: 'upper sideband',
  lower: 'lower sideband',
  imd3Upper: 'IMD3 upper',
  imd3Lower: 'IMD3 lower',
  imd5Upper: 'IMD5 upper',
  imd5Lower: 'IMD5 lower',
};

export const measureCommand: Command = {
  name: 'measure',
  usage: `nullbench measure FILE --tone-hz F [--carrier-hz OFFSET] [--window NAME] [--fft N] [--average K] [--json]

FILE is a two-channel WAV (I = channel 1, Q = channel 2; 8-bit, 16/24/32-bit integer or float) or a SigMF
recording (.sigmf-meta; cu8, ci8, ci16, cf32 and the other complex types).
Levels are in dBFS: 0 dBFS is a complex tone of amplitude 1.0 (full scale).

Options:
  --tone-hz F        the audio tone: sidebands at carrier +/- F (required)
  --carrier-hz OFF   the carrier's offset from the recording's centre, Hz, negative allowed (default 0)
  --window NAME      ${WINDOW_NAMES.join(', ')} (default flat-top, the most accurate for levels)
  --fft N            FFT size, a multiple of 16 with factors 2, 3, 5 (default: a power of two that
                     places the tone at least 16 noise bandwidths from the carrier)
  --average K        average at most K spectra (default ${DEFAULT_AVERAGES}, fewer if the recording is shorter);
                     --averages is the older name, still accepted
  --margin-db M      a component must stand M dB above the local noise floor to count (default 6)
  --search-hz S      look for each sideband up to S Hz from where the carrier and tone put it, for a
                     transmitter whose crystal is off (default 0.45 x the tone; below half the tone)
  --json             print one JSON object (carrier_dbfs, upper_dbfs, lower_dbfs, suppression_db, floor_limited, ...)
A component too close to the noise floor is reported as a bound (floor_limited): its level is "at most",
the suppression "at least". Suppression is the mean power of the two sidebands over the carrier.
Most SDRs show a spike at their centre frequency (DC offset): tune so the carrier sits off the centre and
give its offset with --carrier-hz, or the spike reads as carrier.`,

  async run(argv, io) {
    try {
      const { values, positionals } = parseOptions(
        joinNegativeNumbers(argv),
        {
          'tone-hz': { type: 'string' },
          'carrier-hz': { type: 'string' },
          window: { type: 'string', default: 'flat-top' },
          fft: { type: 'string' },
          average: { type: 'string' },
          averages: { type: 'string' },
          'margin-db': { type: 'string' },
          'search-hz': { type: 'string' },
          json: { type: 'boolean', default: false },
          help: { type: 'boolean', short: 'h', default: false },
        },
        true,
      );
      if (values.help) {
        io.out(measureCommand.usage + '\n');
        return 0;
      }
      if (positionals.length !== 1) {
        throw new BenchError('EINVAL', `expected one recording file, got ${positionals.length}`, 'FILE');
      }
      const toneHz = numberOption(values['tone-hz'], 'tone-hz');
      const carrierHz = numberOption(values['carrier-hz'], 'carrier-hz', 0);
      const marginDb = numberOption(values['margin-db'], 'margin-db', 6);
      // One name per quantity across commands: --average, as plan's; --averages stays as an alias.
      if (values.average !== undefined && values.averages !== undefined)
        throw new BenchError('EINVAL', 'give --average only (--averages is its older name)', '--averages');
      const averageName = values.averages !== undefined ? 'averages' : 'average';
      const averageText = values.average ?? values.averages;
      const maxAverages = numberOption(averageText, averageName, DEFAULT_AVERAGES);
      if (!Number.isInteger(maxAverages) || maxAverages < 1) {
        throw new BenchError('EINVAL', `must be a whole number >= 1, got ${averageText}`, `--${averageName}`);
      }
      const windowName = Window.byName(values.window ?? 'flat-top', 1024, '--window').name;
      const rec = await openRecording(positionals[0]);
      try {
        const m = await measureRecording(rec, {
          toneHz,
          carrierHz,
          marginDb,
          searchHz:
            values['search-hz'] === undefined ? undefined : numberOption(values['search-hz'], 'search-hz'),
          window: windowName,
          fftSize: values.fft === undefined ? undefined : numberOption(values.fft, 'fft'),
          maxAverages,
        });
        if (values.json) io.out(machineJson(toJson(rec, m)) + '\n');
        else printTable(io, rec, m);
        return 0;
      } finally {
        await rec.close();
      }
    } catch (e) {
      return reportError(asOptionError(e), io);
    }
  },
};

/** "--carrier-hz -25000" would read as two options; join a negative number to the option before it. */
function joinNegativeNumbers(argv: string[]): string[] {
  const out: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    const next = argv[i + 1];
    if (/^--[a-z-]+$/.test(a) && next !== undefined && /^-\d/.test(next) && Number.isFinite(Number(next))) {
      out.push(`${a}=${next}`);
      i++;
    } else out.push(a);
  }
  return out;
}

/** The engine names its parameters; the user typed options. */
const OPTION_OF: Record<string, string> = {
  toneHz: '--tone-hz',
  carrierHz: '--carrier-hz',
  fftSize: '--fft',
  marginDb: '--margin-db',
  searchHz: '--search-hz',
};

function asOptionError(e: unknown): unknown {
  if (!(e instanceof BenchError) || !e.field || !(e.field in OPTION_OF)) return e;
  return new BenchError(e.code, e.message, OPTION_OF[e.field]);
}

export interface RecordingMeasureOptions {
  toneHz: number;
  carrierHz: number;
  marginDb?: number;
  /** How far from where expected each sideband is searched, Hz (default 0.45 × the tone). */
  searchHz?: number;
  window: (typeof WINDOW_NAMES)[number];
  fftSize?: number;
  maxAverages: number;
}

/** A recording's figures with the warnings they carry (app/spectrum/flags.ts). */
export type RecordingMeasurement = TwoToneMeasurement & {
  /** Sample components (I or Q) at or beyond full scale, of those read. */
  clippedComponents: number;
  componentsRead: number;
  flags: IqFlag[];
};

/** Averages up to maxAverages FFT frames of a recording, reading one frame at a time. */
export async function measureRecording(
  rec: IqRecording,
  o: RecordingMeasureOptions,
): Promise<RecordingMeasurement> {
  const fs = rec.sampleRate;
  if (!(fs > 0)) throw new BenchError('EINVAL', `sample rate is ${fs}`, 'sampleRate');
  if (!(Number.isFinite(o.toneHz) && o.toneHz > 0))
    throw new BenchError('EINVAL', `must be above 0 Hz, got ${o.toneHz}`, '--tone-hz');
  const n = o.fftSize ?? defaultFftSize(fs, o.toneHz, o.window, rec.sampleCount);
  if (!isFftSize(n)) {
    throw new BenchError(
      'EINVAL',
      `must be a multiple of 16 with no prime factor above 5 (e.g. 4096, 65536), got ${n}`,
      '--fft',
    );
  }
  if (rec.sampleCount < n) {
    throw new BenchError(
      'EINVAL',
      `the recording has ${rec.sampleCount} samples, fewer than one FFT frame of ${n}; use a smaller --fft`,
      rec.path,
    );
  }
  const window = Window.byName(o.window, n, '--window');
  const frames = Math.min(Math.floor(rec.sampleCount / n), o.maxAverages);
  const avg = await SpectrumAverager.create(window);
  // Full scale as the recording's own format has it: files are counted as the live stream is.
  const clip = clipLevel(rec.format);
  let clipped = 0;
  try {
    for (let f = 0; f < frames; f++) {
      const x = await rec.read(f * n, n);
      for (let i = 0; i < x.length; i++) if (Math.abs(x[i]) >= clip) clipped++;
      avg.pushComplex(x);
    }
    const total = frames * n * 2;
    const cf = clipFlag(clipped, total);
    if (cf && clipped / total > CLIP_REFUSE_FRACTION)
      throw new BenchError(
        'EINVAL',
        `${cf.message} More than ${100 * CLIP_REFUSE_FRACTION} % of the samples clip: no level is stated from this recording`,
        rec.path,
      );
    const m = measureSpectrum(avg.spectrum(), {
      sampleRate: fs,
      carrierHz: o.carrierHz,
      toneHz: o.toneHz,
      marginDb: o.marginDb,
      searchHz: o.searchHz,
    });
    const flags = [
      ...(cf ? [cf] : []),
      ...coincidenceFlags({ sampleRate: fs, binHz: m.binHz, carrierHz: m.carrierHz, toneHz: m.toneHz }),
      ...searchEdgeFlags(m.searchEdge, m.searchHz),
    ];
    return { ...m, clippedComponents: clipped, componentsRead: total, flags };
  } finally {
    avg.dispose();
  }
}

const r2 = (x: number | null): number | null => (x === null ? null : Math.round(x * 100) / 100);

/** The JSON the CLI prints: snake_case, dB rounded to 0.01. */
export function toJson(rec: IqRecording, m: RecordingMeasurement): Record<string, unknown> {
  const c = m.components;
  const comp = (role: ComponentRole) => ({
    role,
    offset_hz: r2(c[role].offsetHz),
    freq_hz: rec.centerHz === null ? null : r2(rec.centerHz + c[role].offsetHz),
    in_band: c[role].inBand,
    dbfs: r2(c[role].dbfs),
    u_db: r2(c[role].uDb),
    floor_limited: c[role].floorLimited,
    floor_dbfs: r2(c[role].floorDbfs),
  });
  return {
    file: rec.path,
    format: rec.formatLabel,
    sample_rate: rec.sampleRate,
    center_hz: rec.centerHz,
    window: m.window,
    n: m.fftSize,
    averages: m.averages,
    // What the figures carry with them: each warning as a code and a sentence (empty when none applies).
    flags: m.flags,
    clipped_components: m.clippedComponents,
    // How much of the recording the figures come from: the first `averages` frames of `frames_in_file`.
    frames_in_file: Math.floor(rec.sampleCount / m.fftSize),
    seconds_used: r2((m.averages * m.fftSize) / rec.sampleRate),
    seconds_in_file: r2(rec.sampleCount / rec.sampleRate),
    // Every *_u_db is a standard uncertainty (k = 1) from the noise in the measured bins only.
    u_k: 1,
    u_covers: 'noise in the measured bins; not the SDR calibration or its flatness across the band',
    bin_hz: r2(m.binHz),
    enbw_hz: r2(m.enbwHz),
    carrier_offset_hz: r2(m.carrierHz),
    tone_hz: r2(m.toneHz),
    carrier_dbfs: r2(c.carrier.dbfs),
    upper_dbfs: r2(c.upper.dbfs),
    lower_dbfs: r2(c.lower.dbfs),
    carrier_floor_limited: c.carrier.floorLimited,
    upper_floor_limited: c.upper.floorLimited,
    lower_floor_limited: c.lower.floorLimited,
    suppression_db: r2(m.suppression?.db ?? null),
    suppression_u_db: r2(m.suppression?.uDb ?? null),
    floor_limited: m.floorLimited,
    imd3_dbc: r2(m.imd3?.db ?? null),
    imd3_dbpep: r2(m.imd3?.pepDb ?? null),
    imd3_floor_limited: m.imd3?.floorLimited ?? null,
    imd5_dbc: r2(m.imd5?.db ?? null),
    imd5_dbpep: r2(m.imd5?.pepDb ?? null),
    imd5_floor_limited: m.imd5?.floorLimited ?? null,
    noise_floor_dbfs: r2(m.noiseFloorDbfs),
    noise_density_dbfs_hz: r2(m.noiseDensityDbfsHz),
    ssb: m.ssb && {
      wanted: m.ssb.wanted,
      opposite_suppression_db: r2(m.ssb.opposite.db),
      opposite_floor_limited: m.ssb.opposite.floorLimited,
      carrier_below_wanted_db: r2(m.ssb.carrier.db),
      carrier_floor_limited: m.ssb.carrier.floorLimited,
    },
    components: (Object.keys(c) as ComponentRole[]).map(comp),
  };
}

/** An expanded uncertainty (k = 2) from a standard one, never "0.00": below 0.01 dB it says so. */
function expanded(u: number): string {
  const x = 2 * u;
  return x < 0.005 ? '<0.01' : x.toFixed(2);
}

function printTable(io: Io, rec: IqRecording, m: RecordingMeasurement): void {
  const f = (x: number, d = 2) => {
    const v = Number(x.toFixed(d));
    return (v === 0 ? 0 : v).toFixed(d);
  };
  const lines: string[] = [];
  lines.push(`Recording    ${rec.path} (${rec.kind}, ${rec.formatLabel}, ${rec.sampleCount} samples)`);
  lines.push(
    `Sample rate  ${rec.sampleRate} S/s, centre ${rec.centerHz === null ? 'not given' : `${rec.centerHz} Hz`}; ` +
      `FFT ${m.fftSize} x ${m.averages} averages, ${m.window} window, bin ${f(m.binHz)} Hz, noise bandwidth ${f(m.enbwHz)} Hz`,
  );
  const framesInFile = Math.floor(rec.sampleCount / m.fftSize);
  const secs = (x: number) => `${(x / rec.sampleRate).toFixed(x / rec.sampleRate < 10 ? 2 : 1)} s`;
  lines.push(
    `Used         ${m.averages} of ${framesInFile} frames: the first ${secs(m.averages * m.fftSize)} of ${secs(rec.sampleCount)}` +
      (m.averages < framesInFile ? ' (--average to use more)' : ''),
  );
  lines.push(`Carrier at   ${f(m.carrierHz, 1)} Hz from centre; tone ${f(m.toneHz, 1)} Hz`);
  lines.push('');
  const ref = m.ssb ? (m.components[m.ssb.wanted].dbfs as number) : meanDb(m);
  lines.push('component          offset Hz    level dBFS  U(k=2) dB   rel. tone dB   floor dBFS/bin');
  for (const c of Object.values(m.components)) {
    const level = !c.inBand ? 'out of band' : `${c.floorLimited ? '<= ' : ''}${f(c.dbfs as number)}`;
    const rel =
      !c.inBand || ref === null ? '' : `${c.floorLimited ? '<= ' : ''}${f((c.dbfs as number) - ref)}`;
    const u = c.uDb === null ? '' : expanded(c.uDb);
    lines.push(
      `${LABELS[c.role].padEnd(16)} ${f(c.offsetHz, 1).padStart(11)} ${level.padStart(13)} ${u.padStart(8)} ${rel.padStart(14)} ` +
        f(c.floorDbfs).padStart(16),
    );
  }
  lines.push('');
  lines.push(`Noise floor  ${f(m.noiseFloorDbfs)} dBFS per bin, ${f(m.noiseDensityDbfsHz)} dBFS/Hz`);
  const s = m.suppression;
  lines.push(
    s === null
      ? 'Carrier suppression  not measurable: neither sideband stands above the noise floor'
      : `Carrier suppression  ${s.floorLimited ? 'at least ' : ''}${f(s.db)} dB${s.uDb === null ? '' : ` +/- ${expanded(s.uDb)} dB (k = 2)`} ` +
          '(mean of the two sidebands over the carrier)' +
          (s.floorLimited ? ', limited by the noise floor' : ''),
  );
  lines.push(
    'Uncertainty  U (k = 2, about 95 %) from the noise in the measured bins only; the SDR calibration and its',
  );
  lines.push('             flatness across the band are not included.');
  if (m.ssb) {
    const o = m.ssb.opposite;
    const cr = m.ssb.carrier;
    lines.push(
      `SSB          ${m.ssb.wanted} sideband wanted; opposite sideband ${o.floorLimited ? 'at least ' : ''}${f(o.db)} dB down`,
    );
    lines.push(
      `             carrier ${cr.floorLimited ? 'at least ' : ''}${f(cr.db)} dB below the wanted tone`,
    );
  }
  for (const [name, x] of [
    ['IMD3', m.imd3],
    ['IMD5', m.imd5],
  ] as const) {
    if (!x) continue;
    const b = x.floorLimited ? 'at most ' : '';
    lines.push(
      `${name}         ${b}${f(x.db)} dB relative to one tone, ${b}${f(x.pepDb)} dB relative to PEP`,
    );
  }
  if (m.flags.length) {
    lines.push('');
    for (const fl of m.flags) lines.push(`WARNING (${fl.code}): ${fl.message}`);
  }
  io.out(lines.join('\n') + '\n');
}

function meanDb(m: TwoToneMeasurement): number | null {
  const ps = [m.components.upper, m.components.lower].map((c) =>
    c.floorLimited ? 0 : 10 ** ((c.dbfs as number) / 10),
  );
  const mean = (ps[0] + ps[1]) / 2;
  return mean > 0 ? 10 * Math.log10(mean) : null;
}
