// Assemble the page from web/www and the wasm-bindgen output in web/pkg:
//   web/dist/            the served page (index.html, app.js, worker.js,
//                        style.css, pkg/spanfit_web.js + _bg.wasm, and the
//                        ES-module glue pkg/spanfit_web.mjs for reuse)
//   web/dist/spanfit.html one file that also works from file://: the style
//                        and scripts inline, the wasm as base64, the worker
//                        made from a Blob URL and started with initSync.
// The single file's Content-Security-Policy allows its own inline blocks by
// hash, wasm compilation, and blob: workers; nothing remote.
//
// Usage: node web/bundle.mjs   (run by scripts/build-web.sh)
import { createHash } from 'node:crypto';
import { copyFileSync, mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const web = dirname(fileURLToPath(import.meta.url));
const www = join(web, 'www');
const pkg = join(web, 'pkg');
const dist = join(web, 'dist');

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

const html = read(join(www, 'index.html'));
const css = read(join(www, 'style.css'));
const app = read(join(www, 'app.js'));
const worker = read(join(www, 'worker.js'));
const glue = read(join(pkg, 'nomodules', 'spanfit_web.js'));
const esm = read(join(pkg, 'web', 'spanfit_web.js'));
const wasm = readFileSync(join(pkg, 'spanfit_web_bg.wasm'));

// Served version.
rmSync(dist, { recursive: true, force: true });
mkdirSync(join(dist, 'pkg'), { recursive: true });
for (const name of ['index.html', 'app.js', 'worker.js', 'style.css']) copyFileSync(join(www, name), join(dist, name));
writeFileSync(join(dist, 'pkg', 'spanfit_web.js'), glue);
writeFileSync(join(dist, 'pkg', 'spanfit_web.mjs'), esm);
writeFileSync(join(dist, 'pkg', 'spanfit_web_bg.wasm'), wasm);

// Single file.
const workerSource = `${glue}\n${worker}`;
const boot = `window.SPANFIT_BUNDLE = { wasm: ${JSON.stringify(wasm.toString('base64'))}, worker: ${JSON.stringify(workerSource).replace(/<\//g, '<\\/')} };`;
assertInlineSafe(app, 'script', 'app.js');
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
single = replaceOnce(single, '<script src="app.js"></script>', `<script>${boot}</script>\n<script>${app}</script>`, 'app.js script tag');
writeFileSync(join(dist, 'spanfit.html'), single);

const kib = (n) => `${(n / 1024).toFixed(0)} KiB`;
console.log(`bundle: web/dist (wasm ${kib(wasm.length)}), web/dist/spanfit.html (${kib(Buffer.byteLength(single))})`);
