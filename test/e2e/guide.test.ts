// End to end: guided alignment in Debian's Chromium. A builder who never read the manual starts a session on
// the simulated bench, finds the next setting on the screen, types it into the trimmer fields (or lets the
// button set it), waits for "steady", keeps, and repeats until the app says stop. The carrier must then be
// within 1 dB of the deepest null the trimmers can reach, by the simulated bench's own truth.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { Service } from '../../main/service';
import { WebShell } from '../../main/shells/web';
import { createSource } from '../../main/sources';
import { SimSource } from '../../main/sources/sim';
import { Store } from '../../main/store/store';
import { launch, shot } from '../helpers/browser';
import { tempDir } from '../helpers/tmp';

/** Carrier above the deepest null both trimmers can reach, dB, at the bench's present balance point. */
function excessDb(sim: SimSource, a: number, b: number): number {
  const tx = sim.bench.tx;
  const c = tx.cfg;
  const bal = tx.trueBalance();
  const th = (c.angleDeg * Math.PI) / 180;
  const re = c.gainA * (a - bal.A) + c.gainB * (b - bal.B) * Math.cos(th);
  const im = c.gainB * (b - bal.B) * Math.sin(th);
  const leak = 10 ** (c.leakageDbc / 10);
  return 10 * Math.log10((re * re + im * im + leak) / leak);
}

describe('guided alignment, end to end', () => {
  let store: Store;
  let service: Service;
  let web: WebShell;
  let url: string;
  let browser: Browser;
  let page: Page;
  let dir: ReturnType<typeof tempDir>;
  let sim: SimSource | null = null;
  const pageErrors: string[] = [];

  before(async () => {
    dir = tempDir();
    store = new Store(join(dir.dir, 'guide.db'));
    // The real-time simulated bench, kept at hand so the test can ask it where the null really is.
    service = new Service({
      store,
      mode: 'web',
      createSource: (spec, env) => {
        const s = createSource(spec, env);
        if (s instanceof SimSource) sim = s;
        return s;
      },
    });
    web = new WebShell({ service, port: 0 });
    url = await web.listen();
    browser = await launch();
    page = await browser.newPage({ viewport: { width: 1400, height: 1000 } });
    page.on('pageerror', (e) => pageErrors.push(e.message));
    page.on('console', (m) => {
      if (m.type() === 'error') pageErrors.push(m.text());
    });
  });

  after(async () => {
    await browser?.close();
    await web?.close();
    await service?.close();
    store?.close();
    dir?.cleanup();
  });

  it('shows the first setting to try as soon as a session starts', async () => {
    await page.goto(url);
    await page.locator('#sessions-dialog').waitFor();
    await page.fill('input[name=path]', 'coupler:30,pad:20');
    await page.fill('input[name=pep]', '1');
    await page.fill('input[name=serial]', 'GUIDE-001');
    await page.click('#start-session');
    await page.locator('#sessions-dialog').waitFor({ state: 'detached' });
    await page.locator('#guide-next').filter({ hasText: 'Set' }).waitFor();
    const text = await page.locator('#guide-card').innerText();
    assert.match(text, /Guided alignment/i);
    assert.match(text, /Set Balance R \(A\) to \d+\.\d{3} turns/);
    assert.match(text, /Set Balance C \(B\) to \d+\.\d{3} turns/);
    assert.match(text, /looking over the travel/);
    // A new session starts mid-travel, where the survey begins: the first step is already done.
    assert.match(text, /leave A and B where they are/);
    await page.locator('#guide-card[data-due="3"]').waitFor({ timeout: 60000 });
    assert.match(await page.locator('#guide-steps li.now').innerText(), /Keep the reading/);
    await page.screenshot({ path: shot('guide-01-first-suggestion'), fullPage: true });
  });

  it('reaches the null by following the suggestions, and says when to stop', async () => {
    let readings = 0;
    let sawPair = false;
    for (; readings < 24; readings++) {
      if (await page.locator('#guide-stop').isVisible()) break;
      const next = JSON.parse(
        (await page.locator('#guide-next').getAttribute('data-next')) ?? '{}',
      ) as Record<string, number>;
      const state = await page.locator('#guide-state').innerText();
      if (readings % 4 === 3) {
        // Sometimes the builder lets the button set both.
        await page.click('#guide-set');
      } else {
        // Mostly the builder turns the trimmers and types where they now stand.
        for (const k of ['A', 'B']) {
          await page.fill(`#trim-${k}`, String(next[k]));
          await page.press(`#trim-${k}`, 'Enter');
        }
      }
      await page.locator('#guide-card[data-due="3"]').waitFor({ timeout: 60000 });
      await page.click('#guide-keep');
      await page.waitForFunction(
        (before) => document.querySelector('#guide-state')?.textContent !== before,
        state,
        { timeout: 60000 },
      );
      if (readings === 8) await page.screenshot({ path: shot('guide-02-narrowing'), fullPage: true });
      if (!sawPair && (await page.locator('.guide-pair').count()) > 0) {
        const pair = await page.locator('#guide-last').innerText();
        if (/Predicted\s+−?\d/.test(pair)) {
          assert.match(pair, /Read\s+−?\d+\.\d dBm/);
          assert.match(pair, /Difference\s+[+−]\d+\.\d dB/);
          sawPair = true;
        }
      }
    }
    assert.ok(await page.locator('#guide-stop').isVisible(), `no stop after ${readings} readings`);
    assert.ok(readings <= 20, `took ${readings} readings`);
    assert.ok(sawPair, 'prediction and reading were shown side by side');
    const stopText = await page.locator('#guide-stop').innerText();
    assert.match(
      stopText,
      /Stop here: the null is reached\. (Leave|Set) A (at|to) \d+\.\d{3} turns, B (at|to) \d+\.\d{3} turns/,
    );
    assert.match(stopText, /less than one reading's uncertainty \(0\.3 dB\)/);
    // The builder sets the trimmers to the fitted null (if they are not there yet) and leaves them.
    const leave = JSON.parse((await page.locator('#guide-next').getAttribute('data-next')) ?? '{}') as Record<
      string,
      number
    >;
    if (/Set A to/.test(stopText)) {
      for (const k of ['A', 'B']) {
        await page.fill(`#trim-${k}`, String(leave[k]));
        await page.press(`#trim-${k}`, 'Enter');
      }
      await page.locator('#guide-stop').filter({ hasText: 'Leave A at' }).waitFor({ timeout: 60000 });
    }
    await page.locator('#guide-card[data-due="4"]').waitFor({ timeout: 60000 });
    // Where the trimmers now stand, by the bench's own truth.
    assert.ok(sim, 'the simulated bench was opened');
    const at = sim!.bench.tx.getTrims();
    assert.deepEqual(at, { A: leave.A, B: leave.B });
    const excess = excessDb(sim!, at.A, at.B);
    assert.ok(excess <= 1, `${excess.toFixed(2)} dB above the deepest null at A ${at.A}, B ${at.B}`);
    await page.locator('details.guide-more summary').click();
    await page.screenshot({ path: shot('guide-03-stop'), fullPage: true });
  });

  it('draws the fitted map with every trial point and the fitted curve on the null chart', async () => {
    await page.click('#tab-map');
    const pts = JSON.parse(
      (await page.locator('#null-map').getAttribute('data-points')) ?? '[]',
    ) as number[][];
    const kept = await page.locator('#kept-rows tr').count();
    assert.equal(pts.length, kept, 'one map point per kept carrier reading');
    const best = JSON.parse(
      (await page.locator('#null-map').getAttribute('data-best')) || 'null',
    ) as number[];
    assert.ok(best && best.length === 2, 'the map shows the fitted null');
    assert.match(await page.locator('#null-map-note').innerText(), /Fitted null \d+\.\d{3} × \d+\.\d{3}/);
    // The canvas is not blank: the map's pixels vary.
    const varied = await page.evaluate(() => {
      const c = document.querySelector<HTMLCanvasElement>('#null-map')!;
      const d = c.getContext('2d')!.getImageData(0, 0, c.width, c.height).data;
      const seen = new Set<number>();
      for (let i = 0; i < d.length; i += 4 * 97) seen.add((d[i] << 16) | (d[i + 1] << 8) | d[i + 2]);
      return seen.size;
    });
    assert.ok(varied > 20, `map has ${varied} colours`);
    // The null chart carries the fitted curve and its band among its datasets.
    const labels = await page.evaluate(() => {
      const legend = document.querySelector('#null-chart')?.getAttribute('aria-label') ?? '';
      return legend;
    });
    assert.match(labels, /null chart, \d+ points/);
    await page.selectOption('#null-map-zoom', 'travel');
    await page.screenshot({ path: shot('guide-04-map-whole-travel'), fullPage: true });
  });

  it('guides one trimmer with the other held, with the fitted curve, its band and the next setting on the null chart', async () => {
    await page.selectOption('#guide-mode', 'B');
    await page.click('#tab-null');
    await page.selectOption('#null-trim', 'B');
    // Afresh: the two-trimmer search just left B at the null, and whether its readings alone already call
    // for a stop is the noise's choice. From no readings the first suggestion is always a setting to try.
    if (!(await page.locator('#guide-afresh').isVisible())) await page.click('details.guide-more summary');
    await page.click('#guide-afresh');
    await page
      .locator('#guide-next')
      .filter({ hasText: /^Set Balance C/ })
      .waitFor({ timeout: 60000 });
    assert.match(await page.locator('#guide-next').innerText(), /^Set Balance C \(B\) to \d+\.\d{3} turns$/);
    assert.match(await page.locator('#guide-turn').innerText(), /Balance R held at \d+\.\d+ turns/);
    let readings = 0;
    for (; readings < 14; readings++) {
      if (await page.locator('#guide-stop').isVisible()) break;
      const next = JSON.parse(
        (await page.locator('#guide-next').getAttribute('data-next')) ?? '{}',
      ) as Record<string, number>;
      const state = await page.locator('#guide-state').innerText();
      await page.fill('#trim-B', String(next.B));
      await page.press('#trim-B', 'Enter');
      await page.locator('#guide-card[data-due="3"]').waitFor({ timeout: 60000 });
      await page.click('#guide-keep');
      await page.waitForFunction(
        (before) => document.querySelector('#guide-state')?.textContent !== before,
        state,
        { timeout: 60000 },
      );
      if (readings === 4) await page.screenshot({ path: shot('guide-05-one-trimmer'), fullPage: true });
    }
    assert.ok(await page.locator('#guide-stop').isVisible(), `no stop after ${readings} readings`);
    assert.match(await page.locator('#guide-stop').innerText(), /(Leave|Set) B (at|to) \d+\.\d{3} turns/);
    assert.match(
      (await page.locator('#null-chart').getAttribute('aria-label')) ?? '',
      /against Balance C \(turns\)/,
    );
    // What the legend under the chart names: the fitted curve, its band, the best setting, where to leave B.
    const series = JSON.parse(
      (await page.locator('#null-chart').getAttribute('data-series')) ?? '[]',
    ) as string[];
    const all = series.join(' | ');
    assert.ok(series.includes('fitted null'), all);
    assert.ok(series.includes('95 % band'), all);
    assert.ok(
      series.some((x) => /^best \d+\.\d{3} \(95 % interval\)$/.test(x)),
      all,
    );
    assert.ok(
      series.some((x) => /^leave at: B \d+\.\d{3}$/.test(x)),
      all,
    );
    await page.screenshot({ path: shot('guide-06-one-trimmer-stop'), fullPage: true });
  });

  it('raised no script errors in the page', () => {
    assert.deepEqual(pageErrors, []);
  });
});
