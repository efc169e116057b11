// Shared helpers for the page tests: a static server for web/dist on
// 127.0.0.1 at a free port, headless Chromium through playwright-core with
// a fresh profile, console-error capture, screenshots, and the CLI's
// reference answer for the demo.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, statSync } from 'node:fs';
import http from 'node:http';
import { tmpdir } from 'node:os';
import { dirname, extname, join, normalize, resolve, sep } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { chromium } from 'playwright-core';

export const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');
export const DIST = join(ROOT, 'web', 'dist');
export const ARTIFACTS = join(ROOT, 'tests', 'artifacts');
export const SINGLE_FILE_URL = pathToFileURL(join(DIST, 'spanfit.html')).href;

const CHROMIUM = process.env.CHROMIUM || '/usr/bin/chromium';
const CHROMIUM_ARGS = [
  '--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run',
  '--disable-background-networking', '--disable-component-update', '--disable-sync',
  '--disable-dev-shm-usage',
];

const MIME = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.wasm': 'application/wasm',
  '.json': 'application/json',
  '.svg': 'image/svg+xml',
};

export function assertBuilt() {
  for (const name of ['index.html', 'js/main.js', 'worker.js', 'style.css', 'spanfit.html', 'pkg/spanfit_web_bg.wasm']) {
    if (!existsSync(join(DIST, name))) {
      throw new Error(`web/dist/${name} is missing: run scripts/build-web.sh first`);
    }
  }
}

// Serve web/dist on 127.0.0.1 at a free port. Records every request path.
export async function serveDist() {
  assertBuilt();
  const requests = [];
  const server = http.createServer((req, res) => {
    const url = new URL(req.url, 'http://127.0.0.1');
    requests.push(url.pathname);
    let path = decodeURIComponent(url.pathname);
    if (path.endsWith('/')) path += 'index.html';
    const file = normalize(join(DIST, path));
    if (!file.startsWith(DIST + sep) || !existsSync(file) || !statSync(file).isFile()) {
      res.writeHead(404, { 'content-type': 'text/plain' });
      res.end('not found');
      return;
    }
    res.writeHead(200, { 'content-type': MIME[extname(file)] || 'application/octet-stream', 'cache-control': 'no-store' });
    res.end(readFileSync(file));
  });
  await new Promise((ok) => server.listen(0, '127.0.0.1', ok));
  const { port } = server.address();
  return {
    url: `http://127.0.0.1:${port}/`,
    requests,
    close: () => new Promise((ok) => server.close(ok)),
  };
}

// A fresh Chromium profile per call.
export async function launch() {
  const profile = mkdtempSync(join(tmpdir(), 'spanfit-chromium-'));
  const context = await chromium.launchPersistentContext(profile, {
    executablePath: CHROMIUM,
    headless: true,
    args: CHROMIUM_ARGS,
    viewport: { width: 1440, height: 1000 },
    acceptDownloads: true,
  });
  // Safety net: nothing leaves this machine's loopback, whatever a page does.
  await context.route(/^https?:\/\/(?!127\.)/, (route) => route.abort('blockedbyclient'));
  return {
    context,
    close: async () => {
      await context.close();
      rmSync(profile, { recursive: true, force: true });
    },
  };
}

// Open a page and collect console errors, page errors and every request
// that leaves the machine's own pages (anything but 127.0.0.1, file:,
// blob: and data:).
export async function openPage(context, url) {
  const page = await context.newPage();
  const problems = { consoleErrors: [], pageErrors: [], remote: [] };
  page.on('console', (m) => { if (m.type() === 'error') problems.consoleErrors.push(m.text()); });
  page.on('pageerror', (e) => problems.pageErrors.push(String(e)));
  page.on('request', (r) => {
    const u = r.url();
    if (!/^(http:\/\/127\.0\.0\.1[:/]|file:|blob:|data:)/.test(u)) problems.remote.push(u);
  });
  await page.goto(url);
  await page.waitForFunction(() => document.body.dataset.ready === 'yes'
    && document.querySelector('[data-testid=engine-state]').dataset.state === 'ready', null, { timeout: 60000 });
  return { page, problems };
}

export async function shot(page, name) {
  mkdirSync(ARTIFACTS, { recursive: true });
  const path = join(ARTIFACTS, `${name}.png`);
  await page.screenshot({ path, fullPage: true });
  return path;
}

// The CLI's answer for the demo need: the JSON report (docs/report.md).
let cliDemo = null;
export function cliDemoJson() {
  if (cliDemo) return cliDemo;
  const bin = join(ROOT, 'target', 'release', 'spanfit');
  const run = existsSync(bin)
    ? spawnSync(bin, ['demo', '--json'], { cwd: ROOT, encoding: 'utf8' })
    : spawnSync('cargo', ['run', '-q', '--release', '-p', 'spanfit-cli', '--', 'demo', '--json'], { cwd: ROOT, encoding: 'utf8' });
  if (run.status !== 0) {
    throw new Error(`spanfit demo --json exited ${run.status}: ${run.stderr || run.stdout}`);
  }
  try {
    cliDemo = JSON.parse(run.stdout);
  } catch (error) {
    throw new Error(`spanfit demo --json did not print JSON (${error.message}); output: ${run.stdout.slice(0, 200)}`);
  }
  return cliDemo;
}

// The CLI's files for the page's demo: `spanfit demo`, the same need and
// the same embedded demo stock the page solves: {json, spice, bom, svg}.
// (`spanfit solve examples/demo-need.toml` reads the stock folder, which
// also holds the invented matched networks, so its design may differ.)
let cliFiles = null;
export function cliDemoFiles() {
  if (cliFiles) return cliFiles;
  cliDemoJson();
  const dir = mkdtempSync(join(tmpdir(), 'spanfit-cli-'));
  const out = (name) => join(dir, name);
  const bin = join(ROOT, 'target', 'release', 'spanfit');
  const args = ['demo', '--json', '--spice', out('demo.cir'), '--bom', out('bom.csv'), '--svg', out('demo.svg')];
  const run = existsSync(bin)
    ? spawnSync(bin, args, { cwd: ROOT, encoding: 'utf8' })
    : spawnSync('cargo', ['run', '-q', '--release', '-p', 'spanfit-cli', '--', ...args], { cwd: ROOT, encoding: 'utf8' });
  if (run.status !== 0) throw new Error(`spanfit solve exited ${run.status}: ${run.stderr || run.stdout}`);
  cliFiles = {
    json: JSON.parse(run.stdout),
    spice: readFileSync(out('demo.cir'), 'utf8'),
    bom: readFileSync(out('bom.csv'), 'utf8'),
    svg: readFileSync(out('demo.svg'), 'utf8'),
  };
  rmSync(dir, { recursive: true, force: true });
  return cliFiles;
}

export async function downloadText(page, selector) {
  const [download] = await Promise.all([page.waitForEvent('download'), page.click(selector)]);
  const chunks = await (await download.createReadStream()).toArray();
  return { name: download.suggestedFilename(), text: Buffer.concat(chunks).toString('utf8') };
}

// The page's own number formatting (web/www/js/format.js `fmt`), for
// comparing shown text.
export function fmt(value, digits = 4) {
  if (typeof value !== 'number' || !Number.isFinite(value)) return '—';
  if (value === 0) return '0';
  return String(Number(value.toPrecision(digits)));
}

export async function solveAndWait(page, timeout = 120000) {
  await page.click('[data-testid=solve]');
  await page.waitForFunction(() => !window.spanfitPage.state.solving && document.querySelector('[data-testid=run-status]').textContent !== '', null, { timeout });
}

// A solve whose search the test needs to run to its own end: on a busy
// machine the wasm search can reach its time limit (the demo's is 2 s)
// before it has walked its structures, and then its answer is not the
// CLI's. Such a cut run is solved again, up to `tries` times; the last
// reply stays on the page whatever it is.
export async function solveUncut(page, tries = 5) {
  for (let i = 0; i < tries; i += 1) {
    await solveAndWait(page);
    const cut = await page.evaluate(() => {
      const r = window.spanfitPage.state.result;
      if (!r || r.cancelled) return true;
      const search = r.bundle && r.bundle.report && r.bundle.report.search;
      return !search || search.elapsed_ms >= 0.9 * r.need.search.time_limit_ms;
    });
    if (!cut) return;
  }
}

export function unexpected(problems, allow = []) {
  const keep = (list) => list.filter((m) => !allow.some((re) => re.test(m)));
  return { consoleErrors: keep(problems.consoleErrors), pageErrors: keep(problems.pageErrors), remote: problems.remote };
}
