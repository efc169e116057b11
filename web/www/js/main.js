// spanfit page: start-up and wiring.
//
// All engineering happens in the WebAssembly module (the spanfit core),
// which runs in two workers: a "checker" for validation and small calls,
// and a "solver" for searches. The page only moves text between the form,
// the shelf, the workers and the views. Module map:
//   dom.js          safe element helpers (text from users is data, never markup)
//   format.js       number formatting
//   io.js           file reading, downloads, base64
//   csv.js          a shelf table back to CSV text (reading CSV is the core's)
//   tables.js       the four shelf tables by file name
//   state.js        the shared state and the two engines
//   storage.js      the project in this browser's storage
//   wasm-client.js  the worker protocol (worker.js unwraps the envelopes)
//   need-form.js    the form, built from the core's need_fields
//   shelf.js        the stock tables: upload, edit, check
//   solve.js        Design it / Stop
//   results.js      the result panel
//   charts.js       error budget, cost-against-error front, histogram
//   downloads.js    the download buttons
//   project.js      demo, need file, project file, share link
import { $, setStatus } from './dom.js';
import { bundle, Engine } from './wasm-client.js';
import { engines, state, updateSolveButton } from './state.js';
import { loadStored, saveNow, setAside } from './storage.js';
import { buildForm, fillForm, validateNeed } from './need-form.js';
import { buildTabs, onStockUpload, renderStockTable, stockChanged, validateStock } from './shelf.js';
import { onCancel, runSolve } from './solve.js';
import { wireDownloads } from './downloads.js';
import { demoNeed, demoStock, needFromFile, needFromFragment, projectFromFile, readStockTexts, shareLink } from './project.js';
import { toCsv } from './csv.js';

// The badge shows the two workers together: ready when both are.
function engineState(engine, what, detail) {
  const badge = $('engine-state');
  engines.states[engine.name] = what;
  if (engine.name === 'solver') engines.solverReady = what === 'ready';
  if (what === 'ready') $('version').textContent = engine.version || '';
  const states = Object.values(engines.states);
  if (what === 'failed') {
    badge.textContent = `solver failed: ${detail}`;
    badge.dataset.state = 'failed';
  } else if (states.length === 2 && states.every((x) => x === 'ready')) {
    badge.textContent = `solver ready (${bundle ? 'single file' : 'served'})`;
    badge.dataset.state = 'ready';
  } else if (!states.includes('failed')) {
    badge.textContent = what === 'restarting' ? 'restarting the solver…' : 'loading the solver…';
    badge.dataset.state = 'loading';
  }
  updateSolveButton();
}

function showShelf() {
  buildTabs();
  renderStockTable();
}

function useNeed(need) {
  state.need = need;
  fillForm(need);
  saveNow();
  validateNeed();
}

async function importProject(file) {
  try {
    const project = await projectFromFile(file);
    state.need = project.need;
    state.stock = project.stock;
    fillForm(state.need);
    showShelf();
    saveNow();
    validateNeed();
    validateStock();
    setStatus('run-status', `Project ${file.name} loaded.`, 'good');
  } catch (error) {
    setStatus('run-status', error.message, 'bad');
  }
}

async function openNeedFile(file) {
  try {
    useNeed(await needFromFile(file));
  } catch (error) {
    setStatus('need-status', error.message, 'bad');
  }
}

const onFile = (handler) => (e) => { if (e.target.files[0]) handler(e.target.files[0]); e.target.value = ''; };

function wire() {
  $('need-open').addEventListener('click', () => $('need-file').click());
  $('need-file').addEventListener('change', onFile(openNeedFile));
  $('need-reset').addEventListener('click', async () => useNeed(await demoNeed()));
  $('stock-upload').addEventListener('click', () => $('stock-file').click());
  $('stock-file').addEventListener('change', (e) => { onStockUpload([...e.target.files]); e.target.value = ''; });
  $('stock-reset').addEventListener('click', async () => {
    state.stock = await demoStock();
    showShelf();
    stockChanged();
  });
  $('row-add').addEventListener('click', () => {
    const table = state.stock[state.activeTable];
    if (!table) return;
    table.rows.push(table.header.map(() => ''));
    renderStockTable();
    stockChanged();
  });
  $('solve').addEventListener('click', () => runSolve());
  $('cancel').addEventListener('click', onCancel);
  $('project-import').addEventListener('click', () => $('project-file').click());
  $('project-file').addEventListener('change', onFile(importProject));
  $('share').addEventListener('click', async () => {
    const link = shareLink();
    $('share-line').hidden = false;
    $('share-url').value = link;
    $('share-url').select();
    try { await navigator.clipboard.writeText(link); setStatus('run-status', 'Link copied.', 'good'); } catch (_) { /* selected for copying */ }
  });
  wireDownloads();
  window.addEventListener('hashchange', () => {
    const need = needFromFragment();
    if (need) useNeed(need);
  });
}

// The stored shelf, read by the core when it was stored as CSV text only
// (tables it cannot read are left out and said; the stored project is set
// aside first); the demo shelf when nothing is stored.
async function storedOrDemoStock(stored) {
  if (stored && stored.tables) return stored.tables;
  if (stored && stored.stockCsv) {
    const { stock, problems } = await readStockTexts(stored.stockCsv);
    if (problems.length) {
      setAside();
      setStatus('run-status', `Part of the saved shelf could not be read and was left out (the saved project was set aside): ${problems.join(' · ')}`, 'warn');
    }
    return stock;
  }
  return demoStock();
}

async function start() {
  wire();
  engines.checker = new Engine('checker', engineState);
  engines.solver = new Engine('solver', engineState);
  const stored = loadStored();
  try {
    await engines.checker.ready;
    buildForm(JSON.parse(await engines.checker.call('need_fields')));
  } catch (error) {
    engineState(engines.checker, 'failed', error.message);
    return;
  }
  state.need = stored ? stored.need : await demoNeed();
  state.stock = await storedOrDemoStock(stored);
  const linked = needFromFragment();
  if (linked) state.need = linked;
  fillForm(state.need);
  showShelf();
  saveNow();
  await Promise.all([validateNeed(), validateStock()]);
  document.body.dataset.ready = 'yes';
}

// A small handle for the page's own tests and for the curious.
window.spanfitPage = {
  state,
  solve: (options) => runSolve(options),
  panic: () => engines.checker.call('diagnostic_panic'),
  call: (fn, ...args) => engines.checker.call(fn, ...args),
  shareLink,
  toCsv,
};

start();
