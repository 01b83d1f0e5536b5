// Runs in Node. `nullbench read`: take N readings from a source and print them corrected, one JSON per line.
// Real receivers: a link fault is reported on stderr as a gap, the link is re-established, and reading goes on
// until N readings have come or the fault has lasted --retry-for seconds.
import { BenchError } from '../../../app/errors';
import { parsePathSpec } from '../../../app/path';
import { roleFrequencyHz } from '../../../app/api';
import type { CalibrationQuantity } from '../../../app/calibration';
import { calibrationFor } from '../../../app/receiver';
import { builtinTemplate, type SerialTemplate } from '../../../app/serialtemplate';
import { Corrector } from '../../live/correct';
import { defaultDbPath } from '../../paths';
import { templateNameInSpec } from '../../sources';
import { createSource, findDriver, SOURCES } from '../../sources';
import { ReceiverRepo } from '../../store/receivers';
import { Store } from '../../store/store';
import { numberOption, parseOptions, reportError, type Command, machineJson } from './command';

/** Errors a real link recovers from: report the gap and go on. */
const SOFT = new Set(['ETIMEOUT', 'EPROTO', 'EIO']);

export const readCommand: Command = {
  name: 'read',
  usage: `nullbench read [--source SPEC [--template NAME] | --receiver NAME] [--count N] [--freq-hz F]
                  [--path ELEMENTS] [--json] [--db FILE] [--retry-for S]

Options:
  --source SPEC     where to read (default sim):
                      ${SOURCES.map((s) => s.syntax).join('\n                      ')}
  --template NAME   serial command-set template (built in, or stored: see "nullbench templates list")
  --receiver NAME   a stored receiver profile: its source, template and calibration
  --count N         number of readings (default 10, at most 100000)
  --freq-hz F       tune the receiver to F Hz first. Default: the simulated bench's carrier (7.1 MHz); a
                    network receiver stays where it is; a serial receiver needs it (it cannot tell its frequency)
  --path ELEMENTS   signal path from the transmitter to the receiver, e.g. pad:20,cable:0.4,coupler:30
  --json            one JSON object per line: raw, quantity, dbm_rx, dbm_dut, u_db, freq_hz, t
  --db FILE         database holding stored profiles and templates (default: ${defaultDbPath()})
  --retry-for S     after a link fault keep reconnecting this long before giving up (default 30 s)
Without a stored receiver calibration the IARU Region 1 R.1 S-meter calibration applies (S9 = -73 dBm below
30 MHz, 6 dB per S-unit); a receiver reporting raw counts needs a calibrated profile (--receiver).
A link fault is reported on stderr ("gap: ...") and never printed as a reading.`,
  async run(argv, io) {
    let store: Store | null = null;
    try {
      const { values } = parseOptions(argv, {
        source: { type: 'string' },
        template: { type: 'string' },
        receiver: { type: 'string' },
        count: { type: 'string' },
        'freq-hz': { type: 'string' },
        path: { type: 'string', default: '' },
        json: { type: 'boolean', default: false },
        db: { type: 'string' },
        'retry-for': { type: 'string' },
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
      const retryForS = numberOption(values['retry-for'], 'retry-for', 30);
      if (!(retryForS >= 0 && retryForS <= 86400))
        throw new BenchError('EINVAL', `must be 0..86400 s, got ${values['retry-for']}`, '--retry-for');
      const path = parsePathSpec(values.path ?? '');
      if (values.receiver && values.source)
        throw new BenchError(
          'EINVAL',
          'give either --receiver (a stored profile) or --source, not both',
          '--source',
        );
      const openStore = () => (store ??= new Store(values.db ?? defaultDbPath()));
      let spec = values.source ?? 'sim';
      let templateName = values.template ?? null;
      let ownCalibration: unknown = null;
      if (values.receiver) {
        const rx = new ReceiverRepo(openStore()).findReceiver(values.receiver);
        spec = rx.source;
        templateName = templateName ?? rx.template;
        ownCalibration = rx.calibration;
      }
      const driver = findDriver(spec);
      templateName = templateName ?? templateNameInSpec(spec);
      let template: SerialTemplate | null = null;
      if (templateName) {
        if (driver.kind !== 'serial')
          throw new BenchError('EINVAL', 'only serial sources take a command-set template', '--template');
        template = builtinTemplate(templateName) ?? new ReceiverRepo(openStore()).template(templateName);
      }
      const source = createSource(spec, template ? { template } : {});
      let freq: number | null = null;
      if (values['freq-hz'] !== undefined) {
        freq = numberOption(values['freq-hz'], 'freq-hz');
        if (!(freq > 0)) throw new BenchError('EINVAL', `must be above 0 Hz, got ${freq}`, '--freq-hz');
      } else if (driver.kind === 'sim') freq = roleFrequencyHz('carrier', 7_100_000, 1000);
      else if (driver.kind === 'serial')
        throw new BenchError(
          'EINVAL',
          'a serial receiver cannot tell its frequency, which selects the calibration band: give --freq-hz',
          '--freq-hz',
        );
      await source.open();
      try {
        const quantity = (source.quantity ?? 'strength-db') as CalibrationQuantity;
        const corrector = new Corrector({
          calibration:
            ownCalibration == null && quantity === 'strength-db'
              ? null
              : calibrationFor(ownCalibration, quantity),
          path,
          noiseFloorDbm: source.noiseFloorDbm,
          stepDb: source.meterStepDb,
        });
        if (freq !== null) await source.setFrequency(freq);
        if (!values.json)
          io.out('      time                raw    dBm at rx   dBm at DUT    ±u (dB)   freq (Hz)\n');
        let got = 0;
        let gapSince: number | null = null;
        while (got < count) {
          let s;
          try {
            s = await source.read();
          } catch (e) {
            if (!(e instanceof BenchError) || !SOFT.has(e.code)) throw e;
            const now = Date.now();
            if (gapSince === null) {
              gapSince = now;
              io.err(`gap: ${e.code}: ${e.message}\n`);
            }
            if (now - gapSince > retryForS * 1000)
              throw new BenchError(
                e.code,
                `gave up after ${retryForS} s without a reading: ${e.message}`,
                'source',
              );
            await new Promise((r) => setTimeout(r, 200));
            continue;
          }
          if (gapSince !== null) {
            io.err(`gap closed after ${((Date.now() - gapSince) / 1000).toFixed(1)} s; reading again\n`);
            gapSince = null;
          }
          const c = corrector.correct(s);
          got++;
          if (values.json) {
            io.out(
              machineJson({
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
    } finally {
      (store as Store | null)?.close();
    }
  },
};

function round(x: number): number {
  return Math.round(x * 1000) / 1000;
}
