// Runs in Node. The local web shell: serves the renderer and the service over HTTP (calls) and
// server-sent events (live readings), bound to 127.0.0.1 unless told otherwise. On any other address it
// refuses to start without access control: an access token, exchanged for a session cookie at sign-in.
import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import { readFile, realpath, stat } from 'node:fs/promises';
import { extname, join, normalize, resolve, sep } from 'node:path';
import { EVENTS } from '../../app/api';
import { BenchError } from '../../app/errors';
import type { Service } from '../service';
import { rendererDir } from '../paths';
import { clearedCookie, isLoopback, sessionCookie, type WebAccess } from './access';
import { LOGIN_HTML, LOGIN_JS } from './login';

export interface WebOptions {
  service: Service;
  port: number;
  host?: string;
  /** Folder of the built renderer (index.html, app.js, app.css). */
  staticDir?: string;
  /**
   * Who may use the server. Required on any address other than loopback; may be given on loopback too.
   * Without it, every local program may call the service (as with any local desktop app).
   */
  access?: WebAccess | null;
  /** More names this server answers to (e.g. its LAN name "bench.lan"), beyond loopback and the bound address. */
  allowedHosts?: string[];
}

const TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.ico': 'image/x-icon',
  '.json': 'application/json',
  '.map': 'application/json',
};

export const CSP =
  "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; connect-src 'self'; " +
  "object-src 'none'; base-uri 'none'; frame-ancestors 'none'; form-action 'none'";

/** Headers on every response, whatever it is: no framing, no sniffing, no referrer, the CSP. */
const COMMON_HEADERS = {
  'Cache-Control': 'no-store',
  'X-Content-Type-Options': 'nosniff',
  'X-Frame-Options': 'DENY',
  'Referrer-Policy': 'no-referrer',
  'Cross-Origin-Opener-Policy': 'same-origin',
  'Cross-Origin-Resource-Policy': 'same-origin',
  'Content-Security-Policy': CSP,
};

const MAX_BODY = 2 * 1024 * 1024;

/** Listening on every interface: no browser ever names these in Host. */
const WILDCARDS = new Set(['0.0.0.0', '::', '[::]']);

/** Served without signing in when access control is on: the sign-in page and what it needs to show. */
const PUBLIC_PATHS = new Set(['/login', '/login.js', '/style.css', '/icon.svg']);

function send(
  res: ServerResponse,
  status: number,
  body: string,
  type = 'application/json; charset=utf-8',
  extra: Record<string, string> = {},
): void {
  res.writeHead(status, { ...COMMON_HEADERS, 'Content-Type': type, ...extra });
  res.end(body);
}

function fail(res: ServerResponse, status: number, code: string, message: string, extra = {}): void {
  send(res, status, JSON.stringify({ ok: false, code, message }), undefined, extra);
}

class BodyTooLarge extends Error {}

function readBody(req: IncomingMessage): Promise<string> {
  return new Promise((ok, bad) => {
    let size = 0;
    const chunks: Buffer[] = [];
    req.on('data', (c: Buffer) => {
      size += c.length;
      if (size > MAX_BODY) {
        bad(new BodyTooLarge(`request body over ${MAX_BODY} bytes`));
        req.pause();
      } else chunks.push(c);
    });
    req.on('end', () => ok(Buffer.concat(chunks).toString('utf8')));
    req.on('error', bad);
  });
}

/** A comment line on the event stream this often, so proxies and the browser see the stream is alive, ms. */
export const HEARTBEAT_MS = 15_000;
/** What the browser waits before reconnecting a dropped stream, ms (the stream's retry field). */
export const RETRY_MS = 2_000;
/** A client that has not taken this many bytes of the stream is dropped (it reconnects and starts afresh). */
export const MAX_UNSENT_BYTES = 1024 * 1024;

export class WebShell {
  readonly server: Server;
  private heartbeat: NodeJS.Timeout | null = null;
  private readonly opts: Required<Omit<WebOptions, 'access'>>;
  private readonly access: WebAccess | null;
  private readonly root: string;
  private clients = new Set<ServerResponse>();
  private unsubs: (() => void)[] = [];
  /** Runs out after the unattended-stop time with no window on the event stream (status.unattendedStopS). */
  private unattended: NodeJS.Timeout | null = null;

  constructor(opts: WebOptions) {
    this.opts = {
      ...opts,
      host: opts.host ?? '127.0.0.1',
      staticDir: opts.staticDir ?? rendererDir(),
      allowedHosts: opts.allowedHosts ?? [],
    };
    this.access = opts.access ?? null;
    if (!isLoopback(this.opts.host) && !this.access) {
      throw new BenchError(
        'EUNSAFE',
        `refusing to listen on ${this.opts.host} without an access token: anyone on that network could drive this bench`,
        'host',
      );
    }
    this.root = resolve(this.opts.staticDir);
    this.server = createServer((req, res) => {
      this.handle(req, res).catch((e: unknown) => {
        if (!res.headersSent) fail(res, 500, 'EIO', e instanceof Error ? e.message : String(e));
        else res.end();
      });
    });
    // A client that dribbles its headers or body does not hold a connection for long.
    this.server.headersTimeout = 10_000;
    this.server.requestTimeout = 30_000;
    this.server.maxHeadersCount = 64;
    for (const ev of EVENTS) {
      this.unsubs.push(
        this.opts.service.listen(ev, (payload) => {
          this.broadcast(`event: ${ev}\ndata: ${JSON.stringify(payload)}\n\n`);
        }),
      );
    }
  }

  /** Writes to every stream; a client that stopped reading (too much unsent) is dropped, not buffered for. */
  private broadcast(text: string): void {
    for (const c of this.clients) {
      if (c.writableLength > MAX_UNSENT_BYTES) {
        this.clients.delete(c);
        c.destroy();
        continue;
      }
      c.write(text);
    }
  }

  /** Starts listening; resolves with the URL (port 0 picks a free port). */
  listen(): Promise<string> {
    return new Promise((ok, bad) => {
      this.server.once('error', bad);
      this.server.listen(this.opts.port, this.opts.host, () => {
        this.armUnattended();
        ok(this.url);
      });
    });
  }

  /**
   * The unattended-stop rule: with no window on the event stream for the stated time, reading stops and
   * the session is kept to resume (main/service/session.ts pauseUnattended). A window that connects
   * disarms it.
   */
  private armUnattended(): void {
    if (this.unattended) clearTimeout(this.unattended);
    this.unattended = null;
    const s = this.opts.service.status().unattendedStopS;
    if (s === null || this.clients.size > 0) return;
    this.unattended = setTimeout(() => {
      this.unattended = null;
      if (this.clients.size === 0) void this.opts.service.session.pauseUnattended().catch(() => undefined);
    }, s * 1000);
    this.unattended.unref();
  }

  get port(): number {
    const a = this.server.address();
    return a && typeof a === 'object' ? a.port : this.opts.port;
  }

  get url(): string {
    const h = this.opts.host.includes(':') ? `[${this.opts.host}]` : this.opts.host;
    return `http://${h}:${this.port}/`;
  }

  async close(): Promise<void> {
    this.unsubs.forEach((u) => u());
    if (this.unattended) clearTimeout(this.unattended);
    this.unattended = null;
    if (this.heartbeat) clearInterval(this.heartbeat);
    this.heartbeat = null;
    for (const c of this.clients) c.end();
    this.clients.clear();
    await new Promise<void>((ok) => this.server.close(() => ok()));
  }

  /** host:port pairs this server answers to; anything else is a rebinding attempt or a mistake. */
  private hosts(): Set<string> {
    const bound = WILDCARDS.has(this.opts.host) ? [] : [this.opts.host];
    const names = ['127.0.0.1', 'localhost', '[::1]', ...bound, ...this.opts.allowedHosts];
    return new Set(
      names.flatMap((n) => {
        const l = n.toLowerCase();
        const h = l.includes(':') && !l.startsWith('[') ? `[${l}]` : l;
        // On the default port a browser names the host alone.
        return this.port === 80 ? [`${h}:80`, h] : [`${h}:${this.port}`];
      }),
    );
  }

  /** Host must name this server (defeats DNS rebinding); a page of another site may not call us. */
  private refused(req: IncomingMessage, isApi: boolean): string | null {
    const ok = this.hosts();
    const host = (req.headers.host ?? '').toLowerCase();
    if (!ok.has(host)) return host ? `Host "${host}" is not this server` : 'a Host header is required';
    const origin = req.headers.origin;
    if (origin !== undefined) {
      if (origin === 'null') {
        if (req.method !== 'GET' && req.method !== 'HEAD')
          return 'a request from an opaque origin is refused';
      } else {
        let u: URL;
        try {
          u = new URL(origin);
        } catch {
          return 'malformed Origin header';
        }
        if (u.protocol !== 'http:' || !ok.has(u.host.toLowerCase()))
          return `cross-origin request from ${origin} refused`;
      }
    }
    // Fetch metadata: a browser says when another site made the request, even where Origin is absent.
    const site = req.headers['sec-fetch-site'];
    if (isApi && (site === 'cross-site' || site === 'same-site'))
      return `a ${site} request to the API is refused`;
    return null;
  }

  private async handle(req: IncomingMessage, res: ServerResponse): Promise<void> {
    let url: URL;
    try {
      url = new URL(req.url ?? '/', 'http://localhost');
    } catch {
      return fail(res, 400, 'EINVAL', 'malformed request target');
    }
    const path = url.pathname;
    const isApi = path.startsWith('/api/');
    // A second Host header is dropped by Node's parser: whichever one a proxy read, the request is ambiguous.
    let hostHeaders = 0;
    for (let i = 0; i < req.rawHeaders.length; i += 2)
      if (req.rawHeaders[i].toLowerCase() === 'host') hostHeaders++;
    if (hostHeaders > 1) return fail(res, 400, 'EINVAL', 'more than one Host header');
    const denied = this.refused(req, isApi);
    if (denied) return fail(res, 403, 'EREJECTED', denied);

    if (path === '/api/login' && this.access) return this.login(req, res);
    if (path === '/api/logout' && this.access) {
      if (req.method !== 'POST') return fail(res, 405, 'EINVAL', 'use POST', { Allow: 'POST' });
      this.access.logout(req);
      return send(res, 204, '', undefined, { 'Set-Cookie': clearedCookie() });
    }
    if (this.access && !PUBLIC_PATHS.has(path) && !(await this.access.allows(req))) {
      if (
        !isApi &&
        (req.method === 'GET' || req.method === 'HEAD') &&
        (path === '/' || path === '/index.html')
      )
        return send(res, 303, '', 'text/plain; charset=utf-8', { Location: '/login' });
      return fail(res, 401, 'EREJECTED', 'sign in first: open /login and enter the access token');
    }

    if (path.startsWith('/api/call/')) {
      if (req.method !== 'POST') return fail(res, 405, 'EINVAL', 'use POST', { Allow: 'POST' });
      // JSON only: a cross-site form cannot send it without a preflight, which this server never grants.
      if (!/^application\/json\s*(;|$)/i.test(req.headers['content-type'] ?? ''))
        return fail(res, 415, 'EINVAL', 'Content-Type must be application/json');
      let args: unknown;
      try {
        const body = await readBody(req);
        args = body.trim() === '' ? {} : JSON.parse(body);
      } catch (e) {
        if (e instanceof BodyTooLarge) return fail(res, 413, 'EINVAL', e.message, { Connection: 'close' });
        return fail(res, 400, 'EINVAL', `request body: ${(e as Error).message}`);
      }
      let name: string;
      try {
        name = decodeURIComponent(path.slice('/api/call/'.length));
      } catch {
        return fail(res, 400, 'EINVAL', 'malformed call name');
      }
      // A window is back after the unattended-stop rule stopped reading: the session reads again first.
      if (this.opts.service.status().pausedSessionId)
        await this.opts.service.session.resumeUnattended().catch(() => undefined);
      const result = await this.opts.service.call(name, args);
      return send(res, 200, JSON.stringify(result));
    }
    if (path === '/api/events') {
      if (req.method !== 'GET') return fail(res, 405, 'EINVAL', 'use GET', { Allow: 'GET' });
      res.writeHead(200, {
        ...COMMON_HEADERS,
        'Content-Type': 'text/event-stream',
        Connection: 'keep-alive',
      });
      res.write(
        `retry: ${RETRY_MS}\n\nevent: status\ndata: ${JSON.stringify(this.opts.service.status())}\n\n`,
      );
      this.clients.add(res);
      this.armUnattended();
      req.on('close', () => {
        this.clients.delete(res);
        this.armUnattended();
      });
      if (!this.heartbeat) {
        this.heartbeat = setInterval(() => this.broadcast(': alive\n\n'), HEARTBEAT_MS);
        this.heartbeat.unref();
      }
      return;
    }
    if (isApi) return fail(res, 404, 'ENOTFOUND', `no API endpoint ${path}`);
    if (req.method !== 'GET' && req.method !== 'HEAD')
      return fail(res, 405, 'EINVAL', 'method not allowed', { Allow: 'GET, HEAD' });
    if (this.access && path === '/login') return send(res, 200, LOGIN_HTML, TYPES['.html']);
    if (this.access && path === '/login.js') return send(res, 200, LOGIN_JS, TYPES['.js']);
    return this.serveStatic(path, res);
  }

  private async login(req: IncomingMessage, res: ServerResponse): Promise<void> {
    const access = this.access!;
    if (req.method !== 'POST') return fail(res, 405, 'EINVAL', 'use POST', { Allow: 'POST' });
    if (!/^application\/json\s*(;|$)/i.test(req.headers['content-type'] ?? ''))
      return fail(res, 415, 'EINVAL', 'Content-Type must be application/json');
    let token: unknown;
    try {
      token = (JSON.parse(await readBody(req)) as { token?: unknown } | null)?.token;
    } catch {
      return fail(res, 400, 'EINVAL', 'expected {"token": "nbt_..."}');
    }
    const r = await access.login(token, req.socket.remoteAddress ?? 'unknown');
    if (!r.ok) return fail(res, r.status, 'EREJECTED', r.message);
    return send(res, 204, '', undefined, { 'Set-Cookie': sessionCookie(r.cookie) });
  }

  private async serveStatic(pathname: string, res: ServerResponse): Promise<void> {
    const notFound = () => send(res, 404, 'not found', 'text/plain; charset=utf-8');
    let rel: string;
    try {
      rel = decodeURIComponent(pathname);
    } catch {
      return send(res, 400, 'bad path', 'text/plain; charset=utf-8');
    }
    if (rel.includes('\0') || rel.includes('\\'))
      return send(res, 400, 'bad path', 'text/plain; charset=utf-8');
    if (rel === '/' || rel === '') rel = '/index.html';
    const file = resolve(join(this.root, normalize(rel)));
    if (!file.startsWith(this.root + sep)) return notFound();
    try {
      // A link inside the folder may not lead out of it either.
      const [real, realRoot] = await Promise.all([realpath(file), realpath(this.root)]);
      if (!real.startsWith(realRoot + sep)) return notFound();
      const st = await stat(real);
      if (!st.isFile()) return notFound();
      const body = await readFile(real);
      res.writeHead(200, {
        ...COMMON_HEADERS,
        'Content-Type': TYPES[extname(real)] ?? 'application/octet-stream',
        'Cache-Control': 'no-cache',
      });
      res.end(body);
    } catch {
      notFound();
    }
  }
}
