// Assemble the page from web/www and the wasm-bindgen output in web/pkg:
//   web/dist/            the served page (index.html, js/*.js as ES
//                        modules, worker.js, style.css, pkg/spanfit_web.js
//                        + _bg.wasm, and the ES-module glue
//                        pkg/spanfit_web.mjs for reuse)
//   web/dist/spanfit.html one file that also works from file://: the style
//                        and scripts inline, the wasm as base64, the worker
//                        made from a Blob URL and started with initSync.
// The single file's Content-Security-Policy allows its own inline blocks by
// hash, wasm compilation, and blob: workers; nothing remote.
//
// The page's ES modules (web/www/js) become one classic script for the
// single file: a small module joiner below (no bundler dependency) puts
// each module in a function of its own, in import order, and passes the
// names it exports to the modules that import them. It takes the plain
// forms the page uses and refuses anything else, so a construct it does
// not know fails the build instead of breaking the page:
//   import { a, b as c } from './x.js';        (one line, relative, .js)
//   export function f / export async function f / export class C /
//   export const x / export let x              (at the start of a line)
//
// Usage: node web/bundle.mjs   (run by scripts/build-web.sh)
import { createHash } from 'node:crypto';
import { copyFileSync, mkdirSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { basename, dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const web = dirname(fileURLToPath(import.meta.url));
const www = join(web, 'www');
const jsDir = join(www, 'js');
const pkg = join(web, 'pkg');
const dist = join(web, 'dist');
const ENTRY = 'main.js';
const MODULE_TAG = '<script type="module" src="js/main.js"></script>';

const read = (path) => readFileSync(path, 'utf8');
const sha256 = (text) => `'sha256-${createHash('sha256').update(text, 'utf8').digest('base64')}'`;

function replaceOnce(text, needle, replacement, what) {
  const at = text.indexOf(needle);
  if (at < 0 || text.indexOf(needle, at + needle.length) >= 0) {
    throw new Error(`bundle: expected exactly one ${what} (${needle}) in index.html`);
  }
  return text.slice(0, at) + replacement + text.slice(at + needle.length);
}

function assertInlineSafe(text, tag, name) {
  if (new RegExp(`</${tag}`, 'i').test(text)) throw new Error(`bundle: ${name} contains </${tag}; it cannot be inlined`);
}

// ------------------------------------------------------------ module joiner

const IMPORT = /^import \{([^}]*)\} from '\.\/([\w-]+\.js)';\s*$/;
const EXPORT = /^export (?:async function\*?|function\*?|class|const|let) ([A-Za-z_$][\w$]*)/;
const IDENT = /^[A-Za-z_$][\w$]*$/;

const varOf = (file) => `__module_${basename(file, '.js').replace(/\W/g, '_')}`;

/** One module's source split into its imports, its exports and its body. */
function parseModule(file, source) {
  const imports = [];
  const exports = [];
  const body = source.split('\n').map((line, i) => {
    const where = `web/www/js/${file}, line ${i + 1}`;
    if (/^import\b/.test(line)) {
      const m = IMPORT.exec(line);
      if (!m) throw new Error(`bundle: ${where}: only "import { a, b as c } from './x.js';" on one line is supported`);
      const names = m[1].split(',').map((s) => s.trim()).filter(Boolean).map((spec) => {
        const [name, alias = name] = spec.split(/\s+as\s+/).map((s) => s.trim());
        if (!IDENT.test(name) || !IDENT.test(alias)) throw new Error(`bundle: ${where}: cannot read the import "${spec}"`);
        return { name, alias };
      });
      imports.push({ from: m[2], names, where });
      return '';
    }
    if (/^export\b/.test(line)) {
      const m = EXPORT.exec(line);
      if (!m) throw new Error(`bundle: ${where}: only "export function|class|const|let name" is supported`);
      exports.push(m[1]);
      return line.slice('export '.length);
    }
    if (/\bimport\s*\(|\bimport\.meta\b/.test(line)) throw new Error(`bundle: ${where}: dynamic import and import.meta are not supported`);
    return line;
  });
  return { file, imports, exports, body: body.join('\n') };
}

/** Every module reachable from the entry, each after the ones it imports. */
function moduleOrder(entry) {
  const order = [];
  const state = new Map(); // file -> 'visiting' | 'done'
  const modules = new Map();
  const visit = (file, chain) => {
    if (state.get(file) === 'done') return;
    if (state.get(file) === 'visiting') throw new Error(`bundle: import cycle ${[...chain, file].join(' -> ')}; the joiner needs an acyclic graph`);
    state.set(file, 'visiting');
    const module = parseModule(file, read(join(jsDir, file)));
    modules.set(file, module);
    for (const imp of module.imports) visit(imp.from, [...chain, file]);
    state.set(file, 'done');
    order.push(module);
  };
  visit(entry, []);
  for (const module of order) {
    for (const imp of module.imports) {
      const from = modules.get(imp.from);
      for (const { name } of imp.names) {
        if (!from.exports.includes(name)) throw new Error(`bundle: ${imp.where}: ${imp.from} does not export ${name}`);
      }
    }
  }
  return order;
}

/** The modules from the entry joined into one classic script. */
function joinModules(entry) {
  const parts = moduleOrder(entry).map((m) => {
    const imports = m.imports.map((imp) => {
      const names = imp.names.map(({ name, alias }) => (name === alias ? name : `${name}: ${alias}`)).join(', ');
      return `const { ${names} } = ${varOf(imp.from)};\n`;
    }).join('');
    return `// ---- js/${m.file}\nconst ${varOf(m.file)} = (() => {\n${imports}${m.body}\nreturn { ${m.exports.join(', ')} };\n})();\n`;
  });
  return `'use strict';\n(() => {\n${parts.join('\n')}})();\n`;
}

// ------------------------------------------------------------ build

const html = read(join(www, 'index.html'));
const css = read(join(www, 'style.css'));
const worker = read(join(www, 'worker.js'));
const glue = read(join(pkg, 'nomodules', 'spanfit_web.js'));
const esm = read(join(pkg, 'web', 'spanfit_web.js'));
const wasm = readFileSync(join(pkg, 'spanfit_web_bg.wasm'));
const app = joinModules(ENTRY);

// Served version.
rmSync(dist, { recursive: true, force: true });
mkdirSync(join(dist, 'pkg'), { recursive: true });
mkdirSync(join(dist, 'js'), { recursive: true });
for (const name of ['index.html', 'worker.js', 'style.css']) copyFileSync(join(www, name), join(dist, name));
for (const name of readdirSync(jsDir).filter((n) => n.endsWith('.js'))) copyFileSync(join(jsDir, name), join(dist, 'js', name));
writeFileSync(join(dist, 'pkg', 'spanfit_web.js'), glue);
writeFileSync(join(dist, 'pkg', 'spanfit_web.mjs'), esm);
writeFileSync(join(dist, 'pkg', 'spanfit_web_bg.wasm'), wasm);

// Single file.
const workerSource = `${glue}\n${worker}`;
const boot = `window.SPANFIT_BUNDLE = { wasm: ${JSON.stringify(wasm.toString('base64'))}, worker: ${JSON.stringify(workerSource).replace(/<\//g, '<\\/')} };`;
assertInlineSafe(app, 'script', 'the joined page script');
assertInlineSafe(css, 'style', 'style.css');
const csp = [
  "default-src 'none'",
  `script-src ${sha256(boot)} ${sha256(app)} 'wasm-unsafe-eval'`,
  'worker-src blob:',
  'connect-src blob:',
  'img-src blob: data:',
  `style-src ${sha256(css)}`,
  "font-src 'none'",
  "object-src 'none'",
  "base-uri 'none'",
  "form-action 'none'",
].join('; ');

let single = html.replace(/<meta http-equiv="Content-Security-Policy" content="[^"]*">/, () => `<meta http-equiv="Content-Security-Policy" content="${csp}">`);
if (single === html) throw new Error('bundle: no Content-Security-Policy meta tag in index.html');
single = replaceOnce(single, '<link rel="stylesheet" href="style.css">', `<style>${css}</style>`, 'stylesheet link');
single = replaceOnce(single, MODULE_TAG, `<script>${boot}</script>\n<script>${app}</script>`, 'page module script tag');
writeFileSync(join(dist, 'spanfit.html'), single);

const kib = (n) => `${(n / 1024).toFixed(0)} KiB`;
console.log(`bundle: web/dist (wasm ${kib(wasm.length)}), web/dist/spanfit.html (${kib(Buffer.byteLength(single))}, ${moduleOrder(ENTRY).length} page modules joined)`);
