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
import { $, clear, el, setStatus } from './dom.js';
import { bundle, Engine } from './wasm-client.js';
import { engines, state, updateSolveButton } from './state.js';
import { loadStored, namedProjects, projectObject, saveNow, saveSoon, setAside, writeNamedProjects } from './storage.js';
import { buildForm, fillForm, validateNeed } from './need-form.js';
import { buildTabs, onStockUpload, renderStockTable, stockChanged, validateStock } from './shelf.js';
import { onCancel, refreshFreshness, runSolve } from './solve.js';
import { pinViewed, renderCompare, renderViewed, watchChartWidth, watchGlance, wireSchematic } from './results.js';
import { wireDownloads } from './downloads.js';
import { clearFragment, demoNeed, fragmentKind, demoStock, exampleProject, needFromFile, projectFromFile, projectFromFragment, readProject, readStockTexts, shareLink } from './project.js';
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
  updateSolveButton();
  validateNeed();
}

/** Put a whole project on the page: need, shelf and (when given) currency. */
function useProject(project) {
  state.need = project.need;
  state.stock = project.stock;
  if (typeof project.currency === 'string') setCurrency(project.currency);
  fillForm(state.need);
  showShelf();
  saveNow();
  // Mark the answer out of date at once, before the checks come back.
  updateSolveButton();
  validateNeed();
  validateStock();
}

async function importProject(file) {
  try {
    useProject(await projectFromFile(file));
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

/** Currency symbols offered for costs (the stock's prices carry none). */
const CURRENCIES = [['', 'none'], ['€', '€ euro'], ['$', '$ dollar'], ['£', '£ pound'], ['¥', '¥ yen / yuan'], ['CHF', 'CHF franc'], ['kr', 'kr krona / krone'], ['₹', '₹ rupee']];

function setCurrency(symbol) {
  const select = $('currency');
  if (![...select.options].some((o) => o.value === symbol)) select.append(el('option', { value: symbol, text: symbol }));
  select.value = symbol;
  state.currency = symbol;
}

function wireCurrency() {
  const select = $('currency');
  for (const [value, text] of CURRENCIES) select.append(el('option', { value, text }));
  select.addEventListener('change', () => {
    state.currency = select.value;
    saveSoon();
    if (state.result && state.viewed) renderViewed();
  });
}

/** The list of named projects, with `selected` chosen when given. */
function listNamed(selected) {
  const select = $('project-list');
  clear(select);
  const names = Object.keys(namedProjects()).sort();
  if (!names.length) select.append(el('option', { value: '', text: '(none saved yet)' }));
  for (const name of names) select.append(el('option', { value: name, text: name }));
  if (selected && names.includes(selected)) select.value = selected;
  for (const id of ['project-open', 'project-duplicate', 'project-delete']) $(id).disabled = !names.length;
}

function wireNamed() {
  listNamed();
  $('project-save').addEventListener('click', () => {
    const name = $('project-name').value.trim();
    if (!name) { setStatus('run-status', 'Give the project a name to save it under.', 'bad'); $('project-name').focus(); return; }
    const all = namedProjects();
    all[name] = { ...projectObject(), tables: state.stock };
    if (!writeNamedProjects(all)) { setStatus('run-status', 'This browser refused to store the project (storage is off or full).', 'bad'); return; }
    listNamed(name);
    setStatus('run-status', `Saved as "${name}" in this browser.`, 'good');
  });
  $('project-open').addEventListener('click', async () => {
    const name = $('project-list').value;
    const value = namedProjects()[name];
    if (!value) return;
    try {
      const project = await readProject(value, `the saved project "${name}"`);
      useProject(project);
      $('project-name').value = name;
      setStatus('run-status', `Opened "${name}".`, 'good');
    } catch (error) {
      setStatus('run-status', error.message, 'bad');
    }
  });
  $('project-duplicate').addEventListener('click', () => {
    const name = $('project-list').value;
    const all = namedProjects();
    if (!all[name]) return;
    let copy = `${name} (copy)`;
    for (let n = 2; all[copy]; n += 1) copy = `${name} (copy ${n})`;
    all[copy] = all[name];
    writeNamedProjects(all);
    listNamed(copy);
    setStatus('run-status', `Duplicated "${name}" as "${copy}".`, 'good');
  });
  $('project-delete').addEventListener('click', () => {
    const name = $('project-list').value;
    const all = namedProjects();
    if (!all[name]) return;
    delete all[name];
    writeNamedProjects(all);
    listNamed();
    setStatus('run-status', `Deleted "${name}" from this browser.`, 'good');
  });
}

let gallery = null;

function wireGallery() {
  const dialog = $('gallery');
  $('gallery-open').addEventListener('click', async () => {
    if (!gallery) {
      try {
        gallery = JSON.parse(await engines.checker.call('gallery_examples'));
      } catch (error) {
        setStatus('run-status', `The examples could not be loaded: ${error.message}`, 'bad');
        return;
      }
      const list = $('gallery-list');
      clear(list);
      for (const example of gallery) {
        const pick = el('button', { type: 'button', className: 'primary', 'data-example': example.id, text: 'Load need and shelf' });
        pick.addEventListener('click', () => loadExample(example));
        list.append(el('li', {},
          el('span', { className: 'invented', text: 'Invented example' }),
          el('h3', { text: String(example.title) }),
          el('p', { text: String(example.summary) }),
          pick));
      }
    }
    dialog.showModal();
  });
  $('gallery-close').addEventListener('click', () => dialog.close());
}

async function loadExample(example) {
  try {
    useProject(await exampleProject(example));
    $('gallery').close();
    setStatus('run-status', `Loaded the invented example "${example.title}" (need and shelf).`, 'good');
  } catch (error) {
    setStatus('run-status', error.message, 'bad');
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
  // Asked for by a click: once the answer lands, focus moves to it.
  $('solve').addEventListener('click', () => runSolve().then((reply) => { if (reply) $('answer').focus(); }));
  $('solve-every').addEventListener('click', () => {
    setStatus('run-status', 'Searching every design; Stop ends the search.', 'warn', 'solve');
    runSolve({ exhaustive: true });
  });
  $('cancel').addEventListener('click', onCancel);
  $('project-import').addEventListener('click', () => $('project-file').click());
  $('project-file').addEventListener('change', onFile(importProject));
  $('share').addEventListener('click', async () => {
    const { link, tooLong } = await shareLink();
    if (tooLong) {
      $('share-line').hidden = true;
      setStatus('run-status', `This shelf is too large for a link (${link.length} characters). Use "Export project" and send the file instead.`, 'warn');
      $('project-export').focus();
      return;
    }
    $('share-line').hidden = false;
    $('share-url').value = link;
    $('share-url').select();
    try { await navigator.clipboard.writeText(link); setStatus('run-status', 'Link with the need and the shelf copied.', 'good'); } catch (_) { /* selected for copying */ }
  });
  wireDownloads();
  wireSchematic();
  wireCurrency();
  wireNamed();
  $('pin').addEventListener('click', pinViewed);
  $('unpin').addEventListener('click', () => { state.pinned = null; renderCompare(); });
  wireGallery();
  // A share link opened in a tab that already shows the page: the page is
  // not ready (data-ready) until the link's project is in the form and shelf.
  window.addEventListener('hashchange', async () => {
    if (!fragmentKind()) return;
    document.body.dataset.ready = 'no';
    try {
      const project = await projectFromFragment();
      clearFragment();
      if (project) useProject({ stock: state.stock, ...project });
    } finally {
      document.body.dataset.ready = 'yes';
    }
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
  setCurrency(stored && typeof stored.currency === 'string' ? stored.currency : '');
  // A share link: its need (and shelf and currency, when it has them)
  // replace the saved ones; the fragment then leaves the address bar, so a
  // reload shows later edits rather than the link again.
  const linked = await projectFromFragment();
  clearFragment();
  if (linked) {
    state.need = linked.need;
    if (linked.stock) state.stock = linked.stock;
    if (typeof linked.currency === 'string') setCurrency(linked.currency);
  }
  fillForm(state.need);
  showShelf();
  saveNow();
  watchChartWidth();
  watchGlance();
  await Promise.all([validateNeed(), validateStock()]);
  refreshFreshness();
  document.body.dataset.ready = 'yes';
}

// A small handle for the page's own tests and for the curious.
window.spanfitPage = {
  state,
  solve: (options) => runSolve(options),
  panic: () => engines.checker.call('diagnostic_panic'),
  call: (fn, ...args) => engines.checker.call(fn, ...args),
  shareLink: () => shareLink().then((r) => r.link),
  toCsv,
};

start();
