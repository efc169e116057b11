// Where a need and a shelf come from besides the form: the demo, a need
// file, a project file, the share link.
import { isObject, setStatus } from './dom.js';
import { fromBase64Url, readFileText, toBase64Url } from './io.js';
import { PROJECT_FORMAT } from './storage.js';
import { readTable } from './shelf.js';
import { engines, state } from './state.js';

/** The page's address with the need in the fragment (base64url JSON). */
export function shareLink() {
  const base = location.href.split('#')[0];
  return `${base}#need=${toBase64Url(JSON.stringify(state.need))}`;
}

/** The need of the address's `#need=` fragment, or null (said when damaged). */
export function needFromFragment() {
  if (!location.hash.startsWith('#need=')) return null;
  try {
    const need = JSON.parse(fromBase64Url(location.hash.slice('#need='.length)));
    if (!isObject(need)) throw new Error('expected an object of need sections');
    return need;
  } catch (error) {
    setStatus('run-status', `The link's need could not be read (${error.message}); the saved need is shown instead.`, 'warn');
    return null;
  }
}

/**
 * CSV texts by file name, each read by the core into a shelf table:
 * `{stock, problems}`, where `problems` holds the core's message for each
 * text it could not read (that table is left out of `stock`).
 */
export async function readStockTexts(texts) {
  const stock = {};
  const problems = [];
  for (const [file, text] of Object.entries(texts)) {
    try {
      stock[file] = await readTable(file, text);
    } catch (error) {
      problems.push(error.message);
    }
  }
  return { stock, problems };
}

/**
 * A project object (from a file) as {need, stock}; throws with a message
 * naming what is wrong (the core's, for a table it cannot read).
 */
export async function readProject(value, name) {
  if (!isObject(value) || value.format !== PROJECT_FORMAT) {
    throw new Error(`${name}: not a spanfit project (expected "format": "${PROJECT_FORMAT}")`);
  }
  if (!isObject(value.need)) throw new Error(`${name}, key \`need\`: expected an object of need sections`);
  if (!isObject(value.stock)) throw new Error(`${name}, key \`stock\`: expected an object mapping file names to CSV text`);
  for (const [file, text] of Object.entries(value.stock)) {
    if (typeof text !== 'string') throw new Error(`${name}, key \`stock.${file}\`: expected CSV text`);
  }
  const { stock, problems } = await readStockTexts(value.stock);
  if (problems.length) throw new Error(`${name}: ${problems.join(' · ')}`);
  return { need: value.need, stock };
}

/** A project file's need and shelf, or a thrown message. */
export async function projectFromFile(file) {
  const text = await readFileText(file);
  let value;
  try { value = JSON.parse(text); } catch (error) { throw new Error(`${file.name}: not JSON (${error.message})`); }
  return readProject(value, file.name);
}

/** A need file (TOML or JSON) as the form's need object. */
export async function needFromFile(file) {
  const text = await readFileText(file);
  return engines.checker.call('need_keys', text, file.name);
}

/** The demo need as the form's need object. */
export async function demoNeed() {
  const toml = await engines.checker.call('demo_need');
  return engines.checker.call('need_keys', toml, 'demo-need.toml');
}

/** The demo shelf, each table read by the core. */
export async function demoStock() {
  const { stock, problems } = await readStockTexts(JSON.parse(await engines.checker.call('demo_stock')));
  if (problems.length) throw new Error(`the demo stock: ${problems.join(' · ')}`);
  return stock;
}
