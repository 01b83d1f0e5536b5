// Runs in Node. Prints a sheet document to PDF with headless Chromium (web mode and CLI; the desktop shell
// passes its own window's print-to-PDF instead). Chromium is the system's, never downloaded, and is driven
// over its DevTools pipe (chromium.ts), with no browser-automation package.
import { BenchError } from '../../app/errors';
import { ChromiumPipe, findChromium } from './chromium';

/** Turns a whole HTML document into PDF bytes. */
export type PdfRenderer = (html: string, footer: string) => Promise<Uint8Array>;

export const CHROMIUM_FLAGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-background-networking',
  '--disable-component-update',
  '--no-first-run',
];

/** The browser the web mode and the CLI print with (CHROMIUM_PATH, else the first one found; chromium.ts). */
export function chromiumPath(): string {
  return findChromium();
}

/** A print that takes longer than this is ended (the browser killed) with ETIMEOUT. */
export const PRINT_TIMEOUT_MS = 60_000;

/** The footer Chromium prints on every page: the sheet reference, and page N of M. */
export function footerTemplate(text: string): string {
  const esc = text.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
  // Chromium's header/footer templates take inline styles only; they live outside the page and its CSP.
  return `<div style="font-family:'DejaVu Sans',sans-serif;font-size:7px;color:#5b6f74;width:100%;padding:0 13mm;display:flex;justify-content:space-between"><span>${esc}</span><span>page <span class="pageNumber"></span> of <span class="totalPages"></span></span></div>`;
}

/** At most this many Chromium processes print at once: each takes hundreds of MB. */
export const MAX_PRINTS = 2;

/**
 * A queue in front of a PDF renderer: at most `max` print at once, the rest wait their turn in order (a
 * failed print frees its place like a finished one).
 */
export function queuedPdf(render: PdfRenderer, max = MAX_PRINTS): PdfRenderer & { running(): number } {
  let running = 0;
  const waiting: (() => void)[] = [];
  const queued = async (html: string, footer: string) => {
    if (running >= max) await new Promise<void>((go) => waiting.push(go));
    else running++;
    try {
      return await render(html, footer);
    } finally {
      const next = waiting.shift();
      if (next) next();
      else running--;
    }
  };
  return Object.assign(queued, { running: () => running });
}

/**
 * Prints one document in a headless Chromium of its own, over the DevTools pipe: a fresh page that may fetch
 * nothing but data: URLs, the document set as its content, loaded, then printed with backgrounds, the
 * sheet's own @page size and margins (A4 or US Letter, set by its CSS) and the footer. The browser is closed
 * afterwards, killed when the print outlasts `timeoutMs`.
 */
export async function printWithChromium(
  html: string,
  footer: string,
  opts: { exe?: string; timeoutMs?: number } = {},
): Promise<Uint8Array> {
  const exe = opts.exe ?? chromiumPath();
  const timeoutMs = opts.timeoutMs ?? PRINT_TIMEOUT_MS;
  const browser = ChromiumPipe.launch(exe, CHROMIUM_FLAGS);
  let step = 'starting';
  let timer: NodeJS.Timeout | undefined;
  const timedOut = new Promise<never>((_, reject) => {
    timer = setTimeout(() => {
      browser.kill();
      reject(
        new BenchError(
          'ETIMEOUT',
          `headless Chromium (${exe}) did not finish the print within ${timeoutMs >= 1000 ? `${Math.round(timeoutMs / 1000)} s` : `${timeoutMs} ms`} (stuck ${step}); it was ended`,
          'chromium',
        ),
      );
    }, timeoutMs);
  });
  const print = async (): Promise<Uint8Array> => {
    step = 'opening a page';
    const { targetId } = (await browser.send('Target.createTarget', { url: 'about:blank' })) as {
      targetId: string;
    };
    const { sessionId } = (await browser.send('Target.attachToTarget', { targetId, flatten: true })) as {
      sessionId: string;
    };
    // The sheet is self-contained: nothing may be fetched while it renders.
    step = 'blocking requests';
    browser.on('Fetch.requestPaused', (p, sid) => {
      const { requestId, request } = p as { requestId: string; request: { url: string } };
      const keep = request.url.startsWith('data:');
      void browser
        .send(
          keep ? 'Fetch.continueRequest' : 'Fetch.failRequest',
          keep ? { requestId } : { requestId, errorReason: 'BlockedByClient' },
          sid,
        )
        .catch(() => undefined);
    });
    await browser.send('Fetch.enable', { patterns: [{ urlPattern: '*' }] }, sessionId);
    step = 'loading the sheet';
    await browser.send('Page.enable', {}, sessionId);
    const { frameTree } = (await browser.send('Page.getFrameTree', {}, sessionId)) as {
      frameTree: { frame: { id: string } };
    };
    await browser.send('Page.setDocumentContent', { frameId: frameTree.frame.id, html }, sessionId);
    const loaded = (await browser.send(
      'Runtime.evaluate',
      {
        expression:
          "new Promise((done) => { const fonts = () => document.fonts.ready.then(() => done(document.readyState)); if (document.readyState === 'complete') fonts(); else addEventListener('load', fonts, { once: true }); })",
        awaitPromise: true,
        returnByValue: true,
      },
      sessionId,
    )) as { result?: { value?: unknown }; exceptionDetails?: { text?: string } };
    if (loaded.exceptionDetails)
      throw new BenchError(
        'ENAVAIL',
        `headless Chromium could not load the sheet: ${loaded.exceptionDetails.text}`,
        'chromium',
      );
    step = 'printing';
    const { data } = (await browser.send(
      'Page.printToPDF',
      {
        printBackground: true,
        preferCSSPageSize: true,
        displayHeaderFooter: true,
        headerTemplate: '<div></div>',
        footerTemplate: footerTemplate(footer),
        marginTop: 0,
        marginBottom: 0,
        marginLeft: 0,
        marginRight: 0,
      },
      sessionId,
    )) as { data: string };
    step = 'closing';
    return new Uint8Array(Buffer.from(data, 'base64'));
  };
  try {
    return await Promise.race([print(), timedOut]);
  } finally {
    clearTimeout(timer);
    await browser.close();
  }
}

/** Headless Chromium over its DevTools pipe, queued (MAX_PRINTS at once): backgrounds, page numbers. */
export const chromiumPdf: PdfRenderer = queuedPdf((html, footer) => printWithChromium(html, footer));
