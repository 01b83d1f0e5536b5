// Runs in Node. `nullbench serve`: the local web mode, for a bench computer with no screen.
import { BenchError } from '../../../app/errors';
import { defaultDbPath } from '../../paths';
import { Service } from '../../service';
import { Store } from '../../store/store';
import { WebShell } from '../web';
import { numberOption, parseOptions, reportError, type Command } from './command';

export interface Served {
  url: string;
  stop(): Promise<void>;
}

/** Starts the web mode; used by `serve` and by `npm start` when there is no desktop shell. */
export async function startWeb(opts: { dbPath: string; port: number; host?: string }): Promise<Served> {
  const store = new Store(opts.dbPath);
  const service = new Service({ store, mode: 'web' });
  const web = new WebShell({ service, port: opts.port, host: opts.host });
  try {
    const url = await web.listen();
    return {
      url,
      async stop() {
        await web.close();
        await service.close();
        store.close();
      },
    };
  } catch (e) {
    store.close();
    const err = e as NodeJS.ErrnoException;
    if (err.code === 'EADDRINUSE')
      throw new BenchError(
        'ECONFLICT',
        `port ${opts.port} is already in use; pick another with --port`,
        '--port',
      );
    throw e;
  }
}

export const serveCommand: Command = {
  name: 'serve',
  summary: 'run the local web mode (browser UI + API) on this machine',
  usage: `nullbench serve [--port P] [--db FILE]

Options:
  --port P    TCP port on 127.0.0.1 (default 8747; 0 picks a free one)
  --db FILE   database (default: ${defaultDbPath()})
The server listens on 127.0.0.1 only. Stop it with Ctrl+C.`,
  async run(argv, io) {
    try {
      const { values } = parseOptions(argv, {
        port: { type: 'string' },
        db: { type: 'string' },
        help: { type: 'boolean', short: 'h', default: false },
      });
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      const port = numberOption(values.port, 'port', 8747);
      if (!Number.isInteger(port) || port < 0 || port > 65535)
        throw new BenchError('EINVAL', `must be 0..65535, got ${values.port}`, '--port');
      const served = await startWeb({ dbPath: values.db ?? defaultDbPath(), port });
      io.out(`Nullbench web mode: ${served.url}\n`);
      await new Promise<void>((done) => {
        const stop = () => {
          served.stop().then(done, done);
        };
        process.once('SIGINT', stop);
        process.once('SIGTERM', stop);
      });
      return 0;
    } catch (e) {
      return reportError(e, io);
    }
  },
};
