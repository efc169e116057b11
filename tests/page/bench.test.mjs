// The page as a bench: the answer in view on load, kept current as the
// need changes, SI input, readable charts and schematic, the gallery, the
// share link with the shelf, print, and axe-core on four states.
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { after, before, test } from 'node:test';
import { ARTIFACTS, ROOT, launch, openPage, serveDist, shot, unexpected } from './helpers.mjs';

const AXE = readFileSync(join(ROOT, 'tests', 'page', 'node_modules', 'axe-core', 'axe.min.js'), 'utf8');

let server;
before(async () => { server = await serveDist(); });
after(async () => { await server.close(); });

async function withPage(fn, viewport) {
  const browser = await launch();
  try {
    if (viewport) {
      const page0 = browser.context.pages()[0];
      if (page0) await page0.setViewportSize(viewport);
    }
    const opened = await openPage(browser.context, server.url);
    if (viewport) await opened.page.setViewportSize(viewport);
    await fn({ ...opened, browser });
  } finally {
    await browser.close();
  }
}

/** Wait until the answer is current (solved for the inputs on show). */
async function waitCurrent(page, timeout = 20000) {
  await page.waitForFunction(() => document.querySelector('[data-testid=freshness]').dataset.fresh === 'current', null, { timeout });
}

/**
 * Wait until the answer is current and holds a design with its sweep. The
 * demo's search has a 2 s time limit; on a machine under heavy load it can
 * run out before the first design, so the search is run again (said on the
 * test log) up to twice.
 */
async function waitDesign(page) {
  for (let attempt = 0; ; attempt += 1) {
    await waitCurrent(page, 30000);
    const status = await page.evaluate(() => window.spanfitPage.state.result.bundle.report.status);
    if (status === 'ok') break;
    assert.equal(attempt < 2, true, `the demo solved as ${status} ${attempt + 1} times`);
    console.log(`the demo solved as ${status} (machine under load?); solving again`);
    await page.evaluate(() => window.spanfitPage.solve());
  }
  await page.waitForSelector('[data-testid=sweep-chart] svg', { timeout: 30000 });
}

async function worstRaw(page) {
  return Number(await page.getAttribute('[data-figure="worst"]', 'data-raw'));
}

async function axeViolations(page) {
  await page.evaluate(AXE);
  return page.evaluate(async () => {
    // eslint-disable-next-line no-undef
    const result = await axe.run(document, { resultTypes: ['violations'] });
    return result.violations.map((v) => `${v.id}: ${v.nodes.map((n) => n.target.join(' ')).slice(0, 3).join(' | ')}`);
  });
}

test('on a wide screen the solved demo is in the first view without a click; on phones nothing overflows', async () => {
  await withPage(async ({ page, problems }) => {
    await waitDesign(page);
    const box = await page.locator('[data-figure="worst"]').boundingBox();
    assert.ok(box, 'the worst-case figure is shown');
    assert.equal(box.y + box.height <= 900 && box.x + box.width <= 1440, true, `worst-case figure at ${JSON.stringify(box)}`);
    const answer = await page.locator('[data-testid=answer]').boundingBox();
    const need = await page.locator('.need-panel').boundingBox();
    assert.equal(answer.x > need.x + need.width - 1, true, 'the answer sits beside the need');
    assert.equal(await page.isVisible('[data-testid=glance]'), false, 'no foot bar when the answer is beside the need');
    await shot(page, 'bench-wide');
    for (const width of [390, 360]) {
      await page.setViewportSize({ width, height: 844 });
      await page.waitForTimeout(300);
      const widths = await page.evaluate(() => ({ doc: document.documentElement.scrollWidth, screen: window.innerWidth }));
      assert.equal(widths.doc <= widths.screen, true, `document ${widths.doc} px wide on a ${widths.screen} px screen`);
    }
    await shot(page, 'bench-phone');
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  }, { width: 1440, height: 900 });
  // Opened on the phone itself (not narrowed after a wide load): the
  // solved page, the gallery and the full-size schematic stay inside the
  // screen at 360 px and at 390 x 844.
  for (const viewport of [{ width: 360, height: 740 }, { width: 390, height: 844 }]) {
    await withPage(async ({ page, problems }) => {
      await waitDesign(page);
      const fits = () => page.evaluate(() => ({
        doc: document.documentElement.scrollWidth,
        body: document.body.scrollWidth,
        screen: window.innerWidth,
        wide: [...document.querySelectorAll('body *')].filter((n) => {
          const r = n.getBoundingClientRect();
          return r.width > 0 && r.right > window.innerWidth + 0.5 && !n.closest('.table-wrap, .schematic, dialog:not([open])');
        }).slice(0, 5).map((n) => `${n.tagName.toLowerCase()}#${n.id}.${n.className}`),
      }));
      // The answer is below the need on a phone: a bar at the foot of the
      // screen carries its verdict and the core's figures, and a link to it.
      await page.waitForFunction(() => /meets the need/.test(document.querySelector('[data-testid=glance-text]').textContent));
      const bar = await page.locator('[data-testid=glance]').boundingBox();
      assert.ok(bar, 'the foot bar is shown');
      assert.equal(bar.y >= 0 && bar.y + bar.height <= viewport.height + 0.5, true, `foot bar at ${JSON.stringify(bar)}`);
      const glance = await page.textContent('[data-testid=glance-text]');
      const shown = await page.evaluate(() => window.spanfitPage.state.result.bundle.report.design.error.worst_case_pct_fs);
      assert.equal(glance.includes(`${Number(shown.toPrecision(3))} % FS`), true, `${glance} against ${shown}`);
      await page.click('#glance-go');
      await page.waitForFunction(() => {
        const r = document.querySelector('[data-testid=answer]').getBoundingClientRect();
        return r.top < window.innerHeight && r.bottom > 0;
      });
      await page.waitForSelector('[data-testid=glance]', { state: 'hidden' });
      await page.evaluate(() => window.scrollTo(0, 0));
      await page.waitForSelector('[data-testid=glance]', { state: 'visible' });
      assert.deepEqual(await axeViolations(page), [], `phone ${viewport.width} px, with the foot bar`);
      await page.emulateMedia({ colorScheme: 'dark' });
      assert.deepEqual(await axeViolations(page), [], `phone ${viewport.width} px, dark, with the foot bar`);
      await page.emulateMedia({ colorScheme: 'light' });
      let w = await fits();
      assert.equal(w.doc <= w.screen && w.body <= w.screen, true, `document ${w.doc} px wide on a ${w.screen} px screen`);
      assert.deepEqual(w.wide, [], `elements past the right edge at ${viewport.width} px`);
      await page.click('#gallery-open');
      await page.waitForSelector('#gallery[open] #gallery-list li');
      w = await fits();
      assert.equal(w.doc <= w.screen, true, `with the gallery open: ${w.doc} px on ${w.screen} px`);
      await page.click('#gallery-close');
      await page.click('#zoom-full');
      w = await fits();
      assert.equal(w.doc <= w.screen, true, `with the full-size schematic open: ${w.doc} px on ${w.screen} px`);
      await page.click('#schematic-close');
      await shot(page, `bench-phone-${viewport.width}`);
      assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
    }, viewport);
  }
});

test('an edit re-solves by itself; meanwhile the answer is marked out of date and its downloads are off', async () => {
  await withPage(async ({ page, problems }) => {
    // Time for the search to finish on a busy machine (the demo's limit is
    // 2 s): this test is about the answer following the need.
    await page.fill('#f-search-time_limit_ms', '20000');
    await page.waitForFunction(() => window.spanfitPage.state.need.search.time_limit_ms === 20000);
    await waitDesign(page);
    const before = await worstRaw(page);
    const gainBefore = Number(await page.getAttribute('[data-figure="gain"]', 'data-raw'));
    assert.equal(await page.isEnabled('#dl-bom'), true);
    await page.click('[data-testid=pin]');
    await page.fill('#f-adc-high_v', '2.5');
    // At once: out of date, downloads off.
    await page.waitForFunction(() => document.querySelector('[data-testid=freshness]').dataset.fresh !== 'current', null, { timeout: 1000 });
    assert.equal(await page.isDisabled('#dl-bom'), true);
    assert.equal(await page.isDisabled('#dl-spice'), true);
    assert.equal(await page.getAttribute('#result', 'data-stale'), 'yes');
    // The edit is in (the marker shows), so the clock starts here: the
    // pause before the search and the search itself count.
    let started = Date.now();
    await waitCurrent(page, 30000);
    let took = Date.now() - started;
    const gainAfter = Number(await page.getAttribute('[data-figure="gain"]', 'data-raw'));
    assert.notEqual(gainAfter, gainBefore, 'a new design for the new window');
    const times = [took];
    if (took > 2000) {
      // A busy machine can hold one search up: a second edit (back to the
      // demo's window) gets the bar's second chance, said on the log.
      await page.fill('#f-adc-high_v', '3');
      await page.waitForFunction(() => document.querySelector('[data-testid=freshness]').dataset.fresh !== 'current', null, { timeout: 1000 });
      started = Date.now();
      await waitCurrent(page, 30000);
      took = Date.now() - started;
      times.push(took);
      await page.fill('#f-adc-high_v', '2.5');
      await waitCurrent(page, 30000);
    }
    console.log(`re-solves after an edit took ${times.join(' ms, then ')} ms`);
    assert.equal(Math.min(...times) <= 2000, true, `the answer followed the edit in ${times.join(' and ')} ms, not within 2 s`);
    assert.equal(await page.isEnabled('#dl-bom'), true);
    assert.equal(await page.getAttribute('#result', 'data-stale'), 'no');
    // The pinned design (the one before the edit) beside the new one.
    const rows = await page.$$eval('#compare-table tbody tr', (trs) => trs.map((tr) => [...tr.children].map((c) => c.textContent)));
    const worstRow = rows.find((r) => r[0] === 'Worst-case error');
    assert.deepEqual(worstRow.slice(1), [`${Number(before.toPrecision(3))} % FS`, `${Number((await worstRaw(page)).toPrecision(3))} % FS`]);
    console.log(`worst case ${before} -> ${await worstRaw(page)} % FS after the edit`);
    // An invalid field: the answer waits, marked out of date.
    await page.fill('#f-adc-high_v', 'lots');
    await page.waitForSelector('.field.invalid[data-key="adc.high_v"]');
    await page.waitForFunction(() => document.querySelector('[data-testid=freshness]').dataset.fresh === 'waiting');
    assert.match(await page.textContent('#f-adc-high_v-error'), /enter a number of volts/);
    assert.equal(await page.isDisabled('#dl-bom'), true);
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});

test('SI input: "25 mV" and "25m" give the design of 0.025, solved again, and say what was understood', async () => {
  await withPage(async ({ page }) => {
    await waitDesign(page);
    const signal = '#f-sensor-signal_high_v';
    const shownNeed = () => page.evaluate(() => window.spanfitPage.state.result.need.sensor.signal_high_v);
    await page.fill(signal, '0.025');
    await page.waitForFunction(() => window.spanfitPage.state.need.sensor.signal_high_v === 0.025);
    await waitCurrent(page);
    const plain = await page.evaluate(() => window.spanfitPage.state.result.bundle.report.design);
    for (const text of ['25 mV', '25m']) {
      // Another value first, so that the text below is solved afresh.
      await page.fill(signal, '0.03');
      await page.waitForFunction(() => window.spanfitPage.state.result.need.sensor.signal_high_v === 0.03
        && document.querySelector('[data-testid=freshness]').dataset.fresh === 'current', null, { timeout: 20000 });
      await page.fill(signal, text);
      await page.waitForFunction((t) => window.spanfitPage.state.need.sensor.signal_high_v === 0.025
        && document.querySelector('[data-testid="understood-sensor.signal_high_v"]').textContent !== ''
        && document.querySelector('#f-sensor-signal_high_v').value === t, text);
      assert.equal(await page.textContent('[data-testid="understood-sensor.signal_high_v"]'), 'read as 0.025 V');
      await page.waitForFunction(() => window.spanfitPage.state.result.need.sensor.signal_high_v === 0.025
        && document.querySelector('[data-testid=freshness]').dataset.fresh === 'current', null, { timeout: 20000 });
      assert.equal(await shownNeed(), 0.025, text);
      const design = await page.evaluate(() => window.spanfitPage.state.result.bundle.report.design);
      assert.deepEqual(design.parts, plain.parts, text);
      assert.deepEqual(design.transfer, plain.transfer, text);
      assert.equal(design.error.worst_case_pct_fs, plain.error.worst_case_pct_fs, text);
      assert.equal(await page.getAttribute('[data-figure="worst"]', 'data-raw'), String(plain.error.worst_case_pct_fs));
    }
    await page.fill('#f-sensor-source_ohms', '4.7k');
    await page.waitForFunction(() => window.spanfitPage.state.need.sensor.source_ohms === 4700);
    await page.fill('#f-sensor-signal_high_v', '100 nA');
    await page.waitForSelector('.field.invalid[data-key="sensor.signal_high_v"]');
    const label = await page.textContent('.field[data-key="sensor.signal_high_v"] label');
    const status = await page.textContent('[data-testid=need-status]');
    assert.equal(status.includes(`${label}: `), true, status);
    assert.match(status, /the unit V/);
    // The longer help opens on demand.
    const help = page.locator('.field[data-key="adc.margin_pct"] details.help');
    assert.equal(await help.locator('p').first().isVisible(), false);
    await help.locator('summary').click();
    assert.match(await help.textContent(), /Typical: 2 to 5 %/);
  });
});

/** Pairs of chart labels that overlap, and labels a target line crosses. */
function labelClashes(page) {
  return page.evaluate(() => {
    const out = [];
    const hit = (a, b) => a.left < b.right - 1 && b.left < a.right - 1 && a.top < b.bottom - 1 && b.top < a.bottom - 1;
    for (const chart of document.querySelectorAll('#result svg.chart')) {
      const name = chart.closest('[data-testid]').dataset.testid;
      const texts = [...chart.querySelectorAll('text')].filter((t) => t.textContent.trim()).map((t) => ({ t: t.textContent, r: t.getBoundingClientRect() }));
      for (let i = 0; i < texts.length; i += 1) {
        for (let j = i + 1; j < texts.length; j += 1) {
          if (hit(texts[i].r, texts[j].r)) out.push(`${name}: "${texts[i].t}" over "${texts[j].t}"`);
        }
      }
      // A target line passes no label but its own.
      for (const line of chart.querySelectorAll('line.target')) {
        const r = line.getBoundingClientRect();
        const band = { left: r.left - 1, right: r.right + 1, top: r.top, bottom: r.bottom };
        for (const { t, r: tr } of texts) {
          if (/target/.test(t)) continue;
          if (hit(band, tr)) out.push(`${name}: the target line crosses "${t}"`);
        }
      }
    }
    return out;
  });
}

test('charts and schematic keep text at 11 px or more, labels clear of each other and of the target; the schematic zooms and opens full size; costs take a currency', async () => {
  for (const viewport of [{ width: 1440, height: 900 }, { width: 390, height: 844 }]) {
    await withPage(async ({ page }) => {
      await waitDesign(page);
      await page.waitForTimeout(400);
      const smallest = await page.evaluate(() => {
        let min = Infinity;
        for (const chart of document.querySelectorAll('#result svg.chart')) {
          const vb = chart.viewBox.baseVal;
          const scale = chart.getBoundingClientRect().width / vb.width;
          for (const t of chart.querySelectorAll('text')) min = Math.min(min, parseFloat(getComputedStyle(t).fontSize) * scale);
        }
        return min;
      });
      assert.equal(smallest >= 10.95, true, `smallest chart text ${smallest} px at ${viewport.width} px`);
      // Labels never collide with each other or with the target line.
      assert.deepEqual(await labelClashes(page), [], `at ${viewport.width} px`);
      const img = page.locator('[data-testid=schematic-img]');
      const zoom = Number(await img.getAttribute('data-zoom'));
      const natural = await img.evaluate((i) => i.naturalWidth);
      const shown = (await img.boundingBox()).width;
      // The core's schematic has 10 px as its smallest text.
      assert.equal((shown / natural) * 10 >= 10.95, true, `schematic text ${(shown / natural) * 10} px`);
      await page.click('#zoom-in');
      assert.equal(Number(await img.getAttribute('data-zoom')) > zoom, true);
      await page.focus('[data-testid=schematic]');
      await page.keyboard.press('-');
      await page.keyboard.press('-');
      assert.equal(Number(await img.getAttribute('data-zoom')) < zoom, true, 'minus key zooms out');
      await page.locator('[data-testid=schematic]').hover();
      await page.keyboard.down('Control');
      await page.mouse.wheel(0, -100);
      await page.keyboard.up('Control');
      await page.click('#zoom-full');
      assert.equal(await page.isVisible('#schematic-dialog'), true);
      await page.click('#schematic-close');
      // Axis labels with units, and the histogram's explanation.
      assert.match(await page.textContent('[data-testid=sweep-chart]'), /temperature, °C/);
      assert.match(await page.textContent('[data-testid=budget-chart]'), /% of full scale/);
      await page.selectOption('[data-testid=currency]', '€');
      await page.waitForFunction(() => document.querySelector('[data-figure="cost"] .main').textContent.startsWith('€'));
      assert.match(await page.textContent('[data-testid=pareto-chart]'), /cost, €/);
      await page.waitForTimeout(400);
      await page.reload();
      await page.waitForFunction(() => document.body.dataset.ready === 'yes');
      assert.equal(await page.inputValue('[data-testid=currency]'), '€');
      await shot(page, `bench-readable-${viewport.width}`);
    }, viewport);
  }
});

test('the sweep is the core analysis over temperature; the yield histogram marks the target and says what it counts', async () => {
  await withPage(async ({ page }) => {
    await waitDesign(page);
    const temps = await page.$$eval('[data-testid=sweep-chart] circle.sweep-worst-dot', (c) => c.map((x) => Number(x.dataset.temp)));
    const need = await page.evaluate(() => window.spanfitPage.state.need.accuracy);
    assert.equal(temps[0], need.temp_min_c);
    assert.equal(temps[temps.length - 1], need.temp_max_c);
    const values = await page.$$eval('[data-testid=sweep-chart] circle.sweep-worst-dot', (c) => c.map((x) => Number(x.dataset.value)));
    const worst = await worstRaw(page);
    assert.equal(Math.abs(Math.max(...values) - worst) <= 1e-4 * worst, true, `largest of the sweep ${Math.max(...values)} is close to the design's worst case ${worst}`);
    await page.selectOption('#f-accuracy-basis', 'yield');
    await page.waitForFunction(() => window.spanfitPage.state.need.accuracy.basis === 'yield');
    await waitCurrent(page, 25000);
    await page.waitForSelector('#histogram-box:not([hidden])');
    assert.equal(await page.locator('[data-testid=histogram-chart] line.target').count(), 2);
    assert.match(await page.textContent('[data-testid=histogram-chart]'), /builds/);
    assert.match(await page.textContent('[data-testid=histogram-note]'), /simulated builds is counted once/);
    // The count is the core's (`yield_builds`), not the page's sum.
    const builds = await page.evaluate(() => window.spanfitPage.state.viewed.design.error.yield_builds);
    assert.match(await page.textContent('[data-testid=histogram-note]'), new RegExp(`^Each of the ${builds} simulated builds`));
  });
});

test('the gallery offers at least six invented examples; one loads its need and its own shelf and solves', async () => {
  await withPage(async ({ page, problems }) => {
    await waitDesign(page);
    await page.click('#gallery-open');
    await page.waitForSelector('#gallery[open] #gallery-list li');
    const items = page.locator('#gallery-list li');
    assert.equal(await items.count() >= 6, true);
    for (const text of await items.allTextContents()) assert.match(text, /Invented example/);
    await shot(page, 'bench-gallery');
    await page.click('button[data-example="electrode-falling"]');
    await page.waitForFunction(() => /Reed Pond/.test(document.querySelector('#f-sensor-label').value));
    await page.click('button.tab[data-file="opamps.csv"]');
    const ids = await page.$$eval('[data-testid=stock-table] input[data-col="0"]', (i) => i.map((x) => x.value));
    assert.equal(ids.includes('OA-EM1'), true, ids.join(', '));
    await page.waitForFunction(() => {
      const { result } = window.spanfitPage.state;
      return result && /Reed Pond/.test(result.need.sensor.label)
        && document.querySelector('[data-testid=freshness]').dataset.fresh === 'current';
    }, null, { timeout: 25000 });
    const report = await page.evaluate(() => window.spanfitPage.state.result.bundle.report);
    assert.equal(report.status, 'ok', report.reason);
    assert.equal(report.design.parts.some((p) => p.part_id === 'OA-EM1'), true, JSON.stringify(report.design.parts.map((p) => p.part_id)));
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});

test('a share link carries the edited shelf into a fresh browser, and leaves the address bar', async () => {
  let link;
  await withPage(async ({ page }) => {
    const cell = page.locator('[data-testid=stock-table] input[data-row="0"][data-col="0"]');
    await cell.fill('HR-SHARED');
    await cell.press('Tab');
    await page.fill('#f-accuracy-max_error_pct_fs', '0.8');
    await page.waitForFunction(() => window.spanfitPage.state.need.accuracy.max_error_pct_fs === 0.8);
    await page.click('#share');
    await page.waitForFunction(() => document.querySelector('[data-testid=share-url]').value !== '');
    link = await page.inputValue('[data-testid=share-url]');
    assert.match(link, /#p=[A-Za-z0-9_-]+$/);
  });
  await withPage(async ({ page }) => {
    await page.goto(link);
    // The tab already shows the page, so the link arrives as a fragment
    // change: wait until the page has taken it in and cleared it.
    await page.waitForFunction(() => location.hash === '' && document.body.dataset.ready === 'yes');
    assert.equal(await page.inputValue('[data-testid=stock-table] input[data-row="0"][data-col="0"]'), 'HR-SHARED');
    assert.equal(await page.inputValue('#f-accuracy-max_error_pct_fs'), '0.8');
    assert.equal(await page.evaluate(() => location.hash), '', 'the fragment is cleared');
    await page.fill('#f-accuracy-max_error_pct_fs', '0.9');
    await page.waitForFunction(() => window.spanfitPage.state.need.accuracy.max_error_pct_fs === 0.9);
    await page.waitForTimeout(400);
    await page.reload();
    await page.waitForFunction(() => document.body.dataset.ready === 'yes');
    assert.equal(await page.inputValue('#f-accuracy-max_error_pct_fs'), '0.9', 'the later edit survives a reload');
    assert.equal(await page.inputValue('[data-testid=stock-table] input[data-row="0"][data-col="0"]'), 'HR-SHARED');
  });
});

test('named projects: save, open, duplicate and delete in this browser', async () => {
  await withPage(async ({ page }) => {
    await page.fill('[data-testid=project-name]', 'bench A');
    await page.click('#project-save');
    await page.fill('#f-adc-bits', '12');
    await page.waitForFunction(() => window.spanfitPage.state.need.adc.bits === 12);
    await page.click('#project-duplicate');
    const names = await page.$$eval('[data-testid=project-list] option', (o) => o.map((x) => x.value));
    assert.deepEqual(names, ['bench A', 'bench A (copy)']);
    await page.selectOption('[data-testid=project-list]', 'bench A');
    await page.click('#project-open');
    await page.waitForFunction(() => document.querySelector('#f-adc-bits').value === '16');
    await page.selectOption('[data-testid=project-list]', 'bench A (copy)');
    await page.click('#project-delete');
    assert.deepEqual(await page.$$eval('[data-testid=project-list] option', (o) => o.map((x) => x.value)), ['bench A']);
  });
});

/** A4 less the print stylesheet's 12 mm margins, in CSS px (96 per inch). */
const A4_CONTENT = { width: Math.floor(((210 - 24) / 25.4) * 96), height: Math.floor(((297 - 24) / 25.4) * 96) };

test('printing gives at most two pages holding the need, the schematic, the budget, the BOM and the cautions', async () => {
  await withPage(async ({ page }) => {
    await waitDesign(page);
    const pdf = await page.pdf({ format: 'A4', printBackground: false });
    const text = pdf.toString('latin1');
    const pages = (text.match(/\/Type\s*\/Page[^s]/g) || []).length;
    const count = /\/Type\s*\/Pages[^>]*?\/Count\s+(\d+)/.exec(text);
    assert.equal(pages >= 1 && pages <= 2, true, `${pages} pages`);
    if (count) assert.equal(Number(count[1]), pages);
    // The same layout on screen: print media at the printed width. Every
    // part of the report is shown, and it ends within two pages' height.
    await page.setViewportSize(A4_CONTENT);
    await page.emulateMedia({ media: 'print' });
    await page.waitForTimeout(300);
    const placed = await page.evaluate(() => {
      const at = (sel) => {
        const n = document.querySelector(sel);
        if (!n) return null;
        const r = n.getBoundingClientRect();
        return { top: r.top + window.scrollY, bottom: r.bottom + window.scrollY, width: r.width, height: r.height, shown: getComputedStyle(n).display !== 'none' && r.height > 0 };
      };
      return {
        need: at('[data-testid=print-need]'),
        schematic: at('[data-testid=schematic-img]'),
        budget: at('[data-testid=budget-chart] svg'),
        bom: at('[data-testid=bom-table]'),
        caution: at('[data-testid=caution]'),
        figures: at('[data-testid=figures]'),
        end: document.documentElement.scrollHeight,
      };
    });
    for (const what of ['need', 'schematic', 'budget', 'bom', 'caution', 'figures']) {
      assert.equal(placed[what] && placed[what].shown, true, `${what} printed: ${JSON.stringify(placed[what])}`);
      assert.equal(placed[what].width <= A4_CONTENT.width + 1, true, `${what} fits the page width: ${placed[what].width}`);
    }
    assert.equal(placed.schematic.height > 60 && placed.budget.height > 60, true, JSON.stringify(placed));
    assert.equal(placed.end <= 2 * A4_CONTENT.height, true, `printed height ${placed.end} px against two pages of ${A4_CONTENT.height} px`);
    assert.equal(await page.isVisible('.stock-panel'), false);
    assert.equal(await page.isVisible('#need-form'), false);
    // The printed need names its fields by the core's labels.
    const fields = await page.evaluate(() => window.spanfitPage.state.fields.map((f) => f.label));
    const printed = await page.$$eval('[data-testid=print-need] dt', (d) => d.map((x) => x.textContent));
    assert.equal(printed.length >= 6, true, printed.join(' | '));
    for (const label of printed) assert.equal(fields.includes(label), true, label);
    await page.screenshot({ path: join(ARTIFACTS, 'bench-print.png'), fullPage: true });
  });
});

test('axe-core finds no violations: on load, solved, stale during an edit, invalid field, compared, printed, no design found', async () => {
  await withPage(async ({ page }) => {
    assert.deepEqual(await axeViolations(page), [], 'first load');
    await waitCurrent(page);
    assert.deepEqual(await axeViolations(page), [], 'after a solve');
    // Stale during an edit: the edit's search is held in the worker, so
    // the dimmed, out-of-date answer is what axe sees.
    // (A new sensor name: the same design, surely found, but new inputs.)
    await page.fill('#f-sensor-label', 'bench under edit');
    await page.waitForFunction(() => window.spanfitPage.state.need.sensor.label === 'bench under edit' && window.spanfitPage.state.needValid
      && window.spanfitPage.state.checkedNeed === JSON.stringify(window.spanfitPage.state.need));
    // (Held once a design is found: the hold counts against the search's
    // time limit, so a hold before the first design would leave none.)
    await page.evaluate(() => { window.__held = window.spanfitPage.solve({ debugPauseMs: 5000, debugPauseOnBest: true }); });
    await page.waitForFunction(() => document.querySelector('#result').dataset.stale === 'yes' && window.spanfitPage.state.solving);
    assert.equal(await page.isDisabled('#dl-bom'), true);
    assert.deepEqual(await axeViolations(page), [], 'stale during an edit');
    await page.evaluate(() => window.__held);
    await page.evaluate(() => window.spanfitPage.solve());
    await waitCurrent(page);
    assert.equal(await page.evaluate(() => window.spanfitPage.state.result.bundle.report.status), 'ok');
    // Pinned against the current design.
    await page.click('[data-testid=pin]');
    await page.fill('#f-sensor-label', 'bench compared');
    await page.waitForFunction(() => window.spanfitPage.state.need.sensor.label === 'bench compared');
    await waitCurrent(page);
    await page.waitForSelector('[data-testid=compare]:not([hidden])');
    assert.deepEqual(await axeViolations(page), [], 'compare');
    await page.emulateMedia({ media: 'print' });
    assert.deepEqual(await axeViolations(page), [], 'printed');
    await page.emulateMedia({ media: 'screen' });
    await page.fill('#f-adc-high_v', 'three');
    await page.waitForSelector('.field.invalid[data-key="adc.high_v"]');
    assert.deepEqual(await axeViolations(page), [], 'invalid field');
    await page.fill('#f-adc-high_v', '3');
    await showInfeasible(page);
    assert.deepEqual(await axeViolations(page), [], 'no design found: the best attempt, the binding limit, the suggestions');
  });
});

/**
 * Tighten the demo's target to 0.4 % FS: the search finds no design, and
 * the answer shows the best attempt (fully analysed, with its schematic)
 * beside the binding limit and the suggestions. Resolves with the report.
 */
async function showInfeasible(page) {
  // Time for the walk to end and the suggestions to be verified however
  // busy the machine is (the search stops earlier when its walk ends).
  await page.fill('#f-search-time_limit_ms', '60000');
  await page.fill('#f-accuracy-max_error_pct_fs', '0.4');
  await page.waitForFunction(() => window.spanfitPage.state.need.accuracy.max_error_pct_fs === 0.4
    && window.spanfitPage.state.need.search.time_limit_ms === 60000);
  await waitCurrent(page, 90000);
  const report = await page.evaluate(() => window.spanfitPage.state.result.bundle.report);
  assert.notEqual(report.status, 'ok', 'the tight need was met');
  assert.equal(await page.getAttribute('[data-testid=result-banner]', 'data-status'), report.status);
  await page.waitForSelector('[data-testid=infeasible]:not([hidden])');
  await page.waitForFunction(() => document.querySelector('[data-testid=viewing]').dataset.attempt === 'yes'
    && document.querySelector('[data-testid=schematic-img]') !== null);
  return report;
}

test('an infeasible need shows its best attempt beside the binding limit; a suggestion applies with one click and keeps the rest', async () => {
  for (const viewport of [{ width: 1440, height: 900 }, { width: 390, height: 844 }]) {
    await withPage(async ({ page, problems }) => {
      await waitDesign(page);
      // Something the user typed their own way, which the change must keep.
      await page.fill('#f-sensor-signal_high_v', '25 mV');
      await page.waitForFunction(() => window.spanfitPage.state.need.sensor.signal_high_v === 0.025
        && document.querySelector('[data-testid="understood-sensor.signal_high_v"]').textContent !== '');
      const label = await page.inputValue('#f-sensor-label');
      const report = await showInfeasible(page);
      const info = report.infeasible;
      assert.equal(typeof info.best_attempt, 'object', 'the report carries the best attempt');
      // The binding limit, in the form's words.
      const binding = await page.textContent('[data-testid=binding]');
      assert.equal(binding.length > 10, true, binding);
      assert.doesNotMatch(binding, /max_error_pct_fs/);
      // The best attempt as a design: its figures, its budget and its schematic.
      assert.match(await page.textContent('[data-testid=viewing]'), /best attempt/);
      const worst = Number(await page.getAttribute('[data-figure="worst"]', 'data-raw'));
      assert.equal(Math.abs(worst - info.best_attempt.error.worst_case_pct_fs) <= 1e-9 * worst, true, `${worst} against ${info.best_attempt.error.worst_case_pct_fs}`);
      const bars = await page.$$eval('[data-testid=budget-chart] rect.bar:not(.total)', (r) => r.map((x) => x.dataset.source).sort());
      assert.deepEqual(bars, info.best_attempt.error.budget.map((b) => b.source).sort());
      assert.equal(await page.isVisible('[data-testid=schematic-img]'), true);
      assert.equal(await page.isVisible('[data-testid=binding]'), true);
      // Every verified suggestion listed, each applicable one with its button.
      const items = page.locator('[data-testid=suggestions] li');
      assert.equal(await items.count(), info.suggestions.length);
      const applicable = info.suggestions.filter((s) => s.apply.length || s.apply_stock.length);
      assert.equal(await page.locator('[data-testid=apply-suggestion]').count(), applicable.length);
      // Each suggestion names what it sets by the field's label, not its key.
      const words = await page.$$eval('[data-testid=suggestions] li .change', (li) => li.map((x) => x.textContent));
      info.suggestions.forEach((s, i) => {
        for (const a of s.apply) {
          const name = a.key.slice(a.key.indexOf('.') + 1);
          assert.doesNotMatch(words[i], new RegExp(`\\b${name}\\s*=`), `${words[i]} (sets ${a.key})`);
          assert.match(words[i], /“[^”]+” =/, words[i]);
        }
      });
      const widths = await page.evaluate(() => ({ doc: document.documentElement.scrollWidth, screen: window.innerWidth }));
      assert.equal(widths.doc <= widths.screen, true, `document ${widths.doc} px wide on a ${widths.screen} px screen`);
      await page.locator('[data-testid=infeasible]').scrollIntoViewIfNeeded();
      await shot(page, `bench-infeasible-${viewport.width}`);
      await page.screenshot({ path: join(ARTIFACTS, `bench-infeasible-${viewport.width}-view.png`) });
      if (viewport.width < 1000) return;
      // One click: the target the core verified goes into its field, the
      // rest stays as typed, and the need is solved again.
      const index = info.suggestions.findIndex((s) => s.apply.some((a) => a.key === 'accuracy.max_error_pct_fs'));
      assert.equal(index >= 0, true, JSON.stringify(info.suggestions.map((s) => s.change)));
      const relaxed = info.suggestions[index].apply.find((a) => a.key === 'accuracy.max_error_pct_fs').value;
      await page.click(`[data-testid=suggestions] li[data-suggestion="${index}"] button`);
      await page.waitForFunction((v) => window.spanfitPage.state.need.accuracy.max_error_pct_fs === v, relaxed);
      assert.equal(await page.inputValue('#f-accuracy-max_error_pct_fs'), String(relaxed));
      assert.equal(await page.inputValue('#f-sensor-signal_high_v'), '25 mV');
      assert.equal(await page.inputValue('#f-sensor-label'), label);
      assert.equal(await page.inputValue('#f-search-time_limit_ms'), '60000');
      await page.waitForFunction(() => {
        const { result } = window.spanfitPage.state;
        return result && result.bundle.report.status === 'ok'
          && document.querySelector('[data-testid=freshness]').dataset.fresh === 'current';
      }, null, { timeout: 90000 });
      const after = await page.evaluate(() => window.spanfitPage.state.result.bundle.report);
      assert.equal(after.need.accuracy.max_error_pct_fs, relaxed);
      assert.equal(after.design.error.basis_pct_fs <= relaxed, true);
      assert.equal(await page.isHidden('[data-testid=infeasible]'), true);
      assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
    }, viewport);
  }
});

test('the Bode plot is drawn from the report\'s filter.bode, labelled with units, with the corner and Nyquist marked', async () => {
  await withPage(async ({ page }) => {
    await waitDesign(page);
    const filter = await page.evaluate(() => window.spanfitPage.state.result.bundle.report.design.filter);
    assert.equal(Array.isArray(filter.bode) && filter.bode.length > 10, true, 'the demo design has a filter report');
    await page.waitForSelector('#bode-box:not([hidden]) [data-testid=bode-chart] svg');
    const drawn = await page.$$eval('[data-testid=bode-chart] circle.bode-point', (c) => c.map((x) => [Number(x.dataset.frequency), Number(x.dataset.db), Number(x.dataset.deg)]));
    assert.deepEqual(drawn, filter.bode.map((p) => [p.frequency_hz, p.magnitude_db, p.phase_deg]));
    const path = await page.getAttribute('[data-testid=bode-chart] path.bode-mag', 'd');
    assert.equal((path.match(/[ML]/g) || []).length, filter.bode.length);
    const text = await page.textContent('[data-testid=bode-chart]');
    for (const label of ['frequency, Hz', 'gain, dB', 'phase, °']) assert.equal(text.includes(label), true, `${label} in ${text}`);
    assert.equal(Number(await page.getAttribute('[data-testid=bode-chart] line.mark.corner', 'data-hz')), filter.corner_hz);
    assert.match(await page.textContent('[data-testid=bode-note]'), /no Nyquist mark/);
    // A sample rate whose half lies inside the plotted range: its mark.
    const rate = Number((filter.corner_hz * 20).toPrecision(2));
    await page.fill('#f-adc-sample_rate_hz', String(rate));
    await page.waitForFunction((r) => window.spanfitPage.state.need.adc.sample_rate_hz === r, rate);
    await waitCurrent(page, 20000);
    await page.waitForSelector('[data-testid=bode-chart] line.mark.nyquist', { state: 'attached' });
    assert.equal(Number(await page.getAttribute('[data-testid=bode-chart] line.mark.nyquist', 'data-hz')), rate / 2);
    const again = await page.evaluate(() => window.spanfitPage.state.result.bundle.report.design.filter);
    assert.match(await page.textContent('[data-testid=bode-note]'), new RegExp(`${String(Number(again.rejection_at_nyquist_db.toPrecision(3)))} dB down`));
    const smallest = await page.$eval('[data-testid=bode-chart] svg', (chart) => {
      const scale = chart.getBoundingClientRect().width / chart.viewBox.baseVal.width;
      return Math.min(...[...chart.querySelectorAll('text')].map((t) => parseFloat(getComputedStyle(t).fontSize) * scale));
    });
    assert.equal(smallest >= 10.95, true, `smallest Bode text ${smallest} px`);
    await page.locator('#bode-box').scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(ARTIFACTS, 'bench-bode-view.png') });
  });
});

/**
 * Two fingers on the schematic, sent as real touch input through the
 * DevTools protocol (Input.dispatchTouchEvent): they start `from` px either
 * side of the box's middle and move to `to` px in `steps` steps, then lift.
 */
async function pinchTouch(page, cdp, from, to, steps = 6) {
  const r = await page.locator('[data-testid=schematic]').boundingBox();
  const cx = r.x + r.width / 2;
  const cy = r.y + Math.min(r.height / 2, 80);
  const points = (d) => [{ x: cx - d, y: cy, id: 1 }, { x: cx + d, y: cy, id: 2 }];
  await cdp.send('Input.dispatchTouchEvent', { type: 'touchStart', touchPoints: points(from) });
  for (let i = 1; i <= steps; i += 1) {
    await cdp.send('Input.dispatchTouchEvent', { type: 'touchMove', touchPoints: points(from + ((to - from) * i) / steps) });
  }
  await cdp.send('Input.dispatchTouchEvent', { type: 'touchEnd', touchPoints: [] });
}

test('two fingers (real touch input) pinch the schematic in and out; one finger does not zoom', async () => {
  await withPage(async ({ page, problems }) => {
    await waitDesign(page);
    const img = page.locator('[data-testid=schematic-img]');
    await img.waitFor();
    await page.locator('[data-testid=schematic]').scrollIntoViewIfNeeded();
    const cdp = await page.context().newCDPSession(page);
    await cdp.send('Emulation.setTouchEmulationEnabled', { enabled: true, maxTouchPoints: 5 });
    const zoomNow = async () => Number(await img.getAttribute('data-zoom'));
    const before = await zoomNow();
    const widthBefore = (await img.boundingBox()).width;
    await pinchTouch(page, cdp, 40, 70);
    const wider = await zoomNow();
    assert.equal(Math.abs(wider / before - 70 / 40) < 0.03, true, `zoom ${before} -> ${wider}, fingers 80 -> 140 px apart`);
    const widthAfter = (await img.boundingBox()).width;
    assert.equal(Math.abs(widthAfter / widthBefore - wider / before) < 0.02, true, `image ${widthBefore} -> ${widthAfter} px`);
    assert.equal(await page.getAttribute('[data-testid=schematic]', 'data-pinching'), null, 'the pinch ends when the fingers lift');
    await pinchTouch(page, cdp, 70, 35);
    const narrower = await zoomNow();
    assert.equal(Math.abs(narrower / wider - 35 / 70) < 0.03, true, `zoom ${wider} -> ${narrower}`);
    // The page itself is not zoomed by the gesture.
    assert.equal(await page.evaluate(() => (window.visualViewport ? window.visualViewport.scale : 1)), 1);
    // One finger alone pans and does not zoom.
    const r = await page.locator('[data-testid=schematic]').boundingBox();
    const at = (x) => [{ x: r.x + x, y: r.y + 40, id: 3 }];
    await cdp.send('Input.dispatchTouchEvent', { type: 'touchStart', touchPoints: at(200) });
    await cdp.send('Input.dispatchTouchEvent', { type: 'touchMove', touchPoints: at(140) });
    await cdp.send('Input.dispatchTouchEvent', { type: 'touchMove', touchPoints: at(80) });
    await cdp.send('Input.dispatchTouchEvent', { type: 'touchEnd', touchPoints: [] });
    assert.equal(await zoomNow(), narrower);
    await cdp.detach();
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});

test('the design\'s warnings show as text when the report has them, and nothing shows when it has none', async () => {
  await withPage(async ({ page }) => {
    await waitDesign(page);
    const warnings = await page.evaluate(() => window.spanfitPage.state.result.bundle.report.design.warnings);
    const shown = () => page.$$eval('[data-testid=warnings] li', (li) => li.map((x) => x.textContent));
    if (Array.isArray(warnings) && warnings.length) {
      assert.deepEqual(await shown(), warnings);
    } else {
      assert.equal(await page.isHidden('#warnings-box'), true);
    }
    // A design on show with warnings (set here), redrawn by a change of currency.
    const invented = ['<b>invented</b> warning: the filter capacitor is large', 'a second invented warning'];
    await page.evaluate((w) => { window.spanfitPage.state.viewed.design.warnings = w; }, invented);
    await page.selectOption('[data-testid=currency]', '£');
    await page.waitForSelector('#warnings-box:not([hidden])');
    assert.deepEqual(await shown(), invented);
    assert.equal(await page.locator('[data-testid=warnings] b').count(), 0, 'warning text is never markup');
    await page.evaluate(() => { delete window.spanfitPage.state.viewed.design.warnings; });
    await page.selectOption('[data-testid=currency]', '€');
    await page.waitForSelector('#warnings-box', { state: 'hidden' });
  });
});

test('hints, help and messages use the fields\' labels, never need keys; the shelf shows the capacitors', async () => {
  await withPage(async ({ page }) => {
    await waitDesign(page);
    const keys = await page.evaluate(() => window.spanfitPage.state.fields.map((f) => f.key));
    const names = keys.map((k) => k.split('.')[1]).filter((n) => n.includes('_'));
    const keyLike = new RegExp(`\\b(${[...keys.map((k) => k.replace('.', '\\.')), ...names].join('|')})\\b`);
    const texts = await page.$$eval('.need-form .hint, .need-form .help p', (n) => n.map((x) => x.textContent));
    assert.equal(texts.length > 40, true);
    for (const text of texts) assert.doesNotMatch(text, keyLike, text);
    // A hint of the core that names another key names that field by its label.
    const named = await page.evaluate((source) => {
      const re = new RegExp(source);
      const f = window.spanfitPage.state.fields.find((x) => typeof x.hint === 'string' && re.test(x.hint));
      if (!f) return null;
      const other = f.hint.match(re)[1];
      const target = window.spanfitPage.state.fields.find((x) => x.key === other || x.key.endsWith(`.${other}`));
      return { key: f.key, label: target.label };
    }, keyLike.source);
    assert.notEqual(named, null, 'some hint of the core names a key');
    const hint = await page.textContent(`.field[data-key="${named.key}"] .hint`);
    assert.equal(hint.includes(`“${named.label}”`), true, hint);
    // A message from the core about two fields.
    await page.fill('#f-adc-low_v', '3.1');
    await page.waitForFunction(() => document.querySelector('[data-testid=need-status]').dataset.tone === 'bad');
    const status = await page.textContent('[data-testid=need-status]');
    assert.doesNotMatch(status, keyLike, status);
    await page.fill('#f-adc-low_v', '0');
    // The capacitors are a table of the shelf like the others.
    await page.click('button.tab[data-file="capacitors.csv"]');
    const demo = await page.evaluate(() => window.spanfitPage.call('demo_stock').then((t) => JSON.parse(t)));
    const rows = demo['capacitors.csv'].trim().split('\n').filter((l) => l.trim() && !l.trim().startsWith('#')).length - 1;
    assert.equal(await page.textContent('[data-testid=stock-table] caption'), 'capacitors.csv');
    assert.equal(await page.locator('[data-testid=stock-table] tbody tr').count(), rows);
    assert.match(await page.textContent('[data-testid=stock-status]'), new RegExp(`\\d+ capacitor values`));
  });
});

test('every budget line explains itself on the page as the core worked it out: formula, inputs with the core\'s values and units, parts', async () => {
  // Four figures, as the page shows numbers.
  const four = (v) => String(Number(Number(v).toPrecision(4)));
  await withPage(async ({ page }) => {
    await waitDesign(page);
    const budget = await page.evaluate(() => window.spanfitPage.state.result.bundle.report.design.error.budget);
    assert.equal(budget.length >= 5, true, `${budget.length} lines`);
    const shown = () => page.$$eval('[data-testid=budget-notes] > li', (items) => items.map((li) => ({
      line: li.dataset.line,
      head: li.querySelector('.explain-head').textContent,
      value: li.querySelector('.explain-head .explain-value').textContent,
      formula: li.querySelector('.explain-formula code')?.textContent ?? null,
      inputs: [...li.querySelectorAll('.explain-inputs > li')].map((x) => ({ name: x.querySelector('code').textContent, value: x.querySelector('.explain-value').textContent, text: x.textContent })),
      note: li.querySelector('.explain-note')?.textContent ?? null,
    })));
    const notes = await shown();
    assert.equal(notes.length, budget.length);
    budget.forEach((b, i) => {
      const n = notes[i];
      assert.equal(n.line, b.line);
      assert.equal(n.head.startsWith(`${b.source}: `), true, n.head);
      assert.equal(n.head.endsWith(b.systematic ? '(fixed)' : '(random)'), true, n.head);
      // The numbers shown are the core's, to four figures.
      assert.equal(n.value, four(b.pct_fs), `${b.line}: shown ${n.value}, core ${b.pct_fs}`);
      assert.equal(Math.abs(Number(n.value) - b.pct_fs) <= 5e-4 * Math.abs(b.pct_fs), true, b.line);
      assert.equal(n.formula, b.explain.formula, b.line);
      assert.equal(b.explain.inputs.length > 0, true, b.line);
      assert.deepEqual(n.inputs.map((x) => x.name), b.explain.inputs.map((x) => x.name), b.line);
      b.explain.inputs.forEach((input, k) => {
        const got = n.inputs[k];
        assert.equal(got.value, four(input.value), `${b.line} ${input.name}: shown ${got.value}, core ${input.value}`);
        assert.equal(got.text.includes(`${input.unit === '1' ? '' : ` ${input.unit}`}: ${input.what}`), true, got.text);
        for (const r of [...input.refs, ...input.part_ids]) assert.equal(got.text.includes(r), true, `${b.line} ${input.name} names ${r}: ${got.text}`);
      });
      assert.equal(n.note, b.explain.note ?? null, b.line);
    });
    // Some line names a part of the design, as the parts table has it.
    const refs = await page.$$eval('[data-testid=parts-table] tbody tr td:first-child', (td) => td.map((x) => x.textContent.trim()));
    const named = budget.flatMap((b) => b.explain.inputs.flatMap((x) => x.refs));
    assert.equal(named.length > 0, true, 'no line names a part');
    if (refs.length) for (const r of named) assert.equal(refs.includes(r), true, `${r} not in the parts table ${refs}`);
    // The totals in LSB and in the sensor's unit are the core's too.
    const err = await page.evaluate(() => window.spanfitPage.state.viewed.design.error);
    for (const [key, name] of [['worst', 'worst_case'], ['rss', 'rss']]) {
      const aside = await page.textContent(`[data-figure=${key}] .aside`);
      assert.equal(aside.includes(`${String(Number(err[`${name}_lsb`].toPrecision(3)))} LSB`), true, `${key}: ${aside}`);
      if (err[`${name}_units`] !== null) assert.equal(aside.includes(`· ${String(Number(err[`${name}_units`].toPrecision(3)))} `), true, `${key}: ${aside}`);
    }
    // The page draws from the report, not from formulas of its own: a
    // changed report shows changed.
    await page.evaluate(() => {
      const first = window.spanfitPage.state.viewed.design.error.budget[0];
      first.explain = { ...first.explain, formula: '100 * (|s_X * init_X|) / FS', inputs: [{ ...first.explain.inputs[0], name: 's_X', value: 98765.4321 }], note: 'changed' };
    });
    await page.selectOption('[data-testid=currency]', '€');
    await page.waitForFunction(() => document.querySelector('[data-testid=budget-notes] > li .explain-formula code')?.textContent.includes('s_X'));
    const changed = (await shown())[0];
    assert.deepEqual([changed.inputs.length, changed.inputs[0].name, changed.inputs[0].value, changed.note], [1, 's_X', '98770', 'changed']);
  });
});

test('keyboard, theme and touch: skip link, Enter solves at once, focus to the answer on request, visible focus, dark theme, 24 px targets', async () => {
  await withPage(async ({ page, problems }) => {
    await waitDesign(page);
    // The first Tab reaches the skip link, shown; following it focuses the answer.
    await page.keyboard.press('Tab');
    assert.equal(await page.evaluate(() => document.activeElement.className), 'skip-link');
    const skip = await page.locator('.skip-link').boundingBox();
    assert.equal(skip && skip.y >= 0 && skip.height >= 24, true, `skip link on screen when focused: ${JSON.stringify(skip)}`);
    await page.keyboard.press('Enter');
    await page.waitForFunction(() => document.activeElement && document.activeElement.id === 'answer');
    // Enter in a field solves now, without waiting for the pause after typing.
    // Typing starts a search by itself only after the field's check (150 ms)
    // and the pause (AUTO_PAUSE_MS, 350 ms): a search under way sooner
    // than 500 ms after the typing was started by Enter.
    const took = await page.evaluate(() => new Promise((resolve) => {
      const input = document.querySelector('#f-adc-high_v');
      const t0 = performance.now();
      input.value = '2.8';
      input.dispatchEvent(new Event('input', { bubbles: true }));
      input.dispatchEvent(new KeyboardEvent('keydown', { key: 'Enter', bubbles: true, cancelable: true }));
      const poll = () => (window.spanfitPage.state.solving ? resolve(performance.now() - t0) : setTimeout(poll, 5));
      poll();
    }));
    console.log(`Enter in a field: search under way ${took.toFixed(0)} ms after the typing`);
    assert.equal(took < 500, true, `search started ${took} ms after the typing`);
    await waitCurrent(page);
    assert.equal(await page.evaluate(() => window.spanfitPage.state.result.need.adc.high_v), 2.8);
    // "Solve now" asked for by the user: the focus moves to the answer once it lands.
    await page.click('[data-testid=solve]');
    await page.waitForFunction(() => document.activeElement && document.activeElement.id === 'answer', null, { timeout: 20000 });
    // Every control shows where the keyboard focus is.
    const unmarked = [];
    for (const sel of ['#f-adc-high_v', '#f-accuracy-basis', '[data-testid=solve]', '#dl-bom', '.field .help summary', '[data-testid=schematic]', '.stock-panel .table-wrap', '#gallery-open', '[data-testid=currency]']) {
      await page.locator(sel).first().focus();
      await page.keyboard.press('Shift');
      const ring = await page.evaluate(() => {
        const s = getComputedStyle(document.activeElement);
        return { style: s.outlineStyle, width: parseFloat(s.outlineWidth), shadow: s.boxShadow };
      });
      if (!((ring.style !== 'none' && ring.width >= 1) || ring.shadow !== 'none')) unmarked.push(`${sel}: ${JSON.stringify(ring)}`);
    }
    assert.deepEqual(unmarked, [], 'focus is visible');
    // Touch targets: every visible control at least 24 x 24 px (a checkbox
    // counts with its label, which takes its clicks).
    const small = await page.evaluate(() => {
      const out = [];
      for (const n of document.querySelectorAll('button, select, input, summary, a[href], [role=tab]')) {
        if (n.type === 'file' || n.type === 'hidden' || n.closest('[hidden], dialog:not([open])')) continue;
        const target = n.type === 'checkbox' && n.closest('label') ? n.closest('label') : n;
        const r = target.getBoundingClientRect();
        if (r.width === 0 && r.height === 0) continue;
        if (n.classList.contains('skip-link')) continue;
        if (r.width < 23.5 || r.height < 23.5) out.push(`${n.tagName.toLowerCase()}#${n.id}.${n.className} ${Math.round(r.width)}x${Math.round(r.height)}`);
      }
      return out.slice(0, 8);
    });
    assert.deepEqual(small, [], 'controls smaller than 24 px');
    // The dark theme follows the system setting.
    const luminance = () => page.evaluate(() => {
      // The page's background: the body's, or the root's where the body has none.
      const paint = (n) => getComputedStyle(n).backgroundColor.match(/\d+(\.\d+)?/g).map(Number);
      const body = paint(document.body);
      const [r, g, b] = body.length === 4 && body[3] === 0 ? paint(document.documentElement) : body;
      return (0.2126 * r + 0.7152 * g + 0.0722 * b) / 255;
    });
    assert.equal(await luminance() > 0.6, true, 'light by default');
    await page.emulateMedia({ colorScheme: 'dark' });
    assert.equal(await luminance() < 0.25, true, 'dark when the system is dark');
    assert.deepEqual(await axeViolations(page), [], 'dark theme');
    await shot(page, 'bench-dark');
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});

test('every example of the gallery loads its need and shelf and is solved to a design that meets it', async () => {
  await withPage(async ({ page, problems }) => {
    await waitDesign(page);
    const examples = await page.evaluate(() => window.spanfitPage.call('gallery_examples').then((t) => JSON.parse(t)));
    assert.equal(examples.length >= 6, true);
    const outcomes = [];
    for (const example of examples) {
      await page.click('#gallery-open');
      await page.waitForSelector('#gallery[open] #gallery-list li');
      await page.evaluate(() => { window.__before = window.spanfitPage.state.result; });
      await page.click(`button[data-example="${example.id}"]`);
      await page.waitForFunction(() => {
        const { result, need } = window.spanfitPage.state;
        return result && result !== window.__before && document.querySelector('[data-testid=freshness]').dataset.fresh === 'current'
          && JSON.stringify(result.need) === JSON.stringify(need);
      }, null, { timeout: 30000 });
      const report = await page.evaluate(() => window.spanfitPage.state.result.bundle.report);
      outcomes.push(`${example.id}: ${report.status}${report.status === 'ok' ? ` ${report.design.error.basis_pct_fs.toPrecision(3)} of ${report.need.accuracy ? report.need.accuracy.max_error_pct_fs : '?'} % FS` : ` (${report.reason})`}`);
      assert.equal(report.status, 'ok', `${example.id}: ${report.reason}`);
      assert.equal(report.design.error.meets_target, true, example.id);
    }
    console.log(outcomes.join('\n'));
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});

test('typing while searches run keeps the main thread free: no task over 200 ms, the searches stay in the worker', async () => {
  await withPage(async ({ page }) => {
    await waitDesign(page);
    await page.evaluate(() => {
      window.__long = [];
      new PerformanceObserver((list) => { for (const e of list.getEntries()) window.__long.push(Math.round(e.duration)); }).observe({ type: 'longtask' });
    });
    // Keys 120 ms apart: each pause after a valid value starts a search,
    // which the next keys replace; the last one lands and is drawn.
    await page.fill('#f-sensor-signal_high_v', '');
    await page.type('#f-sensor-signal_high_v', '0.0275', { delay: 120 });
    await page.waitForFunction(() => window.spanfitPage.state.result.need.sensor.signal_high_v === 0.0275
      && document.querySelector('[data-testid=freshness]').dataset.fresh === 'current', null, { timeout: 20000 });
    await page.waitForSelector('[data-testid=sweep-chart] svg');
    const long = await page.evaluate(() => window.__long);
    console.log(`main-thread tasks over 50 ms while typing and redrawing: ${long.length ? long.join(', ') : 'none'} ms`);
    assert.equal(Math.max(0, ...long) < 200, true, `longest main-thread task ${Math.max(...long)} ms`);
  });
});
