// Runs in Node. `nullbench receivers`: stored receiver profiles (source, template, calibration, bandwidth, rated
// maximum input) and the guided calibration: a signal generator at known levels through a known pad.
import { readFile } from 'node:fs/promises';
import { BenchError } from '../../../app/errors';
import type { StoredReceiver } from '../../../app/receiver';
import { defaultDbPath } from '../../paths';
import { Service } from '../../service';
import type { ReceiverCalls } from '../../service/receivers';
import { Store } from '../../store/store';
import { prompter } from './ask';
import { numberOption, parseOptions, reportError, type Command, type Io, machineJson } from './command';

const USAGE = `nullbench receivers list [--json] [--db FILE]
nullbench receivers show NAME [--json] [--db FILE]
nullbench receivers add --name NAME --source SPEC [--template T] --max-input-dbm M [--bandwidth-hz B]
                        [--calibration FILE.json] [--notes TEXT] [--db FILE]
nullbench receivers remove NAME [--db FILE]
nullbench receivers calibrate NAME --freq-hz F --pad-db P --levels L1,L2,... [--count N] [--json] [--db FILE]

A receiver profile is how Nullbench reads one receiver: its source (net:HOST:PORT, serial:/dev/PATH@BAUD with a
template, sim), its calibration (IARU R.1 when it has none), its measurement bandwidth and the rated maximum
input from its manual, above which Nullbench refuses to start a session or plan.

calibrate walks you through a guided calibration: for each generator level L (dBm, at the generator's output)
it asks you to set the generator, reads the receiver (--count readings, averaged) through your pad of P dB, and
fits a table (level at the receiver = L - P). The new table replaces the profile's calibration.
Caution: calibrate with a signal generator only, never with the transmitter; keep the level at the receiver
below its rated maximum input.
Options:
  --json            machine-readable output
  --db FILE         database (default: ${defaultDbPath()})`;

/** Levels in dBm are mostly negative: let "--levels -30,-50" and "--max-input-dbm -10" work as a user expects. */
function joinNegative(argv: string[], opts: string[]): string[] {
  const out: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    if (opts.includes(argv[i]) && /^-[\d.]/.test(argv[i + 1] ?? '')) {
      out.push(`${argv[i]}=${argv[i + 1]}`);
      i++;
    } else out.push(argv[i]);
  }
  return out;
}

function summary(r: StoredReceiver): string {
  const cal = r.calibration
    ? `${r.calibration.name} (${r.calibration.quantity}, ${r.calibration.bands.length} band${r.calibration.bands.length > 1 ? 's' : ''}${r.calibration.madeAt ? `, made ${r.calibration.madeAt}` : ''})`
    : 'IARU R.1 default';
  return [
    `name            ${r.name}`,
    `source          ${r.source}${r.template ? `  (template ${r.template})` : ''}`,
    `bandwidth       ${r.bandwidthHz} Hz`,
    `rated max input ${r.maxInputDbm} dBm`,
    `calibration     ${cal}`,
    ...(r.calibration
      ? r.calibration.bands.map(
          (b, i) =>
            `  band ${i + 1}        ${b.fromHz / 1e6}-${b.toHz / 1e6} MHz: ` +
            b.points.map((p) => `${p.raw} -> ${p.dbm} dBm`).join(', '),
        )
      : []),
    ...(r.injections.length
      ? [
          `injections      ${r.injections.map((x) => `${x.generatorDbm} dBm - ${x.padDb} dB read ${x.raw}`).join('; ')}`,
        ]
      : []),
    ...(r.notes ? [`notes           ${r.notes}`] : []),
  ].join('\n');
}

export const receiversCommand: Command = {
  name: 'receivers',
  usage: USAGE,
  async run(argv, io: Io) {
    let store: Store | null = null;
    try {
      const { values, positionals } = parseOptions(
        joinNegative(argv, ['--max-input-dbm', '--levels']),
        {
          name: { type: 'string' },
          source: { type: 'string' },
          template: { type: 'string' },
          'max-input-dbm': { type: 'string' },
          'bandwidth-hz': { type: 'string' },
          calibration: { type: 'string' },
          notes: { type: 'string' },
          'freq-hz': { type: 'string' },
          'pad-db': { type: 'string' },
          levels: { type: 'string' },
          count: { type: 'string' },
          json: { type: 'boolean', default: false },
          db: { type: 'string' },
          help: { type: 'boolean', short: 'h', default: false },
        },
        true,
      );
      if (values.help) {
        io.out(USAGE + '\n');
        return 0;
      }
      const [action, arg, ...extra] = positionals;
      if (extra.length) throw new BenchError('EINVAL', `unexpected "${extra.join(' ')}"`, 'arguments');
      const need = (what: string) => {
        if (!arg) throw new BenchError('EINVAL', `needs ${what}`, `receivers ${action}`);
        return arg;
      };
      store = new Store(values.db ?? defaultDbPath());
      const desk = new Service({ store, mode: 'cli' }).receivers;
      const repo = desk.repo;
      switch (action) {
        case 'list': {
          const all = repo.listReceivers();
          if (values.json) io.out(machineJson(all) + '\n');
          else if (!all.length) io.out('no receiver profiles yet: add one with "nullbench receivers add"\n');
          else
            for (const r of all)
              io.out(
                `${r.name.padEnd(24)} ${r.source.padEnd(36)} max ${String(r.maxInputDbm).padStart(4)} dBm  ` +
                  `${r.calibration ? r.calibration.name : 'IARU R.1 default'}\n`,
              );
          return 0;
        }
        case 'show': {
          const r = repo.findReceiver(need('a receiver name'));
          io.out(values.json ? machineJson(r) + '\n' : summary(r) + '\n');
          return 0;
        }
        case 'add': {
          if (arg) throw new BenchError('EINVAL', `give the name with --name, not "${arg}"`, 'arguments');
          let calibration: unknown = null;
          if (values.calibration) {
            try {
              calibration = JSON.parse(await readFile(values.calibration, 'utf8'));
            } catch (e) {
              throw new BenchError(
                'EINVAL',
                `cannot read a JSON calibration: ${(e as Error).message}`,
                values.calibration,
              );
            }
          }
          const r = desk.handlers().saveReceiver({
            receiver: {
              name: values.name,
              source: values.source,
              template: values.template ?? null,
              calibration,
              bandwidthHz: numberOption(values['bandwidth-hz'], 'bandwidth-hz', 500),
              maxInputDbm: numberOption(values['max-input-dbm'], 'max-input-dbm'),
              notes: values.notes ?? '',
            },
          }) as StoredReceiver;
          io.out(values.json ? machineJson(r) + '\n' : `receiver "${r.name}" saved\n${summary(r)}\n`);
          return 0;
        }
        case 'remove': {
          const r = repo.findReceiver(need('a receiver name'));
          repo.deleteReceiver(r.id);
          io.out(`receiver "${r.name}" removed\n`);
          return 0;
        }
        case 'calibrate':
          return await calibrate(desk, need('a receiver name'), values, io);
        default:
          throw new BenchError(
            'EINVAL',
            `expected list, show, add, remove or calibrate, got "${action ?? ''}"`,
            'receivers',
          );
      }
    } catch (e) {
      return reportError(e, io);
    } finally {
      (store as Store | null)?.close();
      prompter.done();
    }
  },
};

async function calibrate(
  desk: ReceiverCalls,
  name: string,
  values: Record<string, string | boolean | undefined>,
  io: Io,
): Promise<number> {
  const rx = desk.repo.findReceiver(name);
  const freqHz = numberOption(values['freq-hz'] as string | undefined, 'freq-hz');
  if (!(freqHz > 0)) throw new BenchError('EINVAL', `must be above 0 Hz, got ${freqHz}`, '--freq-hz');
  const padDb = numberOption(values['pad-db'] as string | undefined, 'pad-db');
  const count = numberOption(values.count as string | undefined, 'count', 10);
  if (!Number.isInteger(count) || count < 1 || count > 200)
    throw new BenchError('EINVAL', `must be 1..200, got ${count}`, '--count');
  const levelsText = values.levels as string | undefined;
  if (!levelsText) throw new BenchError('EINVAL', 'is required, e.g. --levels -30,-50,-70,-90', '--levels');
  const levels = levelsText.split(',').map((t, i) => {
    const n = Number(t.trim());
    if (t.trim() === '' || !Number.isFinite(n))
      throw new BenchError('EINVAL', `"${t}" is not a level in dBm`, `--levels item ${i + 1}`);
    return n;
  });
  if (levels.length < 2) throw new BenchError('EINVAL', 'needs at least two levels', '--levels');
  for (const [i, l] of levels.entries())
    if (l - padDb > rx.maxInputDbm)
      throw new BenchError(
        'EUNSAFE',
        `${l} dBm through ${padDb} dB puts ${l - padDb} dBm into the receiver, above its rated maximum of ${rx.maxInputDbm} dBm`,
        `--levels item ${i + 1}`,
      );
  io.err(
    `Guided calibration of "${rx.name}" at ${(freqHz / 1e6).toFixed(6)} MHz through a ${padDb} dB pad.\n` +
      'Connect the signal generator (not the transmitter) through the pad to the receiver input.\n',
  );
  const injections = [];
  for (const level of levels) {
    const answer = await prompter.ask(
      io,
      `Set the generator to ${level} dBm at ${(freqHz / 1e6).toFixed(6)} MHz, then press Enter (or type "stop"):`,
    );
    if (answer === null || answer.trim().toLowerCase() === 'stop') {
      io.err('\nstopped: nothing was changed\n');
      return 1;
    }
    const r = await desk.calibrationRead(rx.id, freqHz, count);
    io.err(`  read ${r.raw} ${r.quantity} (${r.n} readings, spread ${r.spread})\n`);
    injections.push({ freqHz, generatorDbm: level, padDb, raw: r.raw, n: r.n, spread: r.spread });
  }
  const fit = desk.fitCalibration(rx.id, injections, undefined, true);
  if (values.json) io.out(machineJson(fit) + '\n');
  else {
    io.out(`calibration "${fit.calibration.name}" saved to receiver "${rx.name}":\n`);
    for (const p of fit.calibration.bands[0].points)
      io.out(`  ${String(p.raw).padStart(10)}  ->  ${p.dbm.toFixed(2)} dBm\n`);
  }
  return 0;
}
