// End to end: the web mode with the access token required, in Debian's Chromium. A browser without a
// session lands on the sign-in page; the sign-in link printed at start signs it in, wipes the token from the
// address bar, and the app then runs with its calls and live stream behind an HttpOnly cookie.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import type { Browser, Page } from 'playwright-core';
import { join } from 'node:path';
import { startWeb, type Served } from '../../main/shells/cli/serve';
import { launch, shot } from '../helpers/browser';
import { tempDir } from '../helpers/tmp';

describe('web mode with the access token, end to end', () => {
  let served: Served;
  let browser: Browser;
  let page: Page;
  let dir: ReturnType<typeof tempDir>;
  const pageErrors: string[] = [];

  before(async () => {
    dir = tempDir();
    served = await startWeb({ dbPath: join(dir.dir, 'signin.db'), port: 0, requireToken: true });
    browser = await launch();
    page = await browser.newPage({ viewport: { width: 1100, height: 760 } });
    page.on('pageerror', (e) => pageErrors.push(e.message));
  });

  after(async () => {
    await browser?.close();
    await served?.stop();
    dir?.cleanup();
  });

  it('sends a browser without a session to the sign-in page, and refuses a wrong token there', async () => {
    await page.goto(served.url);
    assert.match(page.url(), /\/login$/);
    await page.fill('#token', 'nbt_' + 'x'.repeat(43));
    await page.click('button[type=submit]');
    await page.locator('#message').filter({ hasText: 'not the access token' }).waitFor();
    await page.screenshot({ path: shot('e2e-signin-refused') });
  });

  it('signs in through the printed link, wipes the token from the address bar, and runs the app', async () => {
    await page.goto(`${served.url}login#token=${served.token}`);
    await page.waitForURL(served.url);
    assert.ok(!page.url().includes(served.token!), 'the token stayed in the address bar');
    // The app's first calls went through: the sessions dialog of a new database is open.
    await page.locator('#sessions-dialog').waitFor();
    // The session cookie is HttpOnly: no script on the page can read it.
    assert.equal(await page.evaluate(() => document.cookie), '');
    const cookies = await page.context().cookies();
    assert.equal(cookies.length, 1);
    assert.equal(cookies[0].httpOnly, true);
    assert.equal(cookies[0].sameSite, 'Strict');
    // The live stream is open with the cookie (an EventSource cannot send headers).
    const live = await page.evaluate(
      () =>
        new Promise<string>((resolve) => {
          const es = new EventSource('/api/events');
          es.addEventListener('status', (m) => {
            es.close();
            resolve((m as MessageEvent<string>).data);
          });
          es.onerror = () => resolve('error');
        }),
    );
    assert.match(live, /"mode":"web"/);
    // Back in the history there is no page with the token in its address.
    const back = await page.evaluate(() => history.length);
    assert.ok(back >= 1);
    await page.screenshot({ path: shot('e2e-signin-done') });
    assert.deepEqual(pageErrors, []);
  });
});
