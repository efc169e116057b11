// The project in this browser's storage: the need and the shelf, saved
// shortly after each edit and read back on the next visit.
import { isObject, setStatus } from './dom.js';
import { toCsv } from './csv.js';
import { state } from './state.js';

const STORAGE_KEY = 'spanfit-project-v1';

/** The `format` of a project object (stored or exported). */
export const PROJECT_FORMAT = 'spanfit-project';

/**
 * The project as exported: `{format, version, need, stock, currency}`
 * where `stock` maps file names to CSV text (as the core reads it; no
 * spreadsheet escaping, so the text reads back the same) and `currency`
 * is the symbol costs are shown with ('' for none).
 */
export function projectObject() {
  const stock = {};
  for (const [file, table] of Object.entries(state.stock)) stock[file] = toCsv(table);
  return { format: PROJECT_FORMAT, version: 1, need: state.need, stock, currency: state.currency || '' };
}

let saveTimer = null;

/** Save a moment from now (edits come in bursts). */
export function saveSoon() {
  clearTimeout(saveTimer);
  saveTimer = setTimeout(saveNow, 200);
}

// An edit made just before the page goes (a reload, a closed tab) is saved
// as it goes, not lost with its pending timer.
addEventListener('pagehide', () => {
  if (saveTimer !== null) saveNow();
});

/**
 * Save now. Besides the project object, the shelf is kept as tables
 * (`tables`: file -> {header, rows}), so a table in the middle of an edit
 * (a blank new row, say) comes back as it was even though the core would
 * not read it yet.
 */
export function saveNow() {
  clearTimeout(saveTimer);
  saveTimer = null;
  try {
    localStorage.setItem(STORAGE_KEY, JSON.stringify({ ...projectObject(), tables: state.stock }));
  } catch (_) {
    setStatus('run-status', 'This browser does not keep the project between visits (storage is off or full).', 'warn');
  }
}

/**
 * Keep the stored project under a second key before the page writes over
 * it (when it could not be read in full), so nothing is lost for good.
 */
export function setAside() {
  try {
    const text = localStorage.getItem(STORAGE_KEY);
    if (text) localStorage.setItem(`${STORAGE_KEY}-set-aside`, text);
  } catch (_) { /* storage is off: nothing was stored either */ }
}

const isText = (x) => typeof x === 'string';

/** A stored table `{header, rows}` of strings, rows as wide as the header; or null. */
function storedTable(value) {
  if (!isObject(value) || !Array.isArray(value.header) || !value.header.every(isText) || !Array.isArray(value.rows)) return null;
  const width = value.header.length;
  if (!value.rows.every((r) => Array.isArray(r) && r.length === width && r.every(isText))) return null;
  return { header: [...value.header], rows: value.rows.map((r) => [...r]) };
}

/**
 * The stored project: `{need, tables}` when its shelf was stored as
 * tables, `{need, stockCsv}` when only as CSV text (to be read by the
 * core), or null (nothing stored, or unreadable: said on the run status).
 */
export function loadStored() {
  let text = null;
  try { text = localStorage.getItem(STORAGE_KEY); } catch (_) { return null; }
  if (!text) return null;
  try {
    const value = JSON.parse(text);
    if (!isObject(value) || value.format !== PROJECT_FORMAT || !isObject(value.need)) throw new Error('not a spanfit project');
    if (isObject(value.tables)) {
      const tables = {};
      for (const [file, table] of Object.entries(value.tables)) {
        const read = storedTable(table);
        if (!read) throw new Error(`the stored table ${file} is damaged`);
        tables[file] = read;
      }
      return { need: value.need, tables, currency: typeof value.currency === 'string' ? value.currency : '' };
    }
    if (!isObject(value.stock) || !Object.values(value.stock).every(isText)) throw new Error('the stored shelf is damaged');
    return { need: value.need, stockCsv: value.stock, currency: typeof value.currency === 'string' ? value.currency : '' };
  } catch (error) {
    setAside();
    setStatus('run-status', `The saved project could not be read and was set aside: ${error.message}`, 'warn');
    return null;
  }
}

const NAMED_KEY = 'spanfit-projects-v1';

/** The named projects kept in this browser: name -> project object. */
export function namedProjects() {
  try {
    const value = JSON.parse(localStorage.getItem(NAMED_KEY) || '{}');
    return isObject(value) ? value : {};
  } catch (_) {
    return {};
  }
}

/** Write the named projects back; false when storage refuses. */
export function writeNamedProjects(all) {
  try {
    localStorage.setItem(NAMED_KEY, JSON.stringify(all));
    return true;
  } catch (_) {
    return false;
  }
}
