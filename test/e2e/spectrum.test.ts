// End to end: the web mode in Debian's Chromium. A builder starts a session on the simulated bench, starts
// the live spectrum from the built-in SDR sample server, sees the carrier and tones marked with their levels,
// turns a trimmer and sees the suppression change, and keeps the measurement as readings of the session.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import type { Browser, Page } from 'playwright-core';
import Database from 'better-sqlite3';
import { join } from 'node:path';
import { startWeb, type Served } from '../../main/shells/cli/serve';
import { launch, shot } from '../helpers/browser';
import { tempDir } from '../helpers/tmp';

describe('live spectrum, end to end', () => {
  let served: Served;
  let browser: Browser;
  let page: Page;
  let dir: ReturnType<typeof tempDir>;
  let dbFile: string;
  const pageErrors: string[] = [];

  before(async () => {
    dir = tempDir();
    dbFile = join(dir.dir, 'e2e-spectrum.db');
    served = await startWeb({ dbPath: dbFile, port: 0 });
    browser = await launch();
    page = await browser.newPage({ viewport: { width: 1360, height: 1000 } });
    page.on('pageerror', (e) => pageErrors.push(e.message));
    page.on('console', (m) => {
      if (m.type() === 'error') pageErrors.push(m.text());
    });
  });

  after(async () => {
    await browser?.close();
    await served?.stop();
    dir?.cleanup();
  });

  it('shows the spectrum with the measured points marked, and keeps them as readings', async () => {
    await page.goto(served.url);
    await page.locator('#sessions-dialog').waitFor();
    await page.fill('input[name=path]', 'coupler:30,pad:20');
    await page.fill('input[name=pep]', '1');
    await page.fill('input[name=serial]', 'SP-001');
    await page.click('#start-session');
    await page.locator('#sessions-dialog').waitFor({ state: 'detached' });

    await page.click('#tab-spectrum');
    await page.click('#spectrum-start');
    await page.locator('#spectrum-levels tr').first().waitFor();
    await page.waitForFunction(() => document.querySelector('#spectrum-suppression')?.textContent !== '—');
    const supp = await page.locator('#spectrum-suppression').innerText();
    assert.match(supp, /^(≥ )?−?\d+\.\d dB/);
    const rows = await page.locator('#spectrum-levels tr').allInnerTexts();
    assert.equal(rows.length, 7, rows.join('\n'));
    assert.ok(rows.some((r) => /^Carrier/.test(r) && /dBm/.test(r)));
    assert.ok(rows.some((r) => /^Upper tone/.test(r) && /\+1000 Hz/.test(r)));
    // The trace is drawn: the canvas has lit pixels in the trace colour's neighbourhood.
    const lit = await page.evaluate(() => {
      const c = document.querySelector('#spectrum-canvas') as HTMLCanvasElement;
      const d = c.getContext('2d')!.getImageData(0, 0, c.width, c.height).data;
      let n = 0;
      for (let i = 3; i < d.length; i += 4) if (d[i] > 0) n++;
      return n;
    });
    assert.ok(lit > 2000, `only ${lit} pixels drawn`);
    await page.locator('#spectrum-card').screenshot({ path: shot('e2e-spectrum-01-live') });

    // Turning a trimmer moves the simulated transmitter's carrier in the stream: less suppression.
    const before = Number(supp.replace(/^≥ /, '').replace('−', '-').split(' ')[0]);
    await page.fill('#trim-A', '0.5');
    await page.press('#trim-A', 'Enter');
    await page.waitForFunction((b) => {
      const t = document.querySelector('#spectrum-suppression')?.textContent ?? '';
      const v = Number(t.replace(/^≥ /, '').replace('−', '-').split(' ')[0]);
      return Number.isFinite(v) && v < b - 3;
    }, before);
    await page.click('#spectrum-keep');
    await page.locator('.notice.info').filter({ hasText: 'kept 7 readings' }).waitFor();
    await page.locator('#spectrum-card').screenshot({ path: shot('e2e-spectrum-02-kept') });
    await page.screenshot({ path: shot('e2e-spectrum-03-page'), fullPage: true });

    const db = new Database(dbFile, { readonly: true });
    try {
      const kept = db
        .prepare("SELECT role, dbm_dut, floor_limited FROM readings WHERE kept = 1 AND note LIKE 'spectrum%'")
        .all() as { role: string; dbm_dut: number; floor_limited: number }[];
      assert.deepEqual(kept.map((r) => r.role).sort(), [
        'carrier',
        'imd3l',
        'imd3u',
        'imd5l',
        'imd5u',
        'lower',
        'upper',
      ]);
      const upper = kept.find((r) => r.role === 'upper')!;
      // 1 W = 30 dBm PEP DSB with one tone: each sideband is PEP - 6.02 dB (docs/references.md, two equal tones).
      // The simulated bench transmits the declared PEP, so this holds only because 1 W was declared.
      assert.ok(Math.abs(upper.dbm_dut - (30 - 6.02)) < 1, `upper ${upper.dbm_dut} dBm`);
    } finally {
      db.close();
    }
    await page.click('#spectrum-start');
    assert.deepEqual(pageErrors, []);
  });
});
