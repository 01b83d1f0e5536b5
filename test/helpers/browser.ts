// Test helpers: Debian's Chromium driven by playwright-core (no browser download), screenshots kept as artefacts.
import { chromium, type Browser } from 'playwright-core';
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';

export const ARTIFACTS = join(process.cwd(), 'test-artifacts');

/** Outer limit for every wait on a page: generous, so a loaded 2-core machine is slow but never fails a test. */
export const PAGE_TIMEOUT_MS = 60_000;

export async function launch(): Promise<Browser> {
  mkdirSync(ARTIFACTS, { recursive: true });
  const browser = await chromium.launch({
    executablePath: process.env.CHROMIUM_PATH ?? '/usr/bin/chromium',
    args: [
      '--headless',
      '--no-sandbox',
      '--disable-gpu',
      '--disable-background-networking',
      '--disable-component-update',
      '--no-first-run',
    ],
  });
  // Every context (browser.newPage makes one too) waits on states up to the outer limit, not playwright's 30 s.
  const newContext = browser.newContext.bind(browser);
  browser.newContext = async (...args) => {
    const context = await newContext(...args);
    context.setDefaultTimeout(PAGE_TIMEOUT_MS);
    return context;
  };
  return browser;
}

export function shot(name: string): string {
  return join(ARTIFACTS, `${name}.png`);
}
