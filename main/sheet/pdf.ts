// Runs in Node. Prints a sheet document to PDF with headless Chromium (web mode and CLI; the desktop shell
// passes its own window's print-to-PDF instead). Chromium is the system's, never downloaded.
import { existsSync } from 'node:fs';
import { BenchError } from '../../app/errors';

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

export function chromiumPath(): string {
  return process.env.CHROMIUM_PATH ?? '/usr/bin/chromium';
}

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

/** Headless Chromium through playwright-core, queued (MAX_PRINTS at once): A4, backgrounds, page numbers. */
export const chromiumPdf: PdfRenderer = queuedPdf(async (html, footer) => {
  const exe = chromiumPath();
  if (!existsSync(exe))
    throw new BenchError(
      'ENAVAIL',
      `headless Chromium was not found at ${exe}: install Chromium (Debian: apt install chromium) or set CHROMIUM_PATH`,
      'chromium',
    );
  const { chromium } = await import('playwright-core');
  const browser = await chromium.launch({ executablePath: exe, args: CHROMIUM_FLAGS });
  try {
    const page = await browser.newPage();
    // The sheet is self-contained: nothing may be fetched while it renders.
    await page.route('**/*', (route) =>
      route.request().url().startsWith('data:') ? route.continue() : route.abort(),
    );
    await page.setContent(html, { waitUntil: 'load' });
    const pdf = await page.pdf({
      format: 'A4',
      printBackground: true,
      preferCSSPageSize: true,
      displayHeaderFooter: true,
      headerTemplate: '<div></div>',
      footerTemplate: footerTemplate(footer),
    });
    return new Uint8Array(pdf);
  } finally {
    await browser.close();
  }
});
