// Sheets printed without a browser-automation package: the Chromium finder on made-up machines (Linux, Windows,
// macOS), and prints through the DevTools pipe in Debian's Chromium: nothing fetched but data: URLs, the
// paper size taken from the document's CSS @page, a browser that hangs killed at the time limit, one that
// dies reported (docs/design.md § Desktop shell and printing).
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { spawnSync } from 'node:child_process';
import { chmodSync, writeFileSync } from 'node:fs';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { join } from 'node:path';
import { chromiumCandidates, findChromium, type FinderHost } from '../../main/sheet/chromium';
import { printWithChromium } from '../../main/sheet/pdf';
import { tempDir } from '../helpers/tmp';

const host = (platform: NodeJS.Platform, env: Record<string, string>, files: string[]): FinderHost => ({
  platform,
  env,
  exists: (p) => files.includes(p),
});

describe('finding Chromium', () => {
  it('Linux: /usr/bin/chromium first, then the usual names along PATH in order', () => {
    const env = { PATH: '/usr/local/bin:/usr/bin:relative/bin' };
    assert.equal(
      findChromium(host('linux', env, ['/usr/bin/chromium', '/usr/local/bin/chromium'])),
      '/usr/bin/chromium',
    );
    assert.equal(
      findChromium(host('linux', env, ['/usr/bin/chromium-browser', '/usr/local/bin/chromium-browser'])),
      '/usr/local/bin/chromium-browser',
      'PATH order among the names',
    );
    const all = chromiumCandidates(host('linux', env, []));
    assert.equal(all[0], '/usr/bin/chromium');
    assert.ok(!all.some((p) => p.startsWith('relative')), 'a relative PATH entry is never searched');
    assert.equal(new Set(all).size, all.length, 'each place once');
  });

  it('CHROMIUM_PATH wins, and a wrong one is reported rather than passed over', () => {
    const env = { CHROMIUM_PATH: '/opt/cr/chrome', PATH: '/usr/bin' };
    assert.equal(findChromium(host('linux', env, ['/opt/cr/chrome', '/usr/bin/chromium'])), '/opt/cr/chrome');
    assert.throws(
      () => findChromium(host('linux', env, ['/usr/bin/chromium'])),
      (e: Error & { code?: string }) =>
        e.code === 'ENAVAIL' && /not found at \/opt\/cr\/chrome, which CHROMIUM_PATH names/.test(e.message),
    );
  });

  it('Windows: the program folders from the environment, with Windows path separators', () => {
    const env = {
      PROGRAMFILES: 'C:\\Program Files',
      'PROGRAMFILES(X86)': 'C:\\Program Files (x86)',
      LOCALAPPDATA: 'C:\\Users\\bench\\AppData\\Local',
    };
    const system = 'C:\\Program Files\\Chromium\\Application\\chrome.exe';
    const local = 'C:\\Users\\bench\\AppData\\Local\\Chromium\\Application\\chrome.exe';
    assert.equal(findChromium(host('win32', env, [local])), local);
    assert.equal(findChromium(host('win32', env, [system, local])), system, 'the program folders first');
    assert.ok(chromiumCandidates(host('win32', env, [])).every((p) => /^C:\\/.test(p)));
  });

  it('macOS: app bundles in /Applications, then in the home folder', () => {
    const env = { HOME: '/Users/bench' };
    const mine = '/Users/bench/Applications/Chromium.app/Contents/MacOS/Chromium';
    const sys = '/Applications/Chromium.app/Contents/MacOS/Chromium';
    assert.equal(findChromium(host('darwin', env, [mine])), mine);
    assert.equal(findChromium(host('darwin', env, [sys, mine])), sys, '/Applications first');
  });

  it('nothing found: ENAVAIL naming where it looked and what to do', () => {
    assert.throws(
      () => findChromium(host('linux', { PATH: '/usr/bin' }, [])),
      (e: Error & { code?: string; field?: string }) =>
        e.code === 'ENAVAIL' &&
        e.field === 'chromium' &&
        /\/usr\/bin\/chromium/.test(e.message) &&
        /apt install chromium/.test(e.message) &&
        /CHROMIUM_PATH/.test(e.message),
    );
  });
});

function pdfInfo(bytes: Uint8Array, dir: string): { text: string; info: string } {
  const f = join(dir, `p${Math.random().toString(36).slice(2)}.pdf`);
  writeFileSync(f, bytes);
  const text = spawnSync('pdftotext', ['-layout', f, '-'], { encoding: 'utf8' });
  const info = spawnSync('pdfinfo', [f], { encoding: 'utf8' });
  assert.equal(text.status, 0, text.stderr);
  return { text: text.stdout, info: info.stdout };
}

describe('printing through the DevTools pipe (Debian Chromium)', () => {
  let server: Server;
  let hits: string[] = [];
  let base = '';
  const tmp = tempDir('nullbench-print-test-');
  before(async () => {
    server = createServer((req, res) => {
      hits.push(req.url ?? '');
      res.end('body { color: red }');
    });
    await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
    base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
  });
  after(() => {
    server.close();
    tmp.cleanup();
  });

  const doc = (size: string, extra = '') =>
    `<!doctype html><html><head><meta charset="utf-8"><style>@page { size: ${size}; margin: 15mm }</style>${extra}</head>` +
    `<body><h1>Bench sheet 7731</h1><p>carrier 52.0 dB below one tone</p>` +
    `<img alt="dot" src="data:image/gif;base64,R0lGODlhAQABAIAAAAAAAP///ywAAAAAAQABAAACAUwAOw=="></body></html>`;

  it('prints the document with its footer, on the paper its CSS names (A4, US Letter)', async () => {
    const a4 = pdfInfo(await printWithChromium(doc('A4'), 'sheet ref 7731 · unit QX-1'), tmp.dir);
    assert.match(a4.text, /Bench sheet 7731/);
    assert.match(a4.text, /carrier 52\.0 dB below one tone/);
    assert.match(a4.text, /sheet ref 7731 · unit QX-1\s+page 1 of 1/);
    // ISO 216: A4 is 210 × 297 mm = 595 × 842 pt; US Letter is 8.5 × 11 in = 612 × 792 pt.
    const [w, h] = a4.info
      .match(/Page size:\s+([\d.]+) x ([\d.]+)/)!
      .slice(1)
      .map(Number);
    assert.ok(Math.abs(w - 595.3) < 1.5 && Math.abs(h - 841.9) < 1.5, a4.info);
    const letter = pdfInfo(await printWithChromium(doc('letter'), 'L'), tmp.dir);
    const [lw, lh] = letter.info
      .match(/Page size:\s+([\d.]+) x ([\d.]+)/)!
      .slice(1)
      .map(Number);
    assert.ok(Math.abs(lw - 612) < 1.5 && Math.abs(lh - 792) < 1.5, letter.info);
  });

  it('fetches nothing but data: URLs while it renders', async () => {
    hits = [];
    const extra =
      `<link rel="stylesheet" href="${base}/style.css"><script src="${base}/x.js"></script>` +
      `<style>@font-face { font-family: f; src: url(${base}/f.woff) } body { font-family: f; background: url(${base}/bg.png) }</style>`;
    const html = doc('A4', extra).replace(
      '</body>',
      `<img src="${base}/chart.png"><iframe src="${base}/frame"></iframe></body>`,
    );
    const r = pdfInfo(await printWithChromium(html, 'F'), tmp.dir);
    assert.match(r.text, /Bench sheet 7731/, 'the page still prints');
    assert.deepEqual(hits, [], 'no request reached the server');
  });

  it('a browser that never answers is killed at the time limit, with ETIMEOUT naming the step', async () => {
    const hang = join(tmp.dir, 'hang.sh');
    writeFileSync(hang, '#!/bin/sh\nexec sleep 30\n');
    chmodSync(hang, 0o755);
    const t0 = Date.now();
    await assert.rejects(
      printWithChromium(doc('A4'), 'F', { exe: hang, timeoutMs: 300 }),
      (e: Error & { code?: string }) => {
        assert.equal(e.code, 'ETIMEOUT');
        assert.match(
          e.message,
          /did not finish the print within 300 ms \(stuck opening a page\); it was ended/,
        );
        return true;
      },
    );
    assert.ok(Date.now() - t0 >= 300, 'not before the limit');
    const ps = spawnSync('pgrep', ['-f', hang], { encoding: 'utf8' });
    assert.equal(ps.stdout.trim(), '', 'the hung process is gone');
  });

  it('a browser that dies at start is reported as ENAVAIL with its exit', async () => {
    const dead = join(tmp.dir, 'dead.sh');
    writeFileSync(dead, '#!/bin/sh\necho "cannot open display" >&2\nexit 3\n');
    chmodSync(dead, 0o755);
    await assert.rejects(printWithChromium(doc('A4'), 'F', { exe: dead }), (e: Error & { code?: string }) => {
      assert.equal(e.code, 'ENAVAIL');
      assert.match(e.message, /headless Chromium ended \(exit code 3\) \(cannot open display\)/);
      return true;
    });
    await assert.rejects(
      printWithChromium(doc('A4'), 'F', { exe: join(tmp.dir, 'missing') }),
      /could not be started/,
    );
  });
});
