// Test helpers: Debian's Chromium driven by playwright-core (no browser download), screenshots kept as artefacts.
import { chromium, type Browser } from 'playwright-core';
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';

export const ARTIFACTS = join(process.cwd(), 'test-artifacts');

export async function launch(): Promise<Browser> {
  mkdirSync(ARTIFACTS, { recursive: true });
  return chromium.launch({
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
}

export function shot(name: string): string {
  return join(ARTIFACTS, `${name}.png`);
}
