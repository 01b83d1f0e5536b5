// Runs in Node. `nullbench read`: take N readings from a source and print them corrected, one JSON per line.
import { BenchError } from '../../../app/errors';
import { parsePathSpec } from '../../../app/path';
import { roleFrequencyHz } from '../../../app/api';
import { Corrector } from '../../bench/correct';
import { createSource, SOURCES } from '../../sources';
import { numberOption, parseOptions, reportError, type Command } from './command';

export const readCommand: Command = {
  name: 'read',
  summary: 'read levels from a receiver (or the simulated bench) and print them corrected',
  usage: `nullbench read --source SPEC [--count N] [--freq-hz F] [--path ELEMENTS] [--json]

Options:
  --source SPEC     where to read: ${SOURCES.map((s) => s.syntax).join(' | ')} (default sim)
  --count N         number of readings (default 10, at most 100000)
  --freq-hz F       tune the receiver to F Hz first (default: the source's carrier, 7.1 MHz on the simulated bench)
  --path ELEMENTS   signal path from the transmitter to the receiver, e.g. pad:20,cable:0.4,coupler:30
  --json            one JSON object per line: raw, dbm_rx, dbm_dut, u_db, freq_hz, t
Without a stored receiver profile the IARU Region 1 R.1 S-meter calibration applies (S9 = -73 dBm below 30 MHz).`,
  async run(argv, io) {
    try {
      const { values } = parseOptions(argv, {
        source: { type: 'string', default: 'sim' },
        count: { type: 'string' },
        'freq-hz': { type: 'string' },
        path: { type: 'string', default: '' },
        json: { type: 'boolean', default: false },
        help: { type: 'boolean', short: 'h', default: false },
      });
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      const count = numberOption(values.count, 'count', 10);
      if (!Number.isInteger(count) || count < 1 || count > 100000)
        throw new BenchError(
          'EINVAL',
          `must be a whole number from 1 to 100000, got ${values.count}`,
          '--count',
        );
      const path = parsePathSpec(values.path ?? '');
      const source = createSource(values.source ?? 'sim');
      const freq =
        values['freq-hz'] !== undefined
          ? numberOption(values['freq-hz'], 'freq-hz')
          : roleFrequencyHz('carrier', 7_100_000, 1000);
      if (!(freq > 0)) throw new BenchError('EINVAL', `must be above 0 Hz, got ${freq}`, '--freq-hz');
      const corrector = new Corrector({ calibration: null, path, noiseFloorDbm: source.noiseFloorDbm });
      await source.open();
      try {
        if (source.caps.tune) await source.setFrequency(freq);
        if (!values.json)
          io.out('      time                raw    dBm at rx   dBm at DUT    ±u (dB)   freq (Hz)\n');
        for (let i = 0; i < count; i++) {
          const s = await source.read();
          const c = corrector.correct(s);
          if (values.json) {
            io.out(
              JSON.stringify({
                raw: s.raw,
                quantity: s.quantity,
                dbm_rx: round(c.dbmRx),
                dbm_dut: round(c.dbmDut),
                u_db: round(c.uDb),
                freq_hz: s.freqHz,
                t: s.t,
                floor_limited: c.floorLimited,
                overload: c.overload,
              }) + '\n',
            );
          } else {
            io.out(
              `${new Date(s.t).toISOString().slice(0, 23)}  ${String(s.raw).padStart(5)}  ${c.dbmRx.toFixed(2).padStart(10)}  ` +
                `${c.dbmDut.toFixed(2).padStart(11)}  ${c.uDb.toFixed(2).padStart(9)}  ${String(s.freqHz).padStart(10)}` +
                `${c.floorLimited ? '  (at floor: an upper bound)' : ''}${c.overload ? '  (near overload)' : ''}\n`,
            );
          }
        }
      } finally {
        await source.close();
      }
      return 0;
    } catch (e) {
      return reportError(e, io);
    }
  },
};

function round(x: number): number {
  return Math.round(x * 1000) / 1000;
}
