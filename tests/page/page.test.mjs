// Page mechanics that need no search: the form, validation, the shelf,
// uploads (malformed and hostile), storage, the share link, project files,
// panic recovery, the cautions and the Content-Security-Policy.
import assert from 'node:assert/strict';
import { after, before, test } from 'node:test';
import { inflateRawSync } from 'node:zlib';
import { launch, openPage, serveDist, shot, unexpected } from './helpers.mjs';

const CAUTION = 'This designs low-voltage signal conditioning only; it does not design isolation, protection against mains or high-voltage faults, or intrinsic safety; follow the applicable standards, local codes and licensed practice, and verify on the bench before use.';

// Every key of a need file (docs/need.md), by table.
const NEED_KEYS = {
  sensor: ['label', 'signal_low_v', 'signal_high_v', 'quantity_low', 'quantity_high', 'quantity_unit', 'output', 'common_mode_v', 'source_ohms', 'source_tolerance_pct', 'source_tempco_ppm_per_c', 'excitation', 'common_mode_tolerance_pct'],
  adc: ['low_v', 'high_v', 'bits', 'margin_pct', 'sample_rate_hz', 'alias_rejection_db', 'sample_capacitance_pf', 'acquisition_time_ns'],
  supply: ['positive_v', 'negative_v', 'tolerance_pct', 'ratiometric'],
  accuracy: ['max_error_pct_fs', 'basis', 'yield_pct', 'temp_min_c', 'temp_max_c', 'calibration', 'bandwidth_hz', 'noise_low_hz'],
  search: ['max_stages', 'topologies', 'resistor_series', 'objective', 'bom_line_cost', 'max_parts', 'time_limit_ms'],
  stock: ['path', 'only'],
};

const HOSTILE = '<img src=x onerror=window.__pwned=1>';

let server;
before(async () => { server = await serveDist(); });
after(async () => { await server.close(); });

async function withPage(fn) {
  const browser = await launch();
  try {
    const opened = await openPage(browser.context, server.url);
    await fn({ ...opened, browser });
  } finally {
    await browser.close();
  }
}

async function setField(page, key, value) {
  const [section, name] = key.split('.');
  await page.fill(`#f-${section}-${name}`, value);
}

async function uploadStock(page, name, text) {
  await page.setInputFiles('[data-testid=stock-file]', { name, mimeType: 'text/csv', buffer: Buffer.from(text) });
}

async function demoCsv(page, file) {
  return page.evaluate((f) => window.spanfitPage.call('demo_stock').then((t) => JSON.parse(t)[f]), file);
}

test('the page loads with every need key, the cautions, a strict CSP and no remote loads', async () => {
  await withPage(async ({ page, problems }) => {
    for (const [section, keys] of Object.entries(NEED_KEYS)) {
      for (const key of keys) {
        assert.equal(await page.locator(`[data-key="${section}.${key}"]`).count() > 0, true, `form lacks ${section}.${key}`);
      }
    }
    assert.equal((await page.textContent('[data-testid=caution]')).replace(/\s+/g, ' ').includes(CAUTION), true);
    const csp = await page.getAttribute('meta[http-equiv="Content-Security-Policy"]', 'content');
    assert.match(csp, /default-src 'none'/);
    assert.doesNotMatch(csp, /https?:|\*/, 'the policy names no remote source');
    assert.equal(await page.textContent('[data-testid=need-status]'), 'The need is complete and consistent.');
    assert.match(await page.textContent('[data-testid=stock-status]'), /^Shelf read: \d+ resistor values/);
    assert.match(await page.textContent('[data-testid=derived]'), /gain K = [\d.]+/);
    assert.equal(await page.isEnabled('[data-testid=solve]'), true);
    await shot(page, 'page-initial');
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
    // A load from another origin (another loopback address) is refused by
    // the policy and reported as a violation.
    const blocked = await page.evaluate(() => new Promise((resolve) => {
      document.addEventListener('securitypolicyviolation', (e) => resolve(e.violatedDirective), { once: true });
      const img = document.createElement('img');
      img.src = 'http://127.0.0.2:9/x.png';
      document.body.append(img);
      setTimeout(() => resolve('no violation'), 3000);
    }));
    assert.match(blocked, /img-src/);
    for (const path of server.requests) assert.doesNotMatch(path, /^\/\//);
  });
});

async function needFields(page) {
  return page.evaluate(() => window.spanfitPage.call('need_fields').then((t) => JSON.parse(t)));
}

async function labelOf(page, key) {
  const field = (await needFields(page)).find((f) => f.key === key);
  assert.ok(field, `need_fields lists ${key}`);
  return field.label;
}

test('inline validation marks the field: a local number check, then the core names the key', async () => {
  await withPage(async ({ page, problems }) => {
    const label = await labelOf(page, 'adc.high_v');
    await setField(page, 'adc.high_v', 'three');
    await page.waitForSelector('.field.invalid[data-key="adc.high_v"]');
    assert.match(await page.textContent('#f-adc-high_v-error'), /"three" is not a number/);
    assert.equal((await page.textContent('[data-testid=need-status]')).includes(`${label}: "three" is not a number`), true);
    assert.equal(await page.isDisabled('[data-testid=solve]'), true);
    // A number the core refuses: the window above the positive rail.
    await setField(page, 'adc.high_v', '9');
    await page.waitForFunction(() => /positive rail/.test(document.querySelector('[data-testid=need-status]').textContent));
    const status = await page.textContent('[data-testid=need-status]');
    // Shown with the field's label, not the internal key.
    assert.equal(status.startsWith(`${label}: `), true, status);
    assert.doesNotMatch(status, /key `/);
    assert.equal(await page.locator('.field.invalid[data-key="adc.high_v"]').count(), 1);
    assert.match(await page.textContent('#f-adc-high_v-error'), /positive rail/);
    await shot(page, 'page-invalid-field');
    await setField(page, 'adc.high_v', '3');
    await page.waitForFunction(() => document.querySelector('[data-testid=need-status]').textContent === 'The need is complete and consistent.');
    assert.equal(await page.locator('.field.invalid').count(), 0);
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});

test('the form has one field per need key of need_fields, with its label, unit and choices', async () => {
  await withPage(async ({ page }) => {
    const fields = await needFields(page);
    assert.equal(fields.length, Object.values(NEED_KEYS).flat().length, 'need_fields lists every need key once');
    for (const f of fields) {
      const wrap = page.locator(`.field[data-key="${f.key}"]`);
      assert.equal(await wrap.count(), 1, f.key);
      assert.equal(await wrap.locator('label').first().textContent(), f.label, f.key);
      if (f.unit) assert.equal(await wrap.locator('.unit').textContent(), f.unit, f.key);
      if (f.kind === 'choice') {
        const options = await wrap.locator('select option').evaluateAll((o) => o.map((x) => x.value));
        for (const c of f.choices) assert.equal(options.includes(c), true, `${f.key} offers ${c}`);
      }
      if (f.kind === 'choices') {
        const boxes = await wrap.locator('input[type=checkbox]').evaluateAll((b) => b.map((x) => x.value));
        assert.deepEqual(boxes, f.choices, f.key);
      }
      // A one-line hint and a longer explanation on demand, both the
      // core's (need_fields `hint` and `help`), with the unit, the default
      // and a typical value where the core gives them.
      assert.equal(typeof f.hint === 'string' && f.hint.length > 10, true, `${f.key} has a hint in need_fields`);
      assert.equal(typeof f.help === 'string' && f.help.length > 10, true, `${f.key} has help in need_fields`);
      const hint = await wrap.locator('.hint').textContent();
      assert.equal(hint.length > 10 && !hint.includes('\n'), true, `${f.key} hint: ${hint}`);
      const help = await wrap.locator('details.help').textContent();
      if (f.unit) assert.equal(help.includes(`Unit: ${f.unit}.`), true, `${f.key}: ${help}`);
      if (f.default !== null && f.default !== undefined) assert.equal(help.includes('Default: '), true, `${f.key}: ${help}`);
      if (typeof f.typical === 'string' && f.typical) assert.equal(help.includes(`Typical: ${f.typical}.`), true, `${f.key}: ${help}`);
    }
    const typical = fields.filter((f) => typeof f.typical === 'string' && f.typical).length;
    console.log(`${fields.length} fields, ${typical} with a typical value from the core`);
  });
});

test('an error the core finds in a need field marks that field, found by the error key, shown with its label', async () => {
  await withPage(async ({ page, problems }) => {
    // Ask the core directly what it says about a temperature below absolute zero.
    const info = await page.evaluate(() => {
      const need = JSON.parse(JSON.stringify(window.spanfitPage.state.need));
      need.accuracy.temp_min_c = -300;
      return window.spanfitPage.call('check_need', JSON.stringify(need), 'need').then(() => null, (e) => e.info);
    });
    assert.ok(info, 'the core refuses the need');
    assert.equal(typeof info.key, 'string');
    assert.equal(typeof info.detail, 'string');
    const label = await labelOf(page, info.key);
    await setField(page, 'accuracy.temp_min_c', '-300');
    await page.waitForSelector(`.field.invalid[data-key="${info.key}"]`);
    assert.equal(await page.locator('.field.invalid').count(), 1);
    assert.equal(await page.textContent('[data-testid=need-status]'), `${label}: ${info.detail}`);
    assert.equal(await page.isDisabled('[data-testid=solve]'), true);
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});

test('a malformed CSV upload gets an error naming the line; a bad cell, uploaded or typed, is marked', async () => {
  await withPage(async ({ page }) => {
    const demo = await demoCsv(page, 'resistors.csv');
    const lines = demo.trim().split('\n');
    const before = await page.$$eval('[data-testid=stock-table] input', (i) => i.length);
    // Structure: a row with a missing field on line 3.
    const short = [...lines];
    short[2] = short[2].split(',').slice(0, -2).join(',');
    await uploadStock(page, 'resistors.csv', `${short.join('\n')}\n`);
    await page.waitForFunction(() => document.querySelector('[data-testid=stock-status]').dataset.tone === 'bad');
    assert.match(await page.textContent('[data-testid=stock-status]'), /resistors\.csv, line 3: .*\d+ fields.*header.* \d+ columns/);
    // A value: an unreadable tolerance on line 2.
    const header = lines[0].split(',');
    const cells = lines[1].split(',');
    cells[header.indexOf('tolerance_pct')] = 'tight';
    const bad = [lines[0], cells.join(','), ...lines.slice(2)];
    await uploadStock(page, 'resistors.csv', `${bad.join('\n')}\n`);
    await page.waitForFunction(() => /line 2/.test(document.querySelector('[data-testid=stock-status]').textContent));
    const status = await page.textContent('[data-testid=stock-status]');
    assert.match(status, /resistors\.csv/);
    assert.match(status, /tolerance_pct/);
    assert.equal(await page.isDisabled('[data-testid=solve]'), true);
    // The file loads as written, and the named cell is marked for fixing.
    assert.equal(await page.$$eval('[data-testid=stock-table] input', (i) => i.length), before);
    const col = header.indexOf('tolerance_pct');
    await page.waitForSelector('[data-testid=stock-table] input.bad-cell');
    assert.deepEqual(await page.$$eval('[data-testid=stock-table] input.bad-cell', (i) => i.map((x) => [x.dataset.row, x.dataset.col, x.value])), [['0', String(col), 'tight']]);
    // The same bad value typed into the shelf: the named cell is marked.
    const cell = page.locator(`[data-testid=stock-table] input[data-row="0"][data-col="${col}"]`);
    await cell.fill('tight');
    await cell.press('Tab');
    await page.waitForSelector('[data-testid=stock-table] input.bad-cell');
    assert.match(await page.textContent('[data-testid=stock-status]'), /resistors\.csv, line 2, column tolerance_pct/);
    assert.deepEqual(await page.$$eval('[data-testid=stock-table] input.bad-cell', (i) => i.map((x) => [x.dataset.row, x.dataset.col, x.value])), [['0', String(col), 'tight']]);
    await shot(page, 'page-bad-csv');
  });
});

test('a CSV with # comment lines and blank lines loads into the shelf as the core reads it', async () => {
  await withPage(async ({ page, problems }) => {
    const demo = (await demoCsv(page, 'opamps.csv')).trim().split('\n');
    const text = ['# invented shelf, counted on a Monday', demo[0], '', '# first part', demo[1], '   # indented comment', ...demo.slice(2), ''].join('\n');
    await uploadStock(page, 'my-opamps.csv', text);
    await page.waitForFunction(() => document.querySelector('[data-testid=stock-status]').dataset.tone === 'good'
      && document.querySelector('[data-testid=stock-table] caption').textContent === 'opamps.csv');
    const rows = await page.$$eval('[data-testid=stock-table] tbody tr', (trs) => trs.map((tr) => [...tr.querySelectorAll('input')].map((i) => i.value).join(',')));
    assert.deepEqual(rows, demo.slice(1));
    const tabs = await page.$$eval('button.tab', (b) => b.map((x) => x.textContent));
    assert.equal(tabs.includes(`Op-amps (${demo.length - 1})`), true, tabs.join(' | '));
    assert.equal(await page.isEnabled('[data-testid=solve]'), true);
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});

test('hostile text in a CSV, the need and the link is shown as text and never runs', async () => {
  await withPage(async ({ page, problems }) => {
    const demo = await demoCsv(page, 'resistors.csv');
    const lines = demo.trim().split('\n');
    const cells = lines[1].split(',');
    cells[0] = HOSTILE;
    await uploadStock(page, 'resistors.csv', `${[lines[0], cells.join(',')].join('\n')}\n`);
    await page.waitForFunction(() => document.querySelector('[data-testid=stock-status]').textContent !== '');
    const shown = await page.$$eval('[data-testid=stock-table] input', (inputs) => inputs.map((i) => i.value));
    assert.equal(shown.includes(HOSTILE), true, 'the hostile name is in the table as text');
    await setField(page, 'sensor.quantity_unit', HOSTILE);
    await setField(page, 'sensor.label', HOSTILE);
    await page.waitForFunction((h) => document.querySelector('[data-testid=derived]').textContent.includes(h), HOSTILE);
    // Through a share link too.
    const link = await page.evaluate(() => window.spanfitPage.shareLink());
    const other = await browserPage(page, link);
    assert.equal(await other.inputValue('#f-sensor-label'), HOSTILE);
    await other.waitForTimeout(300);
    for (const p of [page, other]) {
      assert.equal(await p.evaluate(() => window.__pwned), undefined);
      assert.equal(await p.locator('img[src="x"]').count(), 0);
    }
    await shot(page, 'page-hostile-text');
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});

async function browserPage(page, url) {
  const other = await page.context().newPage();
  await other.goto(url);
  await other.waitForFunction(() => document.body.dataset.ready === 'yes');
  return other;
}

test('edits to the need and the shelf survive a reload', async () => {
  await withPage(async ({ page, problems }) => {
    await setField(page, 'sensor.source_ohms', '470');
    await page.check('#f-search-resistor_series-E24');
    const cell = page.locator('[data-testid=stock-table] input[data-row="0"][data-col="0"]');
    await cell.fill('HR-EDITED');
    await cell.press('Tab');
    await page.click('button.tab[data-file="opamps.csv"]');
    await page.click('#row-add');
    await page.waitForTimeout(400);
    await page.reload();
    await page.waitForFunction(() => document.body.dataset.ready === 'yes');
    assert.equal(await page.inputValue('#f-sensor-source_ohms'), '470');
    assert.equal(await page.isChecked('#f-search-resistor_series-E24'), true);
    // The blank op-amp row came back too: the shelf check names it, and the
    // page shows that table with the row marked.
    const demoOpamps = (await demoCsv(page, 'opamps.csv')).trim().split('\n').length - 1;
    await page.waitForFunction(() => document.querySelector('[data-testid=stock-status]').dataset.tone === 'bad');
    assert.match(await page.textContent('[data-testid=stock-status]'), new RegExp(`^opamps\\.csv, line ${demoOpamps + 2}`));
    assert.equal(await page.locator(`[data-testid=stock-table] input.bad-cell[data-row="${demoOpamps}"]`).count() > 0, true);
    await page.click('button.tab[data-file="resistors.csv"]');
    assert.equal(await page.inputValue('[data-testid=stock-table] input[data-row="0"][data-col="0"]'), 'HR-EDITED');
    const tabs = await page.$$eval('button.tab', (b) => b.map((x) => x.textContent));
    assert.equal(tabs.includes(`Op-amps (${demoOpamps + 1})`), true, tabs.join(' | '));
    await shot(page, 'page-after-reload');
    assert.deepEqual(unexpected(problems), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});

test('a project stored as CSV text only is read by the core; a table it cannot read is left out, said, and set aside', async () => {
  await withPage(async ({ page }) => {
    const demo = await page.evaluate(() => window.spanfitPage.call('demo_stock').then((t) => JSON.parse(t)));
    const refs = demo['references.csv'].trim().split('\n');
    const width = refs[0].split(',').length;
    // A row with too few fields: the text itself is broken (a bad value
    // would load, with its cell marked).
    const badRefs = `${[...refs, ','.repeat(Math.max(0, width - 3))].join('\n')}\n`;
    const stored = JSON.stringify({
      format: 'spanfit-project', version: 1, need: await page.evaluate(() => window.spanfitPage.state.need),
      stock: { 'resistors.csv': demo['resistors.csv'], 'opamps.csv': demo['opamps.csv'], 'references.csv': badRefs },
    });
    await page.evaluate((text) => localStorage.setItem('spanfit-project-v1', text), stored);
    await page.reload();
    await page.waitForFunction(() => document.body.dataset.ready === 'yes');
    const count = (file) => demo[file].trim().split('\n').filter((l) => l.trim() && !l.trim().startsWith('#')).length - 1;
    const tabs = await page.$$eval('button.tab', (b) => b.map((x) => x.textContent));
    assert.deepEqual(tabs, [`Resistors (${count('resistors.csv')})`, `Op-amps (${count('opamps.csv')})`, 'References (0)', 'In-amps (0)', 'Capacitors (0)', 'Networks (0)']);
    const status = await page.textContent('[data-testid=run-status]');
    assert.match(status, new RegExp(`references\\.csv, line ${refs.length + 1}`));
    assert.match(status, /set aside/);
    // The solve on load ends without hiding the warning: its own message
    // follows it.
    await page.waitForFunction(() => /Done: solved in/.test(document.querySelector('[data-testid=run-status]').textContent), null, { timeout: 20000 });
    const after = await page.textContent('[data-testid=run-status]');
    assert.match(after, /set aside.* Done: solved in/);
    assert.equal(await page.getAttribute('[data-testid=run-status]', 'data-tone'), 'warn');
    assert.equal(await page.evaluate(() => localStorage.getItem('spanfit-project-v1-set-aside')), stored);
  });
});

test('a need file (TOML) opens into the form', async () => {
  await withPage(async ({ page }) => {
    const toml = await page.evaluate(() => window.spanfitPage.call('demo_need'));
    const changed = toml.replace(/^bits = 16$/m, 'bits = 12');
    assert.notEqual(changed, toml);
    await page.setInputFiles('#need-file', { name: 'mine.toml', mimeType: 'text/plain', buffer: Buffer.from(changed) });
    await page.waitForFunction(() => document.querySelector('#f-adc-bits').value === '12');
    await page.waitForFunction(() => window.spanfitPage.state.needValid && window.spanfitPage.state.checkedNeed === JSON.stringify(window.spanfitPage.state.need));
    assert.match(await page.textContent('[data-testid=derived]'), /1 LSB = 732\.4 µV/);
    await page.setInputFiles('#need-file', { name: 'broken.toml', mimeType: 'text/plain', buffer: Buffer.from('[adc]\nbits = = 3\n') });
    await page.waitForFunction(() => /^broken\.toml, line 2, column/.test(document.querySelector('[data-testid=need-status]').textContent));
  });
});

test('the share link carries the need and the shelf, deflated, in the fragment; an older need-only link still opens', async () => {
  await withPage(async ({ page }) => {
    await setField(page, 'accuracy.max_error_pct_fs', '0.35');
    await page.waitForFunction(() => window.spanfitPage.state.need.accuracy.max_error_pct_fs === 0.35);
    await page.click('#share');
    await page.waitForFunction(() => document.querySelector('[data-testid=share-url]').value !== '');
    const link = await page.inputValue('[data-testid=share-url]');
    const code = /#p=([A-Za-z0-9_-]+)$/.exec(link);
    assert.ok(code, link);
    const project = JSON.parse(inflateRawSync(Buffer.from(code[1], 'base64url')).toString('utf8'));
    assert.equal(project.format, 'spanfit-project');
    assert.equal(project.need.accuracy.max_error_pct_fs, 0.35);
    assert.equal(project.need.adc.bits, 16);
    assert.match(project.stock['resistors.csv'], /^part_id,/);
    const other = await browserPage(page, link);
    assert.equal(await other.inputValue('#f-accuracy-max_error_pct_fs'), '0.35');
    // A need-only link (base64url JSON of the need), as older pages made.
    const needOnly = { ...project.need, accuracy: { ...project.need.accuracy, max_error_pct_fs: 0.45 } };
    const old = await browserPage(page, `${link.split('#')[0]}#need=${Buffer.from(JSON.stringify(needOnly)).toString('base64url')}`);
    assert.equal(await old.inputValue('#f-accuracy-max_error_pct_fs'), '0.45');
    // A damaged fragment is reported, and the saved need is kept.
    const broken = await browserPage(page, `${link.split('#')[0]}#p=%%%`);
    assert.match(await broken.textContent('[data-testid=run-status]'), /could not be read/);
    assert.equal(await broken.inputValue('#f-accuracy-max_error_pct_fs'), '0.45');
  });
});

test('a project exports and imports with its need and shelf', async () => {
  await withPage(async ({ page }) => {
    await setField(page, 'supply.positive_v', '12');
    // The 12 V need solved and shown, so no search of it is still running
    // when the project comes back in.
    await page.waitForFunction(() => document.querySelector('[data-testid=freshness]').dataset.fresh === 'current', null, { timeout: 20000 });
    const [download] = await Promise.all([page.waitForEvent('download'), page.click('#project-export')]);
    const text = await (await download.createReadStream()).toArray().then((chunks) => Buffer.concat(chunks).toString('utf8'));
    const project = JSON.parse(text);
    assert.equal(project.format, 'spanfit-project');
    assert.equal(project.need.supply.positive_v, 12);
    assert.match(project.stock['resistors.csv'], /^part_id,/);
    project.need.supply.positive_v = 15;
    project.stock['references.csv'] = project.stock['references.csv'].trim().split('\n').slice(0, 2).join('\n') + '\n';
    await page.setInputFiles('#project-file', { name: 'p.json', mimeType: 'application/json', buffer: Buffer.from(JSON.stringify(project)) });
    await page.waitForFunction(() => /Project p\.json loaded/.test(document.querySelector('[data-testid=run-status]').textContent));
    assert.equal(await page.inputValue('#f-supply-positive_v'), '15');
    const tabs = await page.$$eval('button.tab', (b) => b.map((x) => x.textContent));
    assert.equal(tabs.includes('References (1)'), true, tabs.join(' | '));
    await page.setInputFiles('#project-file', { name: 'q.json', mimeType: 'application/json', buffer: Buffer.from('{"format": "other"}') });
    await page.waitForFunction(() => /q\.json: not a spanfit project/.test(document.querySelector('[data-testid=run-status]').textContent));
  });
});

test('a panic in the module is reported on the console and the page recovers', async () => {
  await withPage(async ({ page, problems }) => {
    const outcome = await page.evaluate(() => window.spanfitPage.panic().then(() => 'no error', (e) => `${e.fatal ? 'fatal' : 'plain'}: ${e.message}`));
    assert.match(outcome, /^fatal: /);
    await page.waitForFunction(() => document.querySelector('[data-testid=engine-state]').dataset.state === 'ready');
    const checked = await page.evaluate(() => window.spanfitPage.call('demo_need').then((t) => window.spanfitPage.call('check_need', t, 'demo.toml')));
    assert.equal(typeof checked.derived.ideal_gain, 'number');
    assert.equal(problems.consoleErrors.some((m) => m.includes('spanfit panic: ') && m.includes('diagnostic panic requested')), true, problems.consoleErrors.join('\n'));
    assert.deepEqual(unexpected(problems, [/spanfit panic: /]), { consoleErrors: [], pageErrors: [], remote: [] });
  });
});
