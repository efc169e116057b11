// The single-file build (web/dist/spanfit.html) opened from file://: it
// loads with nothing but file:, blob: and data: requests, solves the demo
// to the CLI's answer, and Stop ends a search by replacing the worker.
import assert from 'node:assert/strict';
import { test } from 'node:test';
import { SINGLE_FILE_URL, assertBuilt, cliDemoJson, fmt, launch, openPage, shot, solveUncut, unexpected } from './helpers.mjs';

async function withFilePage(fn) {
  assertBuilt();
  const browser = await launch();
  try {
    const opened = await openPage(browser.context, SINGLE_FILE_URL);
    await fn(opened);
  } finally {
    await browser.close();
  }
}

function localOnly(problems) {
  return problems.remote.filter((u) => !/^(file:|blob:|data:)/.test(u));
}

test('the single file loads from file:// with its own CSP and no requests beyond the file', async () => {
  await withFilePage(async ({ page, problems }) => {
    assert.match(await page.textContent('[data-testid=engine-state]'), /single file/);
    const csp = await page.getAttribute('meta[http-equiv="Content-Security-Policy"]', 'content');
    assert.match(csp, /script-src 'sha256-[^']+' 'sha256-[^']+' 'wasm-unsafe-eval'/);
    assert.doesNotMatch(csp, /unsafe-inline|https?:/);
    assert.equal(await page.textContent('[data-testid=need-status]'), 'The need is complete and consistent.');
    assert.match(await page.textContent('[data-testid=stock-status]'), /^Shelf read: /);
    assert.equal(await page.locator('link[rel=stylesheet], script[src]').count(), 0, 'everything is inline');
    await shot(page, 'single-file-initial');
    assert.deepEqual(localOnly(problems), []);
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});

test('the single file solves the demo from file:// to the CLI answer', async () => {
  const cli = cliDemoJson();
  await withFilePage(async ({ page, problems }) => {
    await solveUncut(page);
    assert.equal(await page.getAttribute('[data-testid=result-banner]', 'data-status'), cli.status);
    assert.equal(Number(await page.getAttribute('[data-figure="cost"]', 'data-raw')), cli.design.cost);
    assert.equal(await page.textContent('[data-figure="cost"] .main'), fmt(cli.design.cost));
    assert.equal(Number(await page.getAttribute('[data-figure="worst"]', 'data-raw')), cli.design.error.worst_case_pct_fs);
    const ids = await page.$$eval('[data-testid=parts-table] td[data-col="part_id"]', (tds) => tds.map((td) => JSON.parse(td.dataset.raw)));
    assert.deepEqual(ids, cli.design.parts.map((p) => p.part_id));
    await shot(page, 'single-file-solved');
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});

test('Stop in the single file ends the search and the solver comes back', async () => {
  await withFilePage(async ({ page, problems }) => {
    await page.evaluate(() => { window.__run = window.spanfitPage.solve({ debugPauseMs: 1500 }); });
    await page.waitForFunction(() => document.querySelector('[data-testid=progress-text]').dataset.seen === 'yes');
    await page.click('[data-testid=cancel]');
    const reply = await page.evaluate(() => window.__run);
    assert.equal(reply, null, 'a stopped file:// search returns nothing');
    assert.equal(await page.getAttribute('[data-testid=run-status]', 'data-cancelled'), 'yes');
    assert.match(await page.textContent('[data-testid=run-status]'), /^Stopped\./);
    await page.waitForFunction(() => !document.querySelector('[data-testid=solve]').disabled);
    const again = await page.evaluate(() => window.spanfitPage.solve().then((r) => r && r.cancelled));
    assert.equal(again, false, 'a new search runs to the end after the stop');
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});
