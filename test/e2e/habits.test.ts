// End to end: the bench as a builder at a cluttered bench meets it, at 1366×768 and at 1920×1080. The level,
// the trimmers, Keep and the guide's next step are in view together without scrolling; a notice never
// covers a control; "4,37" in a trimmer field is 4.37 turns; only the bare K keeps; a session ends, is
// continued knowingly or repeated; a sheet prints on US Letter or A4 as chosen.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import Database from 'better-sqlite3';
import { startWeb, type Served } from '../../main/shells/cli/serve';
import { launch, shot } from '../helpers/browser';
import { tempDir } from '../helpers/tmp';

interface Box {
  x: number;
  y: number;
  width: number;
  height: number;
}

const inside = (b: Box | null, w: number, h: number) =>
  !!b && b.x >= 0 && b.y >= 0 && b.x + b.width <= w + 0.5 && b.y + b.height <= h + 0.5;
const overlap = (a: Box, b: Box) =>
  a.x < b.x + b.width && b.x < a.x + a.width && a.y < b.y + b.height && b.y < a.y + a.height;

for (const [width, height] of [
  [1366, 768],
  [1920, 1080],
] as const) {
  describe(`the bench at ${width}×${height}`, () => {
    let served: Served;
    let browser: Browser;
    let page: Page;
    let dir: ReturnType<typeof tempDir>;
    let dbFile: string;
    const db = () => new Database(dbFile, { readonly: true });

    before(async () => {
      dir = tempDir();
      dbFile = join(dir.dir, 'habits.db');
      served = await startWeb({ dbPath: dbFile, port: 0 });
      browser = await launch();
      // The larger screen in a decimal-comma locale: the app still writes every figure the same way.
      page = await browser.newPage({
        viewport: { width, height },
        acceptDownloads: true,
        locale: width === 1920 ? 'de-DE' : 'en-US',
      });
      await page.goto(served.url);
      await page.locator('#sessions-dialog').waitFor();
      await page.fill('input[name=serial]', `HB-${width}`);
      await page.click('#start-session');
      await page.locator('#sessions-dialog').waitFor({ state: 'detached' });
      await page.waitForFunction(() => document.querySelector('#level-dut')?.textContent !== '—');
    });

    after(async () => {
      await browser?.close();
      await served?.stop();
      dir?.cleanup();
    });

    it('shows the level with its uncertainty and state, the trimmers, Keep and the next step, unscrolled', async () => {
      await page.evaluate(() => window.scrollTo(0, 0));
      for (const sel of ['#level-dut', '#settle', '#trim-A', '#trim-B', '#keep', '#guide-next']) {
        const box = await page.locator(sel).boundingBox();
        assert.ok(
          inside(box, width, height),
          `${sel} at ${JSON.stringify(box)} is outside ${width}×${height}`,
        );
      }
      assert.match(await page.locator('#level-card').innerText(), /± \d+\.\d dB \(k=2\)/);
      await page.screenshot({ path: shot(`habits-${width}-01-at-a-glance`) });
    });

    it('says in words what every chart shows, and what to do where a chart is still empty', async () => {
      await page.waitForFunction(() =>
        /over the last 60 s: from/.test(
          document.querySelector('#strip-chart')?.getAttribute('aria-label') ?? '',
        ),
      );
      assert.equal(await page.locator('#strip-chart').getAttribute('role'), 'img');
      assert.match(await page.locator('#pane-null .chart-empty').innerText(), /No carrier readings kept yet/);
      for (const [tab, text] of [
        ['#tab-map', /the map of the null fills in from the sixth/],
        ['#tab-plan', /appears here as the plan measures it/],
        ['#tab-spectrum', /Press Start to see the spectrum/],
      ] as const) {
        await page.click(tab);
        assert.match(await page.locator('[role=tabpanel]:not([hidden]) .chart-empty').innerText(), text);
      }
      await page.click('#tab-null');
    });

    it('writes chart ticks like every other figure, whatever the browser locale', async () => {
      await page.waitForFunction(
        () => (document.querySelector<HTMLElement>('#strip-chart')?.dataset.ticks ?? '[]').length > 2,
      );
      const ticks = JSON.parse((await page.locator('#strip-chart').getAttribute('data-ticks'))!) as string[];
      assert.ok(ticks.length >= 2, JSON.stringify(ticks));
      for (const t of ticks)
        assert.match(t, /^(\u2212)?\d+(\.\d+)?$/, `tick "${t}" (${JSON.stringify(ticks)})`);
    });

    it('plays a null tone whose pitch follows the level, and stops it', async () => {
      await page.click('#null-tone');
      assert.equal(await page.locator('#null-tone').getAttribute('aria-pressed'), 'true');
      await page.waitForFunction(
        () => Number(document.querySelector<HTMLElement>('#null-tone')?.dataset.hz) > 0,
      );
      const hz = Number(await page.locator('#null-tone').getAttribute('data-hz'));
      assert.ok(hz >= 200 && hz <= 1600, `${hz} Hz`);
      await page.click('#null-tone');
      assert.equal(await page.locator('#null-tone').getAttribute('aria-pressed'), 'false');
    });

    it('reads "4,37" in a trimmer field as 4.37 turns, and refuses "4,3,7" naming the field', async () => {
      await page.fill('#trim-A', '4,37');
      await page.press('#trim-A', 'Enter');
      await page.waitForFunction(async () => {
        const r = await fetch('/api/call/status', {
          method: 'POST',
          headers: { 'Content-Type': 'application/json' },
          body: '{}',
        });
        const s = (await r.json()) as { value: { trims: Record<string, number> } };
        return Math.abs(s.value.trims.A - 4.37) < 1e-9;
      });
      await page.fill('#trim-A', '4,3,7');
      await page.press('#trim-A', 'Enter');
      await page.locator('.notice.error').filter({ hasText: 'Balance R: "4,3,7" is not a number' }).waitFor();
      assert.equal(await page.locator('#trim-A').getAttribute('aria-invalid'), 'true');
    });

    it('puts notices on their own line, never over a control', async () => {
      const notice = await page.locator('.notice').first().boundingBox();
      assert.ok(notice);
      for (const sel of ['#keep', '#trim-A', '#trim-B', '#guide-card', '#level-card', '#btn-sessions']) {
        const box = (await page.locator(sel).boundingBox())!;
        assert.ok(!overlap(notice, box), `the notice covers ${sel}`);
      }
      await page.screenshot({ path: shot(`habits-${width}-02-notice`) });
    });

    it('keeps to one dialog at a time', async () => {
      await page.click('#btn-sessions');
      await page.locator('#sessions-dialog').waitFor();
      await page.click('#btn-receivers', { force: true });
      await page.locator('#receivers-dialog').waitFor();
      assert.equal(await page.locator('.overlay').count(), 1, 'dialogs stacked');
      await page.keyboard.press('Escape');
      await page.locator('.overlay').waitFor({ state: 'detached' });
    });

    it('keeps with the bare K only: Ctrl+K, Alt+K and Meta+K belong to others', async () => {
      await page.fill('#trim-A', '4.37');
      await page.press('#trim-A', 'Enter');
      await page.locator('#settle.steady').waitFor({ timeout: 60_000 });
      await page.evaluate(() => (document.activeElement as HTMLElement | null)?.blur());
      const kept = () => {
        const d = db();
        try {
          return (d.prepare('SELECT COUNT(*) AS n FROM readings WHERE kept = 1').get() as { n: number }).n;
        } finally {
          d.close();
        }
      };
      const n = kept();
      for (const combo of ['Control+k', 'Alt+k', 'Meta+k']) await page.keyboard.press(combo);
      await page.waitForTimeout(500);
      assert.equal(kept(), n, 'a modified K kept a reading');
      await page.keyboard.press('k');
      await page.locator('.notice').filter({ hasText: 'Kept carrier' }).waitFor();
      assert.equal(kept(), n + 1);
    });

    it('ends the session, continues it only when asked (its notes say so), and ends it again', async () => {
      await page.click('#btn-end-session');
      await page.locator('#ended-banner').waitFor();
      await page
        .locator('#ended-text')
        .filter({ hasText: /unless you continue it/ })
        .waitFor();
      await page.screenshot({ path: shot(`habits-${width}-03-ended`) });
      await page.click('#btn-continue-session');
      await page.locator('#ended-banner').waitFor({ state: 'hidden' });
      await page.locator('#link-state.live').waitFor();
      const d = db();
      try {
        const s = d.prepare('SELECT ended_at, notes FROM sessions').get() as {
          ended_at: string | null;
          notes: string;
        };
        assert.equal(s.ended_at, null);
        assert.match(s.notes, /Continued .* UTC after it had ended .* UTC\./);
      } finally {
        d.close();
      }
      await page.click('#btn-end-session');
      await page.locator('#ended-banner').waitFor();
    });

    it('states when reading stops on its own', async () => {
      await page.click('#tab-setup');
      assert.match(
        await page.locator('#reading-rule').innerText(),
        /Reading stops when you end the session, or after 120 s with no window open on this bench/,
      );
      await page.click('#tab-null');
    });

    it('prints the sheet on the paper chosen: US Letter, then A4', async () => {
      await page.click('.nav-item[data-view=sheet]');
      await page.locator('select[name=sheet-paper]').waitFor();
      for (const [paper, size] of [
        ['letter', /612 x 792 pts/],
        ['a4', /59\d(\.\d+)? x 84\d(\.\d+)? pts/],
      ] as const) {
        await page.selectOption('select[name=sheet-paper]', paper);
        const [download] = await Promise.all([
          page.waitForEvent('download', { timeout: 60_000 }),
          page.click('#sheet-pdf'),
        ]);
        const file = join(dir.dir, `${paper}.pdf`);
        await download.saveAs(file);
        // Reference: poppler's pdfinfo reads the page size the PDF declares.
        assert.match(execFileSync('pdfinfo', [file], { encoding: 'utf8' }), size);
      }
      await page.click('.nav-item[data-view=bench]');
    });
  });
}
