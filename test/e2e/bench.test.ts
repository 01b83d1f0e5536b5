// End to end: the web mode in Debian's Chromium. A builder opens the app, starts a session on the simulated
// bench, sets a trimmer and keeps a reading, runs a sweep, and sees the null in the chart and in the database.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import type { Browser, Page } from 'playwright-core';
import Database from 'better-sqlite3';
import { join } from 'node:path';
import { RF_CAUTION } from '../../app/caution';
import { startWeb, type Served } from '../../main/shells/cli/serve';
import { launch, shot } from '../helpers/browser';
import { tempDir } from '../helpers/tmp';

describe('web mode, end to end', () => {
  let served: Served;
  let browser: Browser;
  let page: Page;
  let dir: ReturnType<typeof tempDir>;
  let dbFile: string;
  const pageErrors: string[] = [];

  before(async () => {
    dir = tempDir();
    dbFile = join(dir.dir, 'e2e.db');
    served = await startWeb({ dbPath: dbFile, port: 0 });
    browser = await launch();
    page = await browser.newPage({ viewport: { width: 1360, height: 900 } });
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

  it('opens on the sessions dialog when there is no session yet', async () => {
    await page.goto(served.url);
    await page.locator('#sessions-dialog').waitFor();
    assert.match(await page.locator('#sessions-dialog').innerText(), /simulated bench needs no hardware/);
    await page.screenshot({ path: shot('e2e-01-first-start') });
  });

  it('refuses an unsafe set-up on screen, then starts a safe session on the simulated bench', async () => {
    await page.fill('input[name=path]', 'pad:3');
    await page.fill('input[name=pep]', '100');
    await page.click('#start-session');
    await page.locator('#session-error').filter({ hasText: 'refused' }).waitFor();
    const refusal = await page.locator('#session-error').innerText();
    assert.match(refusal, /rated maximum/);
    // The refusal carries the RF caution (app/caution.ts), and the refused set-up wrote nothing: the web
    // API's tree is still empty (no design, revision or unit was left behind).
    assert.ok(refusal.includes(RF_CAUTION), refusal);
    const tree = await page.evaluate(async () => {
      const res = await fetch('/api/call/tree', {
        method: 'POST',
        headers: { 'Content-Type': 'application/json' },
        body: '{}',
      });
      return (await res.json()) as { ok: boolean; value: unknown[] };
    });
    assert.equal(tree.ok, true);
    assert.deepEqual(tree.value, []);
    await page.screenshot({ path: shot('e2e-02-unsafe-refused') });
    await page.fill('input[name=path]', 'coupler:30,pad:20');
    await page.fill('input[name=pep]', '1');
    await page.fill('input[name=serial]', 'E2E-001');
    await page.click('#start-session');
    await page.locator('#sessions-dialog').waitFor({ state: 'detached' });
    await page.waitForFunction(() => document.querySelector('#level-dut')?.textContent !== '—');
    assert.match(await page.locator('#session-line').innerText(), /E2E-001/);
    assert.match(await page.locator('#link-state').innerText(), /reading/);
  });

  it('keeps a reading at a typed trimmer position', async () => {
    await page.fill('#trim-A', '3');
    await page.press('#trim-A', 'Enter');
    await page.locator('#settle.steady').waitFor({ timeout: 60000 });
    await page.click('#keep');
    // The kept readings are one tab away below the level (the trimmers and Keep stay in view).
    await page.click('#tab-kept');
    await page.locator('#kept-rows tr').first().waitFor();
    assert.match(await page.locator('#kept-rows tr').first().innerText(), /Carrier\s+3\b/);
  });

  it('runs a sweep and draws the V-shaped null in the chart, every kept reading in SQLite', async () => {
    await page.click('#tab-sweep');
    await page.fill('#sweep-from', '1');
    await page.fill('#sweep-to', '8');
    await page.fill('#sweep-steps', '8');
    await page.click('#sweep-run');
    await page.locator('#sweep-msg').filter({ hasText: 'Done' }).waitFor({ timeout: 120000 });
    assert.equal(await page.locator('#kept-rows tr').count(), 9);
    // The chart publishes the points it plots on its canvas.
    const pts = JSON.parse((await page.locator('#null-chart').getAttribute('data-points')) ?? 'null') as {
      x: number;
      y: number;
    }[];
    assert.ok(pts && pts.length >= 8, 'null chart has the kept points');
    const ys = pts.map((p) => p.y);
    const i = ys.indexOf(Math.min(...ys));
    assert.ok(
      i > 0 && i < ys.length - 1,
      `minimum inside the sweep: ${ys.map((y) => y.toFixed(0)).join(' ')}`,
    );
    assert.ok(
      ys[0] - ys[i] > 10 && ys[ys.length - 1] - ys[i] > 10,
      `V-shaped: ${ys.map((y) => y.toFixed(0)).join(' ')}`,
    );
    await page.screenshot({ path: shot('e2e-03-null-after-sweep'), fullPage: true });

    const db = new Database(dbFile, { readonly: true });
    const kept = db
      .prepare("SELECT COUNT(*) AS n FROM readings WHERE kept = 1 AND role = 'carrier'")
      .get() as { n: number };
    const all = db.prepare('SELECT COUNT(*) AS n FROM readings').get() as { n: number };
    db.close();
    assert.equal(kept.n, 9);
    assert.ok(all.n > kept.n, 'live readings are stored too');
  });

  it('shows the carrier in dBc once the tones are kept', async () => {
    await page.click('[data-role=upper]');
    await page.locator('#settle.steady').waitFor({ timeout: 60000 });
    await page.click('#keep');
    await page.click('[data-role=carrier]');
    await page.locator('#level-dbc').filter({ hasText: 'dBc' }).waitFor({ timeout: 60000 });
    assert.match(await page.locator('#level-dbc').innerText(), /^[−+]\d+\.\d dB rel\. upper tone \(dBc\)$/);
    await page.screenshot({ path: shot('e2e-04-dbc') });
  });

  it('ends the session from the top bar, shows it for review, and starts a new one like it', async () => {
    const before = (await page.locator('#session-line').innerText()).split(' · session of')[0];
    await page.click('#btn-end-session');
    await page.locator('#ended-banner').waitFor({ state: 'visible' });
    assert.match(await page.locator('#ended-text').innerText(), /This session ended .*nothing new is stored/);
    assert.equal(await page.locator('#link-state').innerText(), 'ended · review only');
    assert.equal(await page.locator('#btn-end-session').isVisible(), false);
    await page.screenshot({ path: shot('e2e-05-ended') });
    const db = new Database(dbFile, { readonly: true });
    const ended = db.prepare('SELECT id, ended_at FROM sessions WHERE ended_at IS NOT NULL').all() as {
      id: string;
      ended_at: string;
    }[];
    assert.equal(ended.length, 1, 'one session ended');
    const count = () =>
      (
        db.prepare('SELECT COUNT(*) AS n FROM readings_wide WHERE session_id = ?').get(ended[0].id) as {
          n: number;
        }
      ).n;
    const n = count();
    await page.waitForTimeout(500); // any reading now would be one stored after the end
    assert.equal(count(), n, 'readings stored in an ended session');
    await page.click('#btn-repeat-session');
    await page.locator('#ended-banner').waitFor({ state: 'hidden' });
    await page.locator('#link-state.live').waitFor();
    assert.equal((await page.locator('#session-line').innerText()).split(' · session of')[0], before);
    const sessions = db.prepare('SELECT COUNT(*) AS n FROM sessions').get() as { n: number };
    db.close();
    assert.equal(sessions.n, 2, 'a second session with the same set-up');
  });

  it('keeps to one dialog at a time, and lights one navigation item after a reload', async () => {
    await page.click('#btn-sessions');
    await page.locator('#sessions-dialog').waitFor();
    await page.click('#btn-sessions', { force: true });
    assert.equal(await page.locator('.overlay').count(), 1, 'a second sessions dialog');
    await page.click('#btn-receivers', { force: true });
    await page.locator('#receivers-dialog').waitFor();
    assert.equal(await page.locator('.overlay').count(), 1, 'dialogs stacked');
    await page.click('#receivers-close');
    await page.goto(`${served.url}#/designs`);
    await page.reload();
    await page.locator('#records').waitFor();
    assert.deepEqual(await page.locator('#nav .nav-item.on').allInnerTexts(), ['Designs & units']);
  });

  it('raised no script errors in the page', () => {
    assert.deepEqual(pageErrors, []);
  });
});
