// Runs in Node. `nullbench serve`: the local web mode, for a bench computer with no screen.
import { hostname, networkInterfaces } from 'node:os';
import { BenchError } from '../../../app/errors';
import { defaultDbPath } from '../../paths';
import { Service } from '../../service';
import { Store } from '../../store/store';
import { AccessTokens, isLoopback, WebAccess } from '../access';
import { WebShell } from '../web';
import { numberOption, parseOptions, reportError, type Command } from './command';

export interface Served {
  url: string;
  /** The new access token, when this start issued one (shown once, never stored in clear). */
  token: string | null;
  /** The addresses a browser can use (on a network: every interface's, and the host's names). */
  addresses: string[];
  /** Where the database was copied before this start upgraded it, if it did. */
  backup: string | null;
  stop(): Promise<void>;
}

export interface WebStartOptions {
  dbPath: string;
  port: number;
  /** 127.0.0.1 unless given; any other address turns access control on. */
  host?: string;
  /** Replace the access token (and sign everyone out) even if one exists. */
  newToken?: boolean;
  /** Access control on loopback too (a computer shared with other people). */
  requireToken?: boolean;
  /** More host names the server answers to, e.g. its name on the LAN. */
  allowHosts?: string[];
  /** Seconds with no window open after which reading stops (default UNATTENDED_STOP_S; null never). */
  unattendedStopS?: number | null;
}

/**
 * With no window open on the web mode for this long, reading stops and the session waits to be resumed:
 * long enough for a reload or a moved laptop lid, short enough that an unattended server stores little.
 */
export const UNATTENDED_STOP_S = 120;

/** The names and addresses a browser elsewhere may use to reach a server listening on `host`. */
function reachableNames(host: string): string[] {
  const wildcard = host === '0.0.0.0' || host === '::';
  const names = wildcard
    ? Object.values(networkInterfaces())
        .flat()
        .filter((i) => i && !i.internal && (host === '::' || i.family === 'IPv4'))
        .map((i) => i!.address)
    : [host];
  const name = hostname().toLowerCase();
  return [...new Set([...names, name, `${name}.local`])];
}

/** Starts the web mode; used by `serve` and by `npm start` when there is no desktop shell. */
export async function startWeb(opts: WebStartOptions): Promise<Served> {
  const host = opts.host ?? '127.0.0.1';
  let backup: string | null = null;
  const store = new Store(opts.dbPath, { onBackup: (p) => (backup = p) });
  const service = new Service({
    store,
    mode: 'web',
    unattendedStopS: opts.unattendedStopS === undefined ? UNATTENDED_STOP_S : opts.unattendedStopS,
  });
  const networked = !isLoopback(host);
  const guarded = networked || !!opts.requireToken;
  let web: WebShell;
  let access: WebAccess | null = null;
  try {
    access = guarded ? new WebAccess(new AccessTokens(store)) : null;
    const names = networked ? reachableNames(host) : [];
    web = new WebShell({
      service,
      port: opts.port,
      host,
      access,
      allowedHosts: [...names, ...(opts.allowHosts ?? [])],
    });
  } catch (e) {
    await service.close();
    store.close();
    throw e;
  }
  try {
    const url = await web.listen();
    // Issued only once the port is ours: until then no token exists and nobody can sign in.
    let token: string | null = null;
    if (access && (opts.newToken || !access.tokens.active())) token = access.tokens.issue();
    const port = web.port;
    const addresses = (networked ? [...reachableNames(host), ...(opts.allowHosts ?? [])] : [host]).map(
      (n) => `http://${n.includes(':') ? `[${n}]` : n}:${port}/`,
    );
    return {
      url,
      token,
      addresses,
      backup,
      async stop() {
        await web.close();
        await service.close();
        store.close();
      },
    };
  } catch (e) {
    await service.close();
    store.close();
    const err = e as NodeJS.ErrnoException;
    if (err.code === 'EADDRINUSE')
      throw new BenchError(
        'ECONFLICT',
        `port ${opts.port} is already in use; pick another with --port`,
        '--port',
      );
    if (err.code === 'EADDRNOTAVAIL' || err.code === 'ENOTFOUND')
      throw new BenchError('EINVAL', `${host} is not an address of this computer`, '--host');
    throw e;
  }
}

/** What serve prints before anything else when the bench goes on a network. */
export const NETWORK_WARNING =
  'WARNING: this puts your bench on the network. Anyone who can reach this computer and holds the access ' +
  'token can read every session and drive the live bench. The traffic is plain HTTP, not encrypted: use it ' +
  'only on a network you trust (or reach it through an SSH tunnel to 127.0.0.1), keep the token private, ' +
  'and stop the server when you are done.';

export const serveCommand: Command = {
  name: 'serve',
  usage: `nullbench serve [--port P] [--db FILE] [--host ADDR] [--token] [--new-token] [--allow-host NAME]...
                [--unattended-stop S]

Options:
  --port P            TCP port (default 8747; 0 picks a free one)
  --db FILE           database (default: ${defaultDbPath()})
  --host ADDR         address to listen on (default 127.0.0.1: this computer only). Any other address,
                      e.g. 0.0.0.0 for every network interface, turns on access control: the first start
                      issues an access token, shows it once with a sign-in link, and stores only its hash;
                      browsers sign in with it at /login and every call and the live stream need it.
  --token             require the access token on 127.0.0.1 too (a computer shared with other people)
  --new-token         issue a new access token, revoking the old one and signing every browser out
  --allow-host NAME   another name this server may be reached by (e.g. bench.lan); repeatable
  --unattended-stop S with no browser window open for S seconds, stop reading (the session stays open
                      and resumes when a window comes back); default ${UNATTENDED_STOP_S}, 0 never stops
Requests naming another host, and calls from pages of other sites, are refused. Stop it with Ctrl+C.`,
  async run(argv, io) {
    try {
      const { values } = parseOptions(argv, {
        port: { type: 'string' },
        db: { type: 'string' },
        host: { type: 'string' },
        token: { type: 'boolean', default: false },
        'new-token': { type: 'boolean', default: false },
        'allow-host': { type: 'string', multiple: true },
        'unattended-stop': { type: 'string' },
        help: { type: 'boolean', short: 'h', default: false },
      });
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      const port = numberOption(values.port, 'port', 8747);
      if (!Number.isInteger(port) || port < 0 || port > 65535)
        throw new BenchError('EINVAL', `must be 0..65535, got ${values.port}`, '--port');
      const host = (values.host ?? '127.0.0.1').trim();
      if (!/^[A-Za-z0-9.:-]+$/.test(host))
        throw new BenchError('EINVAL', `"${host}" is not an address or host name`, '--host');
      const unattended = numberOption(values['unattended-stop'], 'unattended-stop', UNATTENDED_STOP_S);
      if (!(unattended >= 0) || unattended > 86400)
        throw new BenchError(
          'EINVAL',
          `must be 0..86400 seconds, got ${values['unattended-stop']}`,
          '--unattended-stop',
        );
      const allowHosts = values['allow-host'] ?? [];
      allowHosts.forEach((n, i) => {
        if (!/^[A-Za-z0-9.:-]+$/.test(n))
          throw new BenchError('EINVAL', `"${n}" is not a host name`, `--allow-host[${i}]`);
      });
      const networked = !isLoopback(host);
      const guarded = networked || !!values.token;
      if (!guarded && values['new-token'])
        throw new BenchError(
          'EINVAL',
          'needs access control: add --token, or --host with a network address',
          '--new-token',
        );
      if (!networked && allowHosts.length)
        throw new BenchError('EINVAL', 'only with --host set to a network address', '--allow-host');
      if (networked) io.err(NETWORK_WARNING + '\n\n');
      const served = await startWeb({
        dbPath: values.db ?? defaultDbPath(),
        port,
        host,
        newToken: values['new-token'],
        requireToken: values.token,
        allowHosts,
        unattendedStopS: unattended === 0 ? null : unattended,
      });
      if (served.backup)
        io.out(`The database was upgraded; its earlier version is kept at ${served.backup}\n`);
      io.out(`Nullbench web mode: ${served.url}\n`);
      if (guarded) {
        if (networked) io.out(`Reach it at: ${served.addresses.join('  ')}\n`);
        if (served.token) {
          io.out(
            `\nAccess token (shown only now; it is stored hashed and cannot be shown again):\n  ${served.token}\n` +
              `Sign-in link for a browser on your network (the token after # never leaves the browser):\n` +
              `  ${served.addresses[0] ?? served.url}login#token=${served.token}\n`,
          );
        } else {
          io.out(
            'Sign in at /login with the access token issued earlier; lost it? restart with --new-token.\n',
          );
        }
      }
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
