// Runs in Node (pure: no I/O). The simulated transmitter as an SDR sees it: every line the transmitter
// model emits now (carrier set by its trimmers, sidebands, products), through the bench's path loss, into
// an SDR whose input reads 0 dBFS at a fixed level; plus white noise. Read afresh for every block, so a
// trimmer turned in the app moves the carrier in the next block.
import { check, finiteIn } from '../../app/errors';
import type { IqGenerator } from './dsbsignal';
import { Rng } from './rng';
import type { SimTransmitter } from './transmitter';

export interface TxIqOptions {
  /** The transmitter, asked for its lines at every block (it may be replaced, e.g. on a new session). */
  transmitter: () => SimTransmitter;
  /** True attenuation between transmitter and SDR, dB (asked at every block). */
  pathLossDb: () => number;
  /** Level at the SDR input that reads 0 dBFS, dBm. */
  dbmAtFullScale: number;
  /** White noise density, dBFS/Hz. Default -100 (enough to dither the 8-bit quantiser). */
  noiseDbfsHz?: number;
  seed?: number;
}

/** Level at the simulated SDR's input that reads 0 dBFS, dBm (its "datasheet" figure). */
export const SIM_SDR_DBM_AT_FULL_SCALE = -14;

export function transmitterIqGenerator(opts: TxIqOptions): IqGenerator {
  finiteIn(opts.dbmAtFullScale, 'dbmAtFullScale', -200, 50, 'dBm');
  const noise = finiteIn(opts.noiseDbfsHz ?? -100, 'noiseDbfsHz', -250, 0, 'dBFS/Hz');
  const rng = new Rng(opts.seed ?? 1);
  // Each line keeps a fixed phase of its own; what changes between blocks is its level.
  const phaseOf = (order: number) => 0.7 * order + 0.3;
  return (out, start, tuning) => {
    const fs = tuning.sampleRate;
    check(fs > 0, 'sampleRate', `must be positive, got ${fs}`);
    const tx = opts.transmitter();
    const loss = opts.pathLossDb();
    const count = out.length >> 1;
    out.fill(0);
    const fc = tx.cfg.carrierHz;
    const tone = tx.cfg.toneHz;
    for (const line of tx.lines()) {
      const f = line.freqHz - tuning.centerHz;
      if (Math.abs(f) >= fs / 2) continue;
      const dbfs = line.dbm - loss - opts.dbmAtFullScale;
      const amp = 10 ** (dbfs / 20);
      if (!(amp > 1e-9)) continue;
      const w = (2 * Math.PI * f) / fs;
      const cycles = (f / fs) * start;
      const p0 = 2 * Math.PI * (cycles - Math.floor(cycles)) + phaseOf(Math.round((line.freqHz - fc) / tone));
      let re = amp * Math.cos(p0);
      let im = amp * Math.sin(p0);
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
    const sigma = Math.sqrt((10 ** (noise / 10) * fs) / 2);
    for (let i = 0; i < 2 * count; i++) out[i] += sigma * rng.normal();
  };
}
