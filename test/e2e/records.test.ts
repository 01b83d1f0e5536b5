// End to end: the record-keeping views in Debian's Chromium on the demo scenario. A builder renames a
// revision and notes what changed, compares R1 with R2 and drills down to a unit's session, sets up and
// previews a unit's test sheet, saves it as PDF, exports a bundle and imports it into another bench.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import Database from 'better-sqlite3';
import { startWeb, type Served } from '../../main/shells/cli/serve';
import { launch, shot } from '../helpers/browser';
import { demoDb } from '../helpers/demo';
import { tempDir } from '../helpers/tmp';

describe('web mode, records views', () => {
  let served: Served;
  let browser: Browser;
  let page: Page;
  let demo: Awaited<ReturnType<typeof demoDb>>;
  const pageErrors: string[] = [];

  before(async () => {
    demo = await demoDb();
    served = await startWeb({ dbPath: demo.file, port: 0 });
    browser = await launch();
    page = await browser.newPage({ viewport: { width: 1400, height: 950 }, acceptDownloads: true });
    page.on('pageerror', (e) => pageErrors.push(e.message));
    page.on('console', (m) => {
      if (m.type() === 'error') pageErrors.push(m.text());
    });
  });

  after(async () => {
    await browser?.close();
    await served?.stop();
    demo?.cleanup();
  });

  it('keeps the bench as the first view and navigates to designs and units', async () => {
    await page.goto(served.url);
    await page.locator('#sessions-dialog').waitFor();
    assert.equal(await page.locator('.nav-item.on').innerText(), 'Bench');
    await page.click('.nav-item[data-view=designs]');
    await page.locator('#record-detail').waitFor();
    assert.equal(
      await page.locator('#sessions-dialog').count(),
      0,
      'the sessions dialog belongs to the bench',
    );
    assert.match(page.url(), /#\/designs$/);
    assert.equal(await page.locator('.tree-item.unit').count(), 6);
  });

  it('renames a revision and records what changed on the board', async () => {
    await page.locator('.tree-item.revision', { hasText: 'Revision R2' }).click();
    await page.fill('#revision-form input[name=revision-name]', 'R2a');
    await page.fill(
      '#revision-form textarea[name=revision-changes]',
      'Ground plane, shielded oscillator, short trimmer leads.',
    );
    await page.click('#revision-form button[type=submit]');
    await page.locator('.tree-item.revision', { hasText: 'Revision R2a' }).waitFor();
    const db = new Database(demo.file, { readonly: true });
    const r = db.prepare("SELECT changes FROM revisions WHERE name = 'R2a'").get() as { changes: string };
    db.close();
    assert.equal(r.changes, 'Ground plane, shielded oscillator, short trimmer leads.');
    await page.screenshot({ path: shot('e2e-20-designs-revision'), fullPage: true });
  });

  it('refuses a duplicate serial on screen and saves nothing', async () => {
    await page.locator('.tree-item.unit', { hasText: 'HD40-0202' }).click();
    await page.locator('#unit-form').waitFor();
    await page.fill('#unit-form input[name=unit-serial]', 'HD40-0201');
    await page.click('#unit-form button[type=submit]');
    await page.locator('#unit-form .error-text').filter({ hasText: 'already exists' }).waitFor();
    assert.match(
      await page.locator('#unit-form .error-text').innerText(),
      /serial "HD40-0201" already exists/,
    );
  });

  it('shows a unit’s sessions with figures and verdicts', async () => {
    await page.locator('#session-results table.figures').waitFor();
    const text = await page.locator('#session-results').innerText();
    assert.match(text, /Carrier below PEP\s+\d+\.\d ± \d\.\d dB/);
    assert.match(text, /PASS/);
    await page.screenshot({ path: shot('e2e-21-unit-sessions'), fullPage: true });
  });

  it('compares the revisions: R2a nulls the carrier better than R1, and drills down to a session', async () => {
    await page.click('.nav-item[data-view=compare]');
    await page.locator('section[data-metric=carrier] canvas').waitFor();
    const chips = await page.locator('#compare-summary').innerText();
    assert.match(chips, /Carrier suppression: R2a better than R1 by \d+\.\d dB/);
    const summary = JSON.parse(
      (await page.locator('#compare-chart-carrier').getAttribute('data-summary'))!,
    ) as {
      revision: string;
      median: number;
      n: number;
    }[];
    assert.equal(summary.length, 2);
    assert.ok(summary[1].median - summary[0].median > 5, JSON.stringify(summary));
    assert.match(
      await page.locator('section[data-metric=opposite]').innerText(),
      /Not measured: the sessions are DSB/,
    );
    await page.screenshot({ path: shot('e2e-22-compare'), fullPage: true });
    await page.locator('section[data-metric=carrier] tr[data-revision=R1]').click();
    await page.locator('section[data-metric=carrier] tr[data-unit=HD40-0102]').click();
    await page.locator('#unit-form').waitFor();
    assert.match(page.url(), /#\/designs\?unit=.*&session=/);
    assert.match(await page.locator('#unit-form h2').innerText(), /HD40-0102/);
  });

  it('previews the test sheet, changes its limit sets, and saves it as PDF', async () => {
    await page.click('#unit-sheet');
    await page.locator('#sheet-preview article.sheet').waitFor();
    const text = await page.locator('#sheet-preview').innerText();
    assert.match(text, /HD40-0102/);
    assert.match(text, /Carrier suppression, against PEP/);
    await page.check('input[name=sheet-limit][value="preset:common-practice-careful"]');
    await page.fill('textarea[name=sheet-notes]', 'Kit for the club station.');
    await page.click('#sheet-settings button[type=submit]');
    await page.locator('#sheet-preview').filter({ hasText: 'Kit for the club station.' }).waitFor();
    assert.match(await page.locator('#sheet-preview').innerText(), /Carefully laid-out board/);
    await page.screenshot({ path: shot('e2e-23-sheet-preview'), fullPage: true });
    const [download] = await Promise.all([
      page.waitForEvent('download', { timeout: 60000 }),
      page.click('#sheet-pdf'),
    ]);
    assert.match(download.suggestedFilename(), /^nullbench-sheet-HD40-0102-\d{4}-\d\d-\d\d\.pdf$/);
    const file = join(demo.dir, 'dl.pdf');
    await download.saveAs(file);
    assert.equal(readFileSync(file).subarray(0, 5).toString(), '%PDF-');
  });

  it('saves a limit set of its own and shows it for the sheet', async () => {
    await page.fill('input[name=limit-name]', 'Club kit target');
    await page.fill('input[name=limit-source]', 'our club, 2026');
    await page.selectOption('#limit-rules select[name=rule-metric]', 'carrier:pep');
    await page.fill('#limit-rules input[name=rule-db]', '62');
    await page.click('#limit-form button[type=submit]');
    await page.locator('label.check', { hasText: 'Club kit target' }).waitFor();
    await page.fill('input[name=limit-name]', 'Bad');
    await page.fill('#limit-rules input[name=rule-db]', '-5');
    await page.click('#limit-form button[type=submit]');
    await page.locator('#limit-error').filter({ hasText: 'rules[0].minDb' }).waitFor();
  });

  it('exports a bundle and imports it into another bench without duplicates', async () => {
    await page.click('.nav-item[data-view=designs]');
    await page.locator('#export-all').waitFor();
    const [download] = await Promise.all([page.waitForEvent('download'), page.click('#export-all')]);
    const bundle = join(demo.dir, 'bundle.json');
    await download.saveAs(bundle);
    assert.match(readFileSync(bundle, 'utf8'), /"format": "nullbench-bundle"/);
    // Into a second, empty bench, through its own web page (the file goes up in parts).
    const t = tempDir();
    const other = await startWeb({ dbPath: join(t.dir, 'other.db'), port: 0 });
    try {
      const p2 = await browser.newPage();
      await p2.goto(`${other.url}#/designs`);
      await p2.locator('#import-bundle').setInputFiles(bundle);
      await p2
        .locator('.notice')
        .filter({ hasText: /added 1 designs, 2 revisions, 6 units, 6 sessions, \d+ readings/ })
        .waitFor({ timeout: 60000 });
      await p2.locator('.tree-item.unit').nth(5).waitFor();
      await p2.locator('#import-bundle').setInputFiles(bundle);
      await p2
        .locator('.notice')
        .filter({ hasText: /added nothing/ })
        .waitFor({ timeout: 60000 });
      await p2.screenshot({ path: shot('e2e-24-imported') });
      await p2.close();
      const db = new Database(join(t.dir, 'other.db'), { readonly: true });
      const n = (db.prepare('SELECT COUNT(*) AS n FROM units').get() as { n: number }).n;
      db.close();
      assert.equal(n, 6);
    } finally {
      await other.stop();
      t.cleanup();
    }
  });

  it('raised no script errors in the page', () => {
    assert.deepEqual(pageErrors, []);
  });
});
