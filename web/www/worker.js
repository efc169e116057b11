// spanfit worker: hosts one instance of the WebAssembly module and runs
// calls for the page, so a long search never blocks the page.
//
// Protocol (page -> worker):
//   {type: 'init', wasm: ArrayBuffer}
//   {type: 'call', id, fn, args}           fn: check_need | need_keys | check_stock |
//                                           analyze | demo_need | demo_stock | version |
//                                           diagnostic_panic
//   {type: 'solve', id, need, needName, stock, cancelToken, debugPauseMs, debugPauseOnBest}
// (worker -> page):
//   {type: 'ready', version} | {type: 'init-failed', message}
//   {type: 'progress', id, done, total, best, cancellable}
//   {type: 'reply', id, ok, value | message, fatal, elapsedMs, cancelled, cancellable}
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

const CALLS = new Set([
  'check_need', 'need_keys', 'check_stock', 'analyze', 'demo_need', 'demo_stock',
  'version', 'diagnostic_panic',
]);
const PROGRESS_EVERY_MS = 40;
const CANCEL_CHECK_EVERY_MS = 10;

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

function errorReply(id, error) {
  const fatal = error instanceof WebAssembly.RuntimeError;
  const message = error && error.message ? error.message : String(error);
  return { type: 'reply', id, ok: false, message, fatal };
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
    const value = wasm_bindgen.solve(job.need, job.needName, job.stock, progress);
    const elapsedMs = performance.now() - start;
    postMessage({ type: 'reply', id: job.id, ok: true, value, elapsedMs, cancelled, cancellable });
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
    postMessage({ type: 'reply', id: message.id, ok: false, message: 'the solver is not loaded yet', fatal: false });
    return;
  }
  if (message.type === 'solve') {
    runSolve(message);
    return;
  }
  if (message.type === 'call' && CALLS.has(message.fn)) {
    try {
      const value = wasm_bindgen[message.fn](...(message.args || []));
      postMessage({ type: 'reply', id: message.id, ok: true, value });
    } catch (error) {
      postMessage(errorReply(message.id, error));
    }
    return;
  }
  postMessage({ type: 'reply', id: message.id, ok: false, message: 'unknown request', fatal: false });
};
