// Where a need and a shelf come from besides the form: the demo, a need
// file, a project file, the share link.
import { isObject, setStatus } from './dom.js';
import { base64UrlToBytes, bytesToBase64Url, fromBase64Url, readFileText } from './io.js';
import { PROJECT_FORMAT, projectObject } from './storage.js';
import { readTable } from './shelf.js';
import { engines, state } from './state.js';

/** The longest share link the page offers; a larger project goes by file. */
export const MAX_LINK_CHARS = 16000;

async function deflate(text) {
  const stream = new Blob([new TextEncoder().encode(text)]).stream().pipeThrough(new CompressionStream('deflate-raw'));
  return new Uint8Array(await new Response(stream).arrayBuffer());
}

async function inflate(bytes) {
  const stream = new Blob([bytes]).stream().pipeThrough(new DecompressionStream('deflate-raw'));
  return new TextDecoder('utf-8', { fatal: true }).decode(await new Response(stream).arrayBuffer());
}

/**
 * The page's address with the project in the fragment: `#p=` and the
 * project (need, shelf as CSV text, currency) as JSON, deflated (raw
 * DEFLATE, RFC 1951) and in base64url. Resolves with `{link, tooLong}`;
 * `tooLong` when the link would pass MAX_LINK_CHARS.
 */
export async function shareLink() {
  const base = location.href.split('#')[0];
  const link = `${base}#p=${bytesToBase64Url(await deflate(JSON.stringify(projectObject())))}`;
  return { link, tooLong: link.length > MAX_LINK_CHARS };
}

/** The fragment's kind: 'project' (`#p=`), 'need' (`#need=`, older links) or null. */
export function fragmentKind() {
  if (location.hash.startsWith('#p=')) return 'project';
  if (location.hash.startsWith('#need=')) return 'need';
  return null;
}

/** Take the fragment out of the address bar (a reload then shows the saved work). */
export function clearFragment() {
  if (location.hash) history.replaceState(null, '', location.href.split('#')[0]);
}

/**
 * The project of the address's fragment: `{need, stock?, currency?}`, or
 * null (said when damaged). A `#need=` link (base64url JSON of the need)
 * carries the need only.
 */
export async function projectFromFragment() {
  const kind = fragmentKind();
  if (!kind) return null;
  try {
    if (kind === 'need') {
      const need = JSON.parse(fromBase64Url(location.hash.slice('#need='.length)));
      if (!isObject(need)) throw new Error('expected an object of need sections');
      return { need };
    }
    const value = JSON.parse(await inflate(base64UrlToBytes(location.hash.slice('#p='.length))));
    const project = await readProject(value, 'the link');
    return { ...project, currency: typeof value.currency === 'string' ? value.currency : undefined };
  } catch (error) {
    setStatus('run-status', `The link's project could not be read (${error.message}); the saved work is shown instead.`, 'warn');
    return null;
  }
}

/** An example of the gallery as `{need, stock}`, both read by the core. */
export async function exampleProject(example) {
  const need = await engines.checker.call('need_keys', example.need, `${example.id}.toml`);
  const { stock, problems } = await readStockTexts(example.stock);
  if (problems.length) throw new Error(`${example.title}: ${problems.join(' · ')}`);
  return { need, stock };
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
  const out = { need: value.need, stock };
  if (typeof value.currency === 'string') out.currency = value.currency;
  return out;
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
