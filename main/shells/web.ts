// Runs in Node. The local web shell: serves the renderer and the service over HTTP (calls) and
// server-sent events (live readings), bound to 127.0.0.1 unless told otherwise.
import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import { readFile, stat } from 'node:fs/promises';
import { extname, join, normalize, resolve, sep } from 'node:path';
import { EVENTS } from '../../app/api';
import type { Service } from '../service';
import { rendererDir } from '../paths';

export interface WebOptions {
  service: Service;
  port: number;
  host?: string;
  /** Folder of the built renderer (index.html, app.js, app.css). */
  staticDir?: string;
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

const MAX_BODY = 2 * 1024 * 1024;

function send(
  res: ServerResponse,
  status: number,
  body: string,
  type = 'application/json; charset=utf-8',
): void {
  res.writeHead(status, {
    'Content-Type': type,
    'Cache-Control': 'no-store',
    'X-Content-Type-Options': 'nosniff',
    'Referrer-Policy': 'no-referrer',
    'Content-Security-Policy': CSP,
  });
  res.end(body);
}

function readBody(req: IncomingMessage): Promise<string> {
  return new Promise((ok, fail) => {
    let size = 0;
    const chunks: Buffer[] = [];
    req.on('data', (c: Buffer) => {
      size += c.length;
      if (size > MAX_BODY) {
        fail(new Error('request body too large'));
        req.destroy();
      } else chunks.push(c);
    });
    req.on('end', () => ok(Buffer.concat(chunks).toString('utf8')));
    req.on('error', fail);
  });
}

export class WebShell {
  readonly server: Server;
  private readonly opts: Required<WebOptions>;
  private readonly root: string;
  private clients = new Set<ServerResponse>();
  private unsubs: (() => void)[] = [];

  constructor(opts: WebOptions) {
    this.opts = { ...opts, host: opts.host ?? '127.0.0.1', staticDir: opts.staticDir ?? rendererDir() };
    this.root = resolve(this.opts.staticDir);
    this.server = createServer((req, res) => {
      this.handle(req, res).catch((e: unknown) => {
        if (!res.headersSent) send(res, 500, JSON.stringify({ ok: false, code: 'EIO', message: String(e) }));
        else res.end();
      });
    });
    for (const ev of EVENTS) {
      this.unsubs.push(
        this.opts.service.listen(ev, (payload) => {
          const line = `event: ${ev}\ndata: ${JSON.stringify(payload)}\n\n`;
          for (const c of this.clients) c.write(line);
        }),
      );
    }
  }

  /** Starts listening; resolves with the URL (port 0 picks a free port). */
  listen(): Promise<string> {
    return new Promise((ok, fail) => {
      this.server.once('error', fail);
      this.server.listen(this.opts.port, this.opts.host, () => ok(this.url));
    });
  }

  get url(): string {
    const a = this.server.address();
    const port = a && typeof a === 'object' ? a.port : this.opts.port;
    return `http://${this.opts.host}:${port}/`;
  }

  async close(): Promise<void> {
    this.unsubs.forEach((u) => u());
    for (const c of this.clients) c.end();
    this.clients.clear();
    await new Promise<void>((ok) => this.server.close(() => ok()));
  }

  /** Host must name this server (defeats DNS rebinding); a cross-site page may not call us. */
  private allowed(req: IncomingMessage): string | null {
    const a = this.server.address();
    const port = a && typeof a === 'object' ? a.port : this.opts.port;
    const host = (req.headers.host ?? '').toLowerCase();
    const okHosts = new Set([
      `127.0.0.1:${port}`,
      `localhost:${port}`,
      `[::1]:${port}`,
      `${this.opts.host}:${port}`,
    ]);
    if (!okHosts.has(host)) return `Host "${host}" is not this server`;
    const origin = req.headers.origin;
    if (origin !== undefined && origin !== 'null') {
      try {
        if (!okHosts.has(new URL(origin).host.toLowerCase()))
          return `cross-origin request from ${origin} refused`;
      } catch {
        return 'malformed Origin header';
      }
    } else if (origin === 'null' && req.method !== 'GET') return 'opaque origin refused';
    return null;
  }

  private async handle(req: IncomingMessage, res: ServerResponse): Promise<void> {
    const denied = this.allowed(req);
    if (denied) return send(res, 403, JSON.stringify({ ok: false, code: 'EREJECTED', message: denied }));
    const url = new URL(req.url ?? '/', 'http://localhost');
    if (url.pathname.startsWith('/api/call/')) {
      if (req.method !== 'POST')
        return send(res, 405, JSON.stringify({ ok: false, code: 'EINVAL', message: 'use POST' }));
      if (!(req.headers['content-type'] ?? '').startsWith('application/json'))
        return send(
          res,
          415,
          JSON.stringify({ ok: false, code: 'EINVAL', message: 'Content-Type must be application/json' }),
        );
      let args: unknown;
      try {
        const body = await readBody(req);
        args = body.trim() === '' ? {} : JSON.parse(body);
      } catch (e) {
        return send(
          res,
          400,
          JSON.stringify({ ok: false, code: 'EINVAL', message: `request body: ${(e as Error).message}` }),
        );
      }
      const result = await this.opts.service.call(
        decodeURIComponent(url.pathname.slice('/api/call/'.length)),
        args,
      );
      return send(res, 200, JSON.stringify(result));
    }
    if (url.pathname === '/api/events') {
      res.writeHead(200, {
        'Content-Type': 'text/event-stream',
        'Cache-Control': 'no-store',
        Connection: 'keep-alive',
        'X-Content-Type-Options': 'nosniff',
      });
      res.write(`event: status\ndata: ${JSON.stringify(this.opts.service.status())}\n\n`);
      this.clients.add(res);
      req.on('close', () => this.clients.delete(res));
      return;
    }
    if (req.method !== 'GET' && req.method !== 'HEAD')
      return send(res, 405, '{"ok":false,"code":"EINVAL","message":"method not allowed"}');
    return this.serveStatic(url.pathname, res);
  }

  private async serveStatic(pathname: string, res: ServerResponse): Promise<void> {
    let rel: string;
    try {
      rel = decodeURIComponent(pathname);
    } catch {
      return send(res, 400, 'bad path', 'text/plain; charset=utf-8');
    }
    if (rel.includes('\0')) return send(res, 400, 'bad path', 'text/plain; charset=utf-8');
    if (rel === '/' || rel === '') rel = '/index.html';
    const file = resolve(join(this.root, normalize(rel)));
    if (file !== this.root && !file.startsWith(this.root + sep))
      return send(res, 404, 'not found', 'text/plain; charset=utf-8');
    try {
      const st = await stat(file);
      if (!st.isFile()) return send(res, 404, 'not found', 'text/plain; charset=utf-8');
      const body = await readFile(file);
      res.writeHead(200, {
        'Content-Type': TYPES[extname(file)] ?? 'application/octet-stream',
        'Cache-Control': 'no-cache',
        'X-Content-Type-Options': 'nosniff',
        'Content-Security-Policy': CSP,
      });
      res.end(body);
    } catch {
      send(res, 404, 'not found', 'text/plain; charset=utf-8');
    }
  }
}
