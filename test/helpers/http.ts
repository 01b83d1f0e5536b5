// Test helpers: raw HTTP/1.x over a TCP socket to 127.0.0.1, so a test can send exactly the bytes an
// attacker would (odd paths, missing or forged headers) without a client library tidying them up.
import { connect } from 'node:net';

export interface RawResponse {
  status: number;
  headers: Record<string, string>;
  body: string;
}

/**
 * Sends `head` (request line and headers, CRLF-separated, without the blank line) and an optional body.
 * `until`: stop reading once the text received matches (for a stream that never ends by itself).
 */
export function rawRequest(
  port: number,
  head: string,
  body: string | Buffer = '',
  until?: RegExp,
): Promise<RawResponse> {
  return new Promise((resolve, reject) => {
    const sock = connect(port, '127.0.0.1');
    const chunks: Buffer[] = [];
    let settled = false;
    const done = () => {
      if (settled) return;
      settled = true;
      clearTimeout(timer);
      resolve(parse(Buffer.concat(chunks).toString('latin1')));
    };
    const timer = setTimeout(() => {
      sock.destroy();
      done();
    }, 5000);
    sock.on('data', (c: Buffer) => {
      chunks.push(c);
      if (until && until.test(Buffer.concat(chunks).toString('latin1'))) {
        sock.destroy();
        done();
      }
    });
    sock.on('end', done);
    sock.on('close', done);
    sock.on('error', (e) => {
      // The server may close after answering while a large body is still being sent.
      if (chunks.length) done();
      else if (!settled) {
        settled = true;
        clearTimeout(timer);
        reject(e);
      }
    });
    sock.write(head.replace(/\r?\n/g, '\r\n') + '\r\n\r\n');
    if (body.length) sock.write(body);
  });
}

function parse(text: string): RawResponse {
  const end = text.indexOf('\r\n\r\n');
  const head = end < 0 ? text : text.slice(0, end);
  const [statusLine, ...lines] = head.split('\r\n');
  const status = Number(/^HTTP\/1\.[01] (\d{3})/.exec(statusLine)?.[1] ?? 0);
  const headers: Record<string, string> = {};
  for (const l of lines) {
    const i = l.indexOf(':');
    if (i > 0) {
      const k = l.slice(0, i).trim().toLowerCase();
      headers[k] = headers[k] ? `${headers[k]}, ${l.slice(i + 1).trim()}` : l.slice(i + 1).trim();
    }
  }
  let body = end < 0 ? '' : text.slice(end + 4);
  if (headers['transfer-encoding'] === 'chunked') body = unchunk(body);
  return { status, headers, body };
}

function unchunk(s: string): string {
  let out = '';
  let i = 0;
  for (;;) {
    const nl = s.indexOf('\r\n', i);
    if (nl < 0) break;
    const n = parseInt(s.slice(i, nl), 16);
    if (!n) break;
    out += s.slice(nl + 2, nl + 2 + n);
    i = nl + 2 + n + 2;
  }
  return out;
}
