// The shelf: the stock tables, shown and edited as tables of text. The core
// reads every table (`read_stock_table` for an upload, `check_stock` for the
// whole shelf); its structured errors point at the file, row and cell.
import { $, clear, el, setStatus } from './dom.js';
import { csvWithLines } from './csv.js';
import { readFileText } from './io.js';
import { saveSoon } from './storage.js';
import { engines, state, updateSolveButton } from './state.js';
import { TABLES, tableForName } from './tables.js';

/** Redraw the tabs (one per table, with its row count). */
export function buildTabs() {
  const tabs = $('stock-tabs');
  clear(tabs);
  for (const t of TABLES) {
    const table = state.stock[t.file];
    const count = table ? table.rows.length : 0;
    tabs.append(el('button', {
      type: 'button', role: 'tab', className: 'tab', 'data-file': t.file,
      'aria-selected': state.activeTable === t.file ? 'true' : 'false',
      text: `${t.label} (${count})`,
      onclick: () => { state.activeTable = t.file; buildTabs(); renderStockTable(); },
    }));
  }
}

/** Redraw the table of the active tab, one text input per cell. */
export function renderStockTable() {
  const node = $('stock-table');
  clear(node);
  const file = state.activeTable;
  const table = state.stock[file];
  if (!table) {
    node.append(el('caption', { text: `No ${file} on the shelf. Upload one, or take the demo stock.` }));
    return;
  }
  node.append(el('caption', { text: file }));
  const head = el('tr', {}, el('th', { text: '#' }));
  for (const h of table.header) head.append(el('th', { text: h, scope: 'col' }));
  head.append(el('th', { scope: 'col' }, el('span', { className: 'sr-only', text: 'Delete row' })));
  node.append(el('thead', {}, head));
  const body = el('tbody');
  table.rows.forEach((row, r) => {
    const tr = el('tr', {}, el('td', { className: 'row-no', text: String(r + 2) }));
    row.forEach((cell, c) => {
      const input = el('input', {
        type: 'text', 'aria-label': `${table.header[c]}, row ${r + 1}`, spellcheck: 'false',
        'data-row': r, 'data-col': c,
      });
      input.value = cell;
      input.addEventListener('change', () => {
        table.rows[r][c] = input.value;
        stockChanged();
      });
      tr.append(el('td', {}, input));
    });
    tr.append(el('td', {}, el('button', {
      type: 'button', className: 'row-del', 'aria-label': `delete row ${r + 1}`, text: '✕',
      onclick: () => { table.rows.splice(r, 1); stockChanged(); renderStockTable(); },
    })));
    body.append(tr);
  });
  node.append(body);
}

/**
 * Set columns of shelf tables to one value in every row (a suggestion of
 * the core: `{file, column, value}`); a column the table lacks is added.
 * Resolves once the core has checked the shelf.
 */
export async function applyStockChanges(changes) {
  for (const { file, column, value } of changes) {
    const table = state.stock[file];
    if (!table) continue;
    let c = table.header.indexOf(column);
    if (c < 0) {
      table.header.push(column);
      for (const row of table.rows) row.push('');
      c = table.header.length - 1;
    }
    for (const row of table.rows) row[c] = String(value);
    state.activeTable = file;
  }
  saveSoon();
  buildTabs();
  renderStockTable();
  clearTimeout(stockTimer);
  await validateStock();
}

let stockTimer = null;
let stockCheckSeq = 0;

/**
 * Mark the shelf unchecked at once: a check already under way is dropped
 * when it answers, and no solve runs until the core has read the shelf as
 * it now is. The callers update the solve button.
 */
function markUnchecked() {
  ++stockCheckSeq;
  state.stockValid = false;
}

/** After any change to the shelf: save, recount, check. */
export function stockChanged() {
  // Unchecked until the core has read the changed shelf: a solve never
  // runs on the shelf as it was before the edit.
  markUnchecked();
  saveSoon();
  buildTabs();
  updateSolveButton();
  validateStockSoon();
}

function validateStockSoon() {
  clearTimeout(stockTimer);
  stockTimer = setTimeout(validateStock, 150);
}

/** The shelf as the core takes it: JSON text mapping file names to CSV text. */
export function stockJson() {
  const stock = {};
  for (const [file, table] of Object.entries(state.stock)) stock[file] = csvWithLines(table).text;
  return JSON.stringify(stock);
}

/** Ask the core to read the whole shelf; mark the cell its error names. */
export async function validateStock() {
  const seq = ++stockCheckSeq;
  if (!Object.keys(state.stock).length) {
    state.stockValid = false;
    setStatus('stock-status', 'The shelf is empty. Upload CSVs or take the demo stock.', 'bad');
    updateSolveButton();
    return;
  }
  try {
    const checked = stockJson();
    const counts = await engines.checker.call('check_stock', checked);
    if (seq !== stockCheckSeq) return;
    state.stockValid = true;
    state.checkedStock = checked;
    setStatus('stock-status', `Shelf read: ${counts.resistors} resistor values, ${counts.opamps} op-amps, ${counts.references} references, ${counts.inamps} in-amps${typeof counts.capacitors === 'number' ? `, ${counts.capacitors} capacitor values` : ''}${counts.networks ? `, ${counts.networks} resistor networks` : ''}.`, 'good');
  } catch (error) {
    if (seq !== stockCheckSeq) return;
    state.stockValid = false;
    setStatus('stock-status', error.message, 'bad');
    if (error.info) markBadCell(error.info);
  }
  updateSolveButton();
}

/**
 * Point at the cell (or the row) an error of the core names: its `file`
 * is a shelf table, its `line` a line of the CSV text the page sent (traced
 * back to a row), its `column_name` a header.
 */
function markBadCell(info) {
  const file = info.file;
  const table = typeof file === 'string' ? state.stock[file] : null;
  if (!table || !Number.isInteger(info.line)) return;
  const row = csvWithLines(table).rowLines.indexOf(info.line);
  if (row < 0) return;
  if (state.activeTable !== file) {
    state.activeTable = file;
    buildTabs();
    renderStockTable();
  }
  const col = typeof info.column_name === 'string' ? table.header.indexOf(info.column_name) : -1;
  const selector = col >= 0 ? `input[data-row="${row}"][data-col="${col}"]` : `input[data-row="${row}"]`;
  for (const input of $('stock-table').querySelectorAll(selector)) input.classList.add('bad-cell');
}

/**
 * Read one CSV text as the shelf table `file` through the core. Resolves
 * with `{header, rows}` (rows that fail a check still load: the shelf
 * check then points at the cell); rejects with the core's error when the
 * text or its header cannot be read.
 */
export async function readTable(file, text) {
  const value = await engines.checker.call('read_stock_table', file, text);
  return { header: value.header.map(String), rows: value.rows.map((r) => r.map(String)) };
}

/**
 * An uploaded file: the table its name says, or, when the name does not
 * say, the one table the core reads it as. Resolves with {file, table}.
 */
async function readUpload(name, text) {
  const named = tableForName(name);
  if (named) {
    try {
      return { file: named, table: await readTable(named, text) };
    } catch (error) {
      const said = name.toLowerCase() === named ? '' : `${name} (read as ${named}): `;
      throw new Error(`${said}${error.message}`);
    }
  }
  const fits = [];
  for (const t of TABLES) {
    try { fits.push({ file: t.file, table: await readTable(t.file, text) }); } catch (_) { /* not this table */ }
  }
  if (fits.length === 1) return fits[0];
  throw new Error(`${name}: cannot tell which table this is; name it ${TABLES.map((t) => t.file).join(', ')}`);
}

/** Uploaded CSVs: each read by the core into its table. */
export async function onStockUpload(files) {
  markUnchecked();
  updateSolveButton();
  const messages = [];
  let lastTable = null;
  for (const file of files) {
    try {
      const text = await readFileText(file);
      const { file: target, table } = await readUpload(file.name, text);
      state.stock[target] = table;
      lastTable = target;
    } catch (error) {
      messages.push(error.message);
    }
  }
  if (lastTable) state.activeTable = lastTable;
  buildTabs();
  renderStockTable();
  saveSoon();
  if (messages.length) {
    markUnchecked();
    setStatus('stock-status', messages.join(' · '), 'bad');
    updateSolveButton();
  } else {
    validateStock();
  }
}
