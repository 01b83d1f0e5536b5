// Runs in Node. `nullbench demo`: seed the invented demo scenario into a database.
import { Service } from '../../service';
import { defaultDbPath } from '../../paths';
import { Store } from '../../store/store';
import { parseOptions, reportError, type Command, machineJson } from './command';

export const demoCommand: Command = {
  name: 'demo',
  usage: `nullbench demo [--db FILE] [--json]

Options:
  --db FILE   database to fill (default: ${defaultDbPath()})
  --json      print a JSON summary`,
  async run(argv, io) {
    try {
      const { values } = parseOptions(argv, {
        db: { type: 'string' },
        json: { type: 'boolean', default: false },
        help: { type: 'boolean', short: 'h', default: false },
      });
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      const store = new Store(values.db ?? defaultDbPath());
      try {
        const s = await new Service({ store, mode: 'cli' }).invoke('loadDemo', {});
        if (values.json) io.out(machineJson({ db: store.file, ...s }) + '\n');
        else
          io.out(
            `Demo scenario written to ${store.file}: ${s.units} units, ${s.sessions} sessions, ${s.keptReadings} kept readings.\n`,
          );
      } finally {
        store.close();
      }
      return 0;
    } catch (e) {
      return reportError(e, io);
    }
  },
};
