// spanfit worker: hosts one instance of the WebAssembly module and runs
// calls for the page, so a long search never blocks the page.
//
// Protocol (page -> worker):
//   {type: 'init', wasm: ArrayBuffer}
//   {type: 'call', id, fn, args}           fn: one of ENVELOPED or PLAIN below
//   {type: 'solve', id, need, needName, stock, exhaustive, cancelToken, debugPauseMs, debugPauseOnBest}
//     (exhaustive: walk every design, solve_exhaustive; else the optimised search)
// (worker -> page):
//   {type: 'ready', version} | {type: 'init-failed', message}
//   {type: 'progress', id, done, total, best, cancellable}
//   {type: 'reply', id, ok: true, value, elapsedMs, cancelled, cancellable}
//   {type: 'reply', id, ok: false, error, message, fatal, cancelled, cancellable}
//
// The exports that read user input answer with an envelope, JSON text
// `{"ok": true, "value": V}` or `{"ok": false, "error": E}`; the worker
// unwraps it, so `value` is V itself and `error` is E, the core's error
// `{kind, message, detail, file, line, column, column_name, key}`. Bad
// input never throws: a throw is a panic or a trap, reported as an error of
// kind "internal" with `fatal` set when the module trapped (the page then
// replaces this worker). The other exports return plain strings, passed on
// as they are.
//
// Stopping a search: the page cannot post into a worker that is busy inside
// a synchronous wasm call, so before each solve it creates a blob URL (the
// cancel token) and revokes it to ask for a stop. The progress callback
// reads the token with a synchronous request; once that fails, the callback
// returns false and the core returns its best design so far. Where blob URLs
// cannot cross threads (pages opened from file://), the first read already
// fails; the worker reports `cancellable: false` and the page stops such a
// search by replacing the worker.
'use strict';

/* global wasm_bindgen, importScripts */
if (typeof wasm_bindgen === 'undefined') {
  importScripts('pkg/spanfit_web.js');
}

const ENVELOPED = new Set(['read_numbers', 'temperature_sweep', 'check_need', 'need_keys', 'check_stock', 'analyze', 'read_stock_table']);
const PLAIN = new Set(['gallery_examples', 'demo_need', 'demo_stock', 'version', 'need_fields', 'diagnostic_panic']);
const PROGRESS_EVERY_MS = 40;
// Each check is a synchronous request through the browser's IO thread; on a
// busy machine one can block the search for several ms, so the token is
// read at most every 100 ms (a Stop still lands within about a tenth of a
// second). Measured with the demo solve time test on a loaded machine:
// medians 636 and 490 ms reading every 10 ms, 364 and 293 ms every 100 ms.
const CANCEL_CHECK_EVERY_MS = 100;

let ready = false;

function tokenAlive(url) {
  try {
    const request = new XMLHttpRequest();
    request.open('GET', url, false);
    request.send();
    return request.status === 200 || request.status === 0;
  } catch (_) {
    return false;
  }
}

function internalError(message) {
  return { kind: 'internal', message, detail: message, file: null, line: null, column: null, column_name: null, key: null };
}

// A throw from the module: a panic (a trap, fatal) or a bug in the glue.
function errorReply(id, error) {
  const fatal = error instanceof WebAssembly.RuntimeError;
  const message = error && error.message ? error.message : String(error);
  return { type: 'reply', id, ok: false, error: internalError(message), message, fatal };
}

// The reply for an envelope's text.
function unwrap(id, text) {
  let envelope = null;
  try { envelope = JSON.parse(text); } catch (_) { /* reported below */ }
  if (envelope && envelope.ok === true && 'value' in envelope) return { type: 'reply', id, ok: true, value: envelope.value };
  if (envelope && envelope.ok === false && envelope.error && typeof envelope.error.message === 'string') {
    return { type: 'reply', id, ok: false, error: envelope.error, message: envelope.error.message, fatal: false };
  }
  const message = `internal error: the module answered without an envelope (${String(text).slice(0, 80)})`;
  return { type: 'reply', id, ok: false, error: internalError(message), message, fatal: false };
}

function runSolve(job) {
  const cancellable = typeof job.cancelToken === 'string' && tokenAlive(job.cancelToken);
  let lastPost = -Infinity;
  let lastBest = null;
  let lastCheck = performance.now();
  let reports = 0;
  let paused = false;
  let cancelled = false;
  const progress = (done, total, best) => {
    const now = performance.now();
    reports += 1;
    if (now - lastPost >= PROGRESS_EVERY_MS || done >= total || reports === 1 || best !== lastBest) {
      lastPost = now;
      lastBest = best;
      postMessage({ type: 'progress', id: job.id, done, total, best, cancellable });
    }
    // Test hook: hold once (at the first report, or the first with a design)
    // so that a test can press Stop while the search is running.
    if (!paused && job.debugPauseMs > 0 && (!job.debugPauseOnBest || best !== null)) {
      paused = true;
      const until = performance.now() + job.debugPauseMs;
      while (performance.now() < until) { /* hold, so a test can press Stop */ }
      lastCheck = -Infinity;
    }
    if (cancellable && performance.now() - lastCheck >= CANCEL_CHECK_EVERY_MS) {
      lastCheck = performance.now();
      if (!tokenAlive(job.cancelToken)) cancelled = true;
    }
    return !cancelled;
  };
  const start = performance.now();
  try {
    const solve = job.exhaustive === true ? wasm_bindgen.solve_exhaustive : wasm_bindgen.solve;
    const text = solve(job.need, job.needName, job.stock, progress);
    const elapsedMs = performance.now() - start;
    postMessage({ ...unwrap(job.id, text), elapsedMs, cancelled, cancellable });
  } catch (error) {
    const reply = errorReply(job.id, error);
    reply.cancelled = cancelled;
    reply.cancellable = cancellable;
    postMessage(reply);
  }
}

self.onmessage = (event) => {
  const message = event.data || {};
  if (message.type === 'init') {
    try {
      wasm_bindgen.initSync({ module: message.wasm });
      ready = true;
      postMessage({ type: 'ready', version: wasm_bindgen.version() });
    } catch (error) {
      postMessage({ type: 'init-failed', message: String(error && error.message || error) });
    }
    return;
  }
  if (!ready) {
    const text = 'the solver is not loaded yet';
    postMessage({ type: 'reply', id: message.id, ok: false, error: internalError(text), message: text, fatal: false });
    return;
  }
  if (message.type === 'solve') {
    runSolve(message);
    return;
  }
  if (message.type === 'call' && (ENVELOPED.has(message.fn) || PLAIN.has(message.fn))) {
    try {
      const value = wasm_bindgen[message.fn](...(message.args || []));
      postMessage(ENVELOPED.has(message.fn) ? unwrap(message.id, value) : { type: 'reply', id: message.id, ok: true, value });
    } catch (error) {
      postMessage(errorReply(message.id, error));
    }
    return;
  }
  const text = `unknown request ${String(message.type)} ${String(message.fn || '')}`.trim();
  postMessage({ type: 'reply', id: message.id, ok: false, error: internalError(text), message: text, fatal: false });
};
