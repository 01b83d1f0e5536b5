// End to end: the printed sheet never clips a chart or a label. Every demo unit's sheet is laid out by
// Debian's Chromium for print, on A4 and on US Letter; every drawn mark of every chart lies inside its
// chart's own area, every chart inside its card, and nothing is wider than the page's text block.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import type { Browser } from 'playwright-core';
import { renderSheet } from '../../main/sheet';
import { Store } from '../../main/store/store';
import { launch, shot } from '../helpers/browser';
import { demoDb } from '../helpers/demo';

describe('the printed sheet keeps every chart and label inside its card', () => {
  let demo: Awaited<ReturnType<typeof demoDb>>;
  let store: Store;
  let browser: Browser;

  before(async () => {
    demo = await demoDb();
    store = new Store(demo.file);
    browser = await launch();
  });
  after(async () => {
    await browser?.close();
    store?.close();
    demo?.cleanup();
  });

  for (const paper of ['a4', 'letter'] as const) {
    it(`on ${paper === 'a4' ? 'A4' : 'US Letter'}, for every demo unit`, async () => {
      const units = store.tree().flatMap((d) => d.revisions.flatMap((r) => r.units));
      assert.equal(units.length, 6);
      // The page's text block in CSS pixels at 96 px/in: paper width less 13 mm each side (sheet.css @page).
      const widthMm = paper === 'a4' ? 210 : 215.9;
      const page = await browser.newPage({
        viewport: { width: Math.round(((widthMm - 26) / 25.4) * 96), height: 1000 },
      });
      await page.emulateMedia({ media: 'print' });
      for (const u of units) {
        const { html } = renderSheet(store, u.id, { paper, issuedAt: '2026-12-03T12:00:00Z' });
        await page.setContent(html, { waitUntil: 'load' });
        const problems = await page.evaluate(() => {
          const out: string[] = [];
          const sheet = document.querySelector('.sheet') as HTMLElement;
          const limit = sheet.getBoundingClientRect();
          for (const el of Array.from(sheet.querySelectorAll<HTMLElement>('*'))) {
            const r = el.getBoundingClientRect();
            if (r.width && r.right > limit.right + 0.5)
              out.push(
                `${el.tagName}.${el.className} reaches ${r.right.toFixed(1)} past ${limit.right.toFixed(1)}`,
              );
          }
          for (const svg of Array.from(sheet.querySelectorAll('svg'))) {
            const vb = svg.viewBox.baseVal;
            const card = svg.closest('figure')!.getBoundingClientRect();
            const box = svg.getBoundingClientRect();
            if (box.left < card.left - 0.5 || box.right > card.right + 0.5 || box.bottom > card.bottom + 0.5)
              out.push(
                `${svg.getAttribute('aria-label')} sticks out of its card: ${JSON.stringify(box)} in ${JSON.stringify(card)}`,
              );
            for (const g of Array.from(
              svg.querySelectorAll<SVGGraphicsElement>('text, circle, line, polyline, path, rect'),
            )) {
              const raw = g.getBBox();
              if (raw.width === 0 && raw.height === 0) continue;
              // Into the chart's own units, through any rotation (the y-axis title is turned 90°).
              const m = svg.getScreenCTM()!.inverse().multiply(g.getScreenCTM()!);
              const pts = [
                [raw.x, raw.y],
                [raw.x + raw.width, raw.y],
                [raw.x, raw.y + raw.height],
                [raw.x + raw.width, raw.y + raw.height],
              ].map(([x, y]) => new DOMPoint(x, y).matrixTransform(m));
              const xs = pts.map((p) => p.x);
              const ys = pts.map((p) => p.y);
              const b = {
                x: Math.min(...xs),
                y: Math.min(...ys),
                width: Math.max(...xs) - Math.min(...xs),
                height: Math.max(...ys) - Math.min(...ys),
              };
              if (
                b.x < vb.x - 0.5 ||
                b.y < vb.y - 0.5 ||
                b.x + b.width > vb.x + vb.width + 0.5 ||
                b.y + b.height > vb.y + vb.height + 0.5
              )
                out.push(
                  `${svg.getAttribute('aria-label')}: <${g.tagName}> "${(g.textContent ?? '').slice(0, 30)}" at ${b.x.toFixed(1)},${b.y.toFixed(1)} ${b.width.toFixed(1)}×${b.height.toFixed(1)} outside 0,0 ${vb.width}×${vb.height}`,
                );
            }
          }
          return out;
        });
        assert.deepEqual(problems, [], `${u.serial} on ${paper}`);
      }
      await page.screenshot({ path: shot(`sheet-layout-${paper}`), fullPage: true });
      await page.close();
    });
  }
});
