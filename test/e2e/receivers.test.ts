// End to end in Debian's Chromium: a builder whose receiver sits behind the network rig-control protocol
// (our scripted server, answering from the simulated bench) picks the stored receiver profile, starts a session,
// runs a frequency-stepped plan and reads its table and chart, sees a link fault and the recovery, calibrates
// a second receiver with a signal generator, and edits a serial command set.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import type { Browser, Page } from 'playwright-core';
import { join } from 'node:path';
import { startWeb, type Served } from '../../main/shells/cli/serve';
import { Service } from '../../main/service';
import { SimBench } from '../../main/sim/bench';
import { RigServer } from '../../main/sim/rigserver';
import { Store } from '../../main/store/store';
import { launch, shot } from '../helpers/browser';
import { tempDir } from '../helpers/tmp';

describe('web mode with real receivers, end to end', () => {
  let served: Served;
  let browser: Browser;
  let page: Page;
  let dir: ReturnType<typeof tempDir>;
  let rig: RigServer;
  let rigPort: number;
  let gen: RigServer;
  const pageErrors: string[] = [];

  before(async () => {
    dir = tempDir();
    const dbFile = join(dir.dir, 'e2e-rx.db');
    // Our receiver: the simulated bench (a 1 W DSB board through 50 dB) behind the network protocol.
    rig = new RigServer({ bench: new SimBench({ seed: 3, pathLossDb: 50 }) });
    rigPort = await rig.listen();
    // A second receiver on the calibration bench, fed by a signal generator.
    gen = new RigServer({ script: [-40] });
    const genPort = await gen.listen();
    const store = new Store(dbFile);
    const s = new Service({ store, mode: 'cli' });
    await s.invoke('saveReceiver', {
      receiver: { name: 'Bench rig', source: `net:127.0.0.1:${rigPort}`, bandwidthHz: 500, maxInputDbm: 10 },
    });
    await s.invoke('saveReceiver', {
      receiver: {
        name: 'Spare receiver',
        source: `net:127.0.0.1:${genPort}`,
        bandwidthHz: 2400,
        maxInputDbm: 0,
      },
    });
    await s.close();
    store.close();
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
    await rig?.close().catch(() => undefined);
    await gen?.close();
    dir?.cleanup();
  });

  it('starts a session on the stored receiver profile, reading over the network protocol', async () => {
    await page.goto(served.url);
    await page.locator('#sessions-dialog').waitFor();
    const pick = page.locator('select[name=receiver-profile]');
    await pick.locator('option', { hasText: 'Bench rig' }).waitFor({ state: 'attached' });
    await pick.selectOption({ label: 'Bench rig' });
    assert.equal(await page.inputValue('input[name=source]'), `net:127.0.0.1:${rigPort}`);
    await page.fill('input[name=serial]', 'E2E-RX-1');
    await page.fill('input[name=path]', 'coupler:30,pad:20');
    await page.fill('input[name=pep]', '1');
    await page.click('#start-session');
    await page.locator('#sessions-dialog').waitFor({ state: 'detached' });
    await page.waitForFunction(() => document.querySelector('#level-dut')?.textContent !== '—');
    assert.match(
      await page.locator('#link-state').innerText(),
      new RegExp(`reading · net:127\\.0\\.0\\.1:${rigPort}`),
    );
  });

  it('runs a plan with progress and shows the table and chart in dB against the tones', async () => {
    await page.click('#tab-plan');
    await page.fill('#plan-average', '3');
    await page.fill('#plan-settle', '300');
    await page.check('#plan-points input[value=h2]');
    await page.click('#plan-start');
    await page.locator('#plan-msg').filter({ hasText: 'Plan complete' }).waitFor({ timeout: 60000 });
    const rows = await page.locator('#plan-rows tr').allInnerTexts();
    assert.equal(rows.length, 6);
    const rel = (role: string) =>
      page
        .locator(`#plan-rows tr[data-role=${role}] td:nth-child(5)`)
        .innerText()
        .then((t) => Number(t.replace('−', '-')));
    // The simulated board's IMD3 lies 32 dB below one tone (main/sim/transmitter.ts), its 2nd harmonic 42 dB.
    assert.ok(Math.abs((await rel('imd3u')) + 32) < 2.5, `IMD3 ${await rel('imd3u')}`);
    assert.ok(Math.abs((await rel('h2')) + 42) < 2.5, `H2 ${await rel('h2')}`);
    const pts = JSON.parse(
      (await page.locator('#plan-chart').getAttribute('data-points')) ?? '[]',
    ) as unknown[];
    assert.equal(pts.length, 6);
    assert.equal(await page.locator('#plan-progress').getAttribute('value'), '6');
    await page.locator('#plan-card').scrollIntoViewIfNeeded();
    await page.locator('#plan-card').screenshot({ path: shot('e2e-rx-01-plan-table') });
    // The same run against PEP: each figure 6.02 dB lower (docs/references.md: PEP = 4 x one tone's power).
    const tone = await rel('carrier');
    await page.selectOption('#plan-reference', 'pep');
    const pep = await rel('carrier');
    assert.ok(Math.abs(tone - pep - 6.02) < 0.3, `tone ${tone}, pep ${pep}`);
  });

  it('shows a link fault plainly and recovers when the receiver is back', async () => {
    await rig.close();
    await page.locator('#link-state.fault').waitFor({ timeout: 60000 });
    assert.match(
      await page.locator('#link-state').innerText(),
      /fault: .*rig-control daemon at 127\.0\.0\.1/,
    );
    await page.evaluate(() => window.scrollTo(0, 0));
    await page.screenshot({ path: shot('e2e-rx-02-link-fault') });
    rig = new RigServer({ bench: new SimBench({ seed: 3, pathLossDb: 50 }) });
    await rig.listen(rigPort);
    await page.locator('#link-state.live').waitFor({ timeout: 60000 });
    assert.match(await page.locator('#link-state').innerText(), /reading/);
  });

  it('calibrates a receiver with a signal generator through a pad, step by step', async () => {
    await page.click('#btn-receivers');
    await page.locator('#receivers-dialog').waitFor();
    await page.click('#rx-rows tr[data-receiver="Spare receiver"]');
    await page.fill('input[name=cal-freq]', '7.1');
    await page.fill('input[name=cal-pad]', '40');
    await page.fill('input[name=cal-level]', '-80');
    gen.setScript([-40]);
    await page.click('#cal-read');
    await page.locator('#cal-rows tr').first().waitFor({ timeout: 60000 });
    await page.fill('input[name=cal-level]', '-40');
    gen.setScript([2]);
    await page.click('#cal-read');
    await page.locator('#cal-rows tr').nth(1).waitFor({ timeout: 60000 });
    // A level above the receiver's rating is refused before anything is read.
    await page.fill('input[name=cal-level]', '50');
    await page.click('#cal-read');
    await page.locator('#cal-error').filter({ hasText: 'above its rated' }).waitFor();
    await page.click('#cal-fit');
    await page.locator('#cal-table').waitFor({ timeout: 60000 });
    // Level at the receiver = generator - pad: -40 -> -120 dBm, +2 -> -80 dBm.
    assert.match(await page.locator('#cal-table').innerText(), /-40 → −120\.0 dBm, 2 → −80\.0 dBm/);
    assert.match(await page.locator('#rx-rows').innerText(), /Spare receiver.*guided calibration/);
    await page
      .locator('#receivers-dialog .dialog')
      .screenshot({ path: shot('e2e-rx-03-receivers-calibration') });
    // A table from a file is checked like any other: levels must rise with the reading.
    const bad = {
      name: 'from a file',
      quantity: 'strength-db',
      bands: [
        {
          fromHz: 0,
          toHz: 30e6,
          points: [
            { raw: -40, dbm: -100 },
            { raw: 0, dbm: -110 },
          ],
        },
      ],
    };
    await page.setInputFiles('#cal-import', {
      name: 'bad.json',
      mimeType: 'application/json',
      buffer: Buffer.from(JSON.stringify(bad)),
    });
    await page.locator('#cal-error').filter({ hasText: 'bands[0].points[1].dbm' }).waitFor();
    await page.click('#cal-clear');
    await page
      .locator('#rx-rows tr[data-receiver="Spare receiver"]')
      .filter({ hasText: 'IARU R.1 default' })
      .waitFor();
  });

  it('edits a copy of a built-in serial command set, and names the field of a mistake', async () => {
    await page.click('#tpl-list button[data-template=db-over-s9]');
    assert.equal(await page.inputValue('input[name=tpl-name]'), 'db-over-s9-copy');
    assert.equal(await page.inputValue('input[name=tpl-terminator]'), '\\r');
    await page.fill('input[name=tpl-name]', 'my-level-meter');
    await page.fill('input[name=tpl-response]', '^LVL .*$');
    await page.click('#tpl-save');
    await page.locator('#tpl-error').filter({ hasText: 'template.response' }).waitFor();
    assert.match(await page.locator('#tpl-error').innerText(), /no capture group/);
    await page.fill('input[name=tpl-response]', '^LVL ([-+]?\\d+(?:\\.\\d+)?)$');
    await page.click('#tpl-save');
    await page.locator('#tpl-list button[data-template=my-level-meter]').waitFor();
    const href = await page.locator('#tpl-export').getAttribute('href');
    assert.equal(JSON.parse(decodeURIComponent(href!.split(',')[1])).name, 'my-level-meter');
    await page.locator('#rx-templates').scrollIntoViewIfNeeded();
    await page.locator('#rx-templates').screenshot({ path: shot('e2e-rx-04-templates') });
    await page.click('#receivers-close');
  });

  it('raised no script errors in the page', () => {
    assert.deepEqual(pageErrors, []);
  });
});
