// End to end: an automated accessibility audit (axe-core, the open-source rules engine, run in Debian's
// Chromium) on every view and dialog, at 1366×768 and 1920×1080; no finding of serious or critical impact
// may remain. Then the keyboard: dialogs take the focus, keep it, close with Esc and give it back; only the
// bare K keeps; the bench's panels move with the arrow keys.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import type { Browser, Page } from 'playwright-core';
import { startWeb, type Served } from '../../main/shells/cli/serve';
import { launch, shot } from '../helpers/browser';
import { demoDb } from '../helpers/demo';

const AXE = readFileSync(createRequire(import.meta.url).resolve('axe-core/axe.min.js'), 'utf8');

interface Finding {
  id: string;
  impact: string;
  help: string;
  nodes: string[];
}

/** What inside the open dialog reaches past its right edge (a card pushed out by its fields). */
function sticksOut(page: Page): Promise<string[]> {
  return page.evaluate(() => {
    const d = document.querySelector('.overlay .dialog')!.getBoundingClientRect();
    return [...document.querySelectorAll('.overlay .dialog *')]
      .filter((e) => e.getBoundingClientRect().right > d.right + 1)
      .map((e) => `${e.tagName}#${e.id}.${e.getAttribute('class') ?? ''}`)
      .slice(0, 5);
  });
}

/** axe-core's violations of serious or critical impact on what the page shows now. */
async function audit(page: Page): Promise<Finding[]> {
  if (!(await page.evaluate(() => 'axe' in window))) await page.evaluate(AXE);
  return page.evaluate(async () => {
    const axe = (window as unknown as { axe: { run(o: object): Promise<{ violations: Finding[] }> } }).axe;
    const r = await axe.run({ resultTypes: ['violations'] });
    return r.violations
      .filter((v) => v.impact === 'serious' || v.impact === 'critical')
      .map((v) => ({
        id: v.id,
        impact: v.impact,
        help: v.help,
        nodes: (v.nodes as unknown as { target: string[] }[]).slice(0, 5).map((n) => n.target.join(' ')),
      }));
  });
}

function noFindings(where: string, found: Finding[]): void {
  assert.deepEqual(
    found,
    [],
    `${where}: ${found.map((f) => `${f.impact} ${f.id} (${f.help}) at ${f.nodes.join(', ')}`).join('; ')}`,
  );
}

// Each size in one of the two looks (the light one follows the system's setting).
for (const [width, height, colorScheme] of [
  [1366, 768, 'light'],
  [1920, 1080, 'dark'],
] as const) {
  describe(`accessibility audit at ${width}×${height}, ${colorScheme} look`, () => {
    let served: Served;
    let browser: Browser;
    let page: Page;
    let demo: Awaited<ReturnType<typeof demoDb>>;

    before(async () => {
      demo = await demoDb();
      served = await startWeb({ dbPath: demo.file, port: 0 });
      browser = await launch();
      page = await browser.newPage({ viewport: { width, height }, colorScheme });
    });

    after(async () => {
      await browser?.close();
      await served?.stop();
      demo?.cleanup();
    });

    it('finds nothing serious on the first screen, and its dialog has the focus', async () => {
      await page.goto(served.url);
      await page.locator('#sessions-dialog').waitFor();
      const inDialog = await page.evaluate(() =>
        document.querySelector('#sessions-dialog')!.contains(document.activeElement),
      );
      assert.ok(inDialog, 'the focus moves into the sessions dialog');
      assert.equal(
        await page.locator('#sessions-dialog').getAttribute('aria-labelledby'),
        'sessions-dialog-title',
      );
      noFindings('sessions dialog', await audit(page));
      assert.deepEqual(await sticksOut(page), [], 'the sessions dialog holds its cards');
      await page.screenshot({ path: shot(`a11y-${width}-01-sessions`) });
    });

    it('keeps Tab inside the dialog', async () => {
      for (let i = 0; i < 60; i++) await page.keyboard.press('Tab');
      assert.ok(
        await page.evaluate(() =>
          document.querySelector('#sessions-dialog')!.contains(document.activeElement),
        ),
      );
      await page.keyboard.press('Shift+Tab');
      assert.ok(
        await page.evaluate(() =>
          document.querySelector('#sessions-dialog')!.contains(document.activeElement),
        ),
      );
    });

    it('finds nothing serious on the bench and in each of its panels', async () => {
      await page.click('#start-session');
      await page.locator('#sessions-dialog').waitFor({ state: 'detached' });
      await page.waitForFunction(() => document.querySelector('#level-dut')?.textContent !== '—');
      noFindings('bench', await audit(page));
      for (const tab of await page.locator('[role=tab]').all()) {
        await tab.click();
        const name = await tab.innerText();
        noFindings(`bench panel "${name}"`, await audit(page));
      }
      await page.click('#tab-null');
    });

    it('closes the sessions dialog with Esc and gives the focus back to its button', async () => {
      await page.focus('#btn-sessions');
      await page.keyboard.press('Enter');
      await page.locator('#sessions-dialog').waitFor();
      noFindings('sessions dialog over the bench', await audit(page));
      await page.keyboard.press('Escape');
      await page.locator('#sessions-dialog').waitFor({ state: 'detached' });
      assert.equal(await page.evaluate(() => document.activeElement?.id), 'btn-sessions');
    });

    it('finds nothing serious in the receivers dialog, which Esc closes too', async () => {
      await page.click('#btn-receivers');
      await page.locator('#receivers-dialog').waitFor();
      await page.locator('#rx-templates').filter({ hasText: /\w/ }).waitFor();
      noFindings('receivers dialog', await audit(page));
      assert.deepEqual(await sticksOut(page), [], 'the receivers dialog holds its cards');
      await page.keyboard.press('Escape');
      await page.locator('#receivers-dialog').waitFor({ state: 'detached' });
    });

    it('finds nothing serious in the far view, which Esc leaves', async () => {
      await page.click('#far-view-open');
      await page.locator('#far-view').waitFor();
      noFindings('far view', await audit(page));
      await page.screenshot({ path: shot(`a11y-${width}-02-far-view`) });
      await page.keyboard.press('Escape');
      await page.locator('#far-view').waitFor({ state: 'hidden' });
    });

    it('finds nothing serious in the records views: designs and a unit, the comparison, a test sheet', async () => {
      await page.click('.nav-item[data-view=designs]');
      await page.locator('.tree-item.unit').first().click();
      await page.locator('#unit-form').waitFor();
      noFindings('designs and units, a unit open', await audit(page));
      await page.screenshot({ path: shot(`a11y-${width}-03-designs`), fullPage: true });
      await page.click('#unit-sheet');
      await page.locator('#sheet-preview article.sheet').waitFor();
      noFindings('test sheet view', await audit(page));
      // The limit-set choices have room to be read and hit: not squeezed to a few pixels.
      for (const label of await page.locator('#sheet-settings label.check').all()) {
        const box = (await label.boundingBox())!;
        assert.ok(
          box.width >= 150 && box.height >= 16,
          `a limit-set choice is ${box.width}×${box.height} px`,
        );
        const tick = (await label.locator('input').boundingBox())!;
        assert.ok(tick.width >= 12 && tick.height >= 12, `its checkbox is ${tick.width}×${tick.height} px`);
      }
      await page.screenshot({ path: shot(`a11y-${width}-04-sheet`), fullPage: true });
      await page.click('.nav-item[data-view=compare]');
      await page.locator('#compare-chart-carrier').waitFor();
      noFindings('revision comparison', await audit(page));
      await page.screenshot({ path: shot(`a11y-${width}-05-compare`), fullPage: true });
      await page.click('.nav-item[data-view=bench]');
    });
  });
}
