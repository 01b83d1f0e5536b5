// Runs in Node. The spectrum calls (app/api/spectrum.ts): start and stop the open session's live SDR
// stream (main/live/spectrum.ts), set its dBm at 0 dBFS, and keep its latest measurement as readings.
import type { Reading } from '../../app/api';
import type { SpectrumCallResults } from '../../app/api/spectrum';
import { BenchError } from '../../app/errors';
import { rxToDut, validatePath } from '../../app/path';
import { dbfsToDbm } from '../../app/spectrum/dbfs';
import { SpectrumStream } from '../live/spectrum';
import type { GroupHandlers, ServiceContext } from './handlers';

export class SpectrumCalls {
  readonly stream: SpectrumStream;

  constructor(private readonly ctx: ServiceContext) {
    this.stream = new SpectrumStream({
      live: ctx.live,
      emit: (f) => ctx.emit('spectrum', f),
      failed: (e) => ctx.emit('notice', { level: 'error', code: e.code, message: `spectrum: ${e.message}` }),
    });
  }

  handlers(): GroupHandlers<keyof SpectrumCallResults> {
    return {
      spectrumStart: (a) => this.stream.start(a),
      spectrumStop: () => this.stream.stop(),
      spectrumCalibrate: (a) => this.stream.calibrate(a),
      spectrumKeep: (a) => this.keep(a.note),
    };
  }

  /** Keeps the latest measurement: one reading per component in band, in one transaction. */
  private keep(note: string): Reading[] {
    const stream = this.stream;
    const { live, session } = stream.requireSession();
    const f = stream.frame;
    if (!f || !stream.source)
      throw new BenchError(
        'ENAVAIL',
        'no spectrum measured yet: start the spectrum and wait for a trace',
        'spectrum',
      );
    if (f.sessionId !== session.id)
      throw new BenchError('ECONFLICT', 'the spectrum belongs to another session: restart it', 'spectrum');
    const cal = f.calibration;
    if (!cal)
      throw new BenchError(
        'EINVAL',
        `no dBm at 0 dBFS is set for ${stream.source}: set it from the receiver's profile or a reference injection`,
        'calibration',
      );
    const path = validatePath(session.path);
    const supp = f.suppression
      ? `suppression ${f.suppression.floorLimited ? '>= ' : ''}${f.suppression.db.toFixed(1)} dB`
      : 'no tones seen';
    const text = `spectrum (${supp})${note ? `: ${note}` : ''}`;
    const list = f.components
      .filter((c) => c.inBand && c.dbfs !== null)
      .map((c) => {
        const rx = dbfsToDbm(c.dbfs as number, c.uDb ?? 0, cal);
        const dut = rxToDut(rx.dbm, rx.uDb, path);
        return {
          sessionId: session.id,
          t: f.t,
          freqHz: f.carrierHz + c.offsetHz,
          role: c.role,
          raw: c.dbfs as number,
          dbmRx: rx.dbm,
          dbmDut: dut.dbm,
          uDb: dut.uDb,
          settled: true,
          kept: true,
          floorLimited: c.floorLimited,
          overload: f.overload,
          trims: { ...live.trims },
          calibration: cal,
          path,
          note: text,
        };
      });
    return this.ctx.store.addReadings(list);
  }
}
