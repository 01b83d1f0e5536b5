// End to end: a new user loads the demo history from the first-start dialog and opens an earlier session.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import type { Browser, Page } from 'playwright-core';
import { join } from 'node:path';
import { startWeb, type Served } from '../../main/shells/cli/serve';
import { launch, shot } from '../helpers/browser';
import { tempDir } from '../helpers/tmp';

describe('web mode, demo history', () => {
  let served: Served;
  let browser: Browser;
  let page: Page;
  let dir: ReturnType<typeof tempDir>;

  before(async () => {
    dir = tempDir();
    served = await startWeb({ dbPath: join(dir.dir, 'demo.db'), port: 0 });
    browser = await launch();
    page = await browser.newPage({ viewport: { width: 1360, height: 900 } });
  });

  after(async () => {
    await browser?.close();
    await served?.stop();
    dir?.cleanup();
  });

  it('loads the demo history and lists its sessions', async () => {
    await page.goto(served.url);
    await page.click('#load-demo');
    await page.locator('#sessions-dialog tr[data-session]').first().waitFor({ timeout: 180000 });
    assert.equal(await page.locator('#sessions-dialog tr[data-session]').count(), 6);
    assert.match(await page.locator('#sessions-dialog').innerText(), /HD40-0201/);
    await page.screenshot({ path: shot('e2e-10-demo-sessions') });
  });

  it('opens an earlier session with its kept readings on the null chart', async () => {
    await page.locator('#sessions-dialog tr[data-session]', { hasText: 'HD40-0201' }).click();
    await page.locator('#sessions-dialog').waitFor({ state: 'detached' });
    await page.waitForFunction(
      () => (document.querySelector('#null-chart') as HTMLElement | null)?.dataset.points?.length ?? 0 > 2,
    );
    const pts = JSON.parse(
      (await page.locator('#null-chart').getAttribute('data-points')) ?? '[]',
    ) as unknown[];
    assert.ok(pts.length >= 15, `demo sweep points on the chart: ${pts.length}`);
    assert.match(await page.locator('#session-line').innerText(), /HD40-0201 · Heron DSB-40 R2/);
    await page.screenshot({ path: shot('e2e-11-demo-session'), fullPage: true });
  });
});
