// The page's side of the worker protocol (see worker.js): starting a worker
// with the module, calls and searches, Stop, and replacing a worker when the
// module traps. The worker unwraps the core's envelopes; here a failed call
// becomes a `SpanfitError` carrying the structured error of the core.
import { base64ToBytes } from './io.js';

/** The bundle object of the single-file build, or null when served. */
export const bundle = window.SPANFIT_BUNDLE || null;

/**
 * An error from the module. `info` is the core's structured error
 * `{kind, message, detail, file, line, column, column_name, key}`;
 * `fatal` is true when the module trapped (a panic) and the worker was
 * replaced; `stopped` when a search was ended by replacing its worker.
 */
export class SpanfitError extends Error {
  constructor(info, { fatal = false, stopped = false } = {}) {
    super(info && typeof info.message === 'string' ? info.message : String(info));
    this.name = 'SpanfitError';
    this.info = info && typeof info === 'object' ? info : { kind: 'internal', message: String(info) };
    this.fatal = fatal;
    this.stopped = stopped;
  }
}

function internal(message) {
  return { kind: 'internal', message, detail: message, file: null, line: null, column: null, column_name: null, key: null };
}

let wasmBytesPromise = null;
function wasmBytes() {
  if (!wasmBytesPromise) {
    wasmBytesPromise = bundle
      ? Promise.resolve(base64ToBytes(bundle.wasm).buffer)
      : fetch('pkg/spanfit_web_bg.wasm').then((r) => {
        if (!r.ok) throw new Error(`pkg/spanfit_web_bg.wasm: HTTP ${r.status}`);
        return r.arrayBuffer();
      });
  }
  return wasmBytesPromise;
}

function newWorker() {
  if (bundle) {
    const url = URL.createObjectURL(new Blob([bundle.worker], { type: 'text/javascript' }));
    const worker = new Worker(url);
    URL.revokeObjectURL(url);
    return worker;
  }
  return new Worker('worker.js');
}

/**
 * One worker hosting the module; replaced when the module traps (a panic)
 * or when a search is stopped where the cancel token cannot reach it.
 * `onState(engine, 'ready' | 'restarting' | 'failed', detail)` reports its
 * life.
 */
export class Engine {
  constructor(name, onState) {
    this.name = name;
    this.onState = onState;
    this.nextId = 1;
    this.pending = new Map();
    this.restarts = 0;
    this.current = null;
    this.start();
  }

  start() {
    this.worker = newWorker();
    this.ready = new Promise((resolve, reject) => {
      this.readyResolve = resolve;
      this.readyReject = reject;
    });
    this.ready.catch(() => {});
    this.worker.onmessage = (event) => this.receive(event.data);
    this.worker.onerror = (event) => {
      event.preventDefault();
      this.fail(new SpanfitError(internal(`the ${this.name} worker failed: ${event.message || 'script error'}`), { fatal: true }), true);
    };
    wasmBytes().then(
      (bytes) => this.worker.postMessage({ type: 'init', wasm: bytes.slice(0) }),
      (error) => this.readyReject(error),
    );
  }

  receive(message) {
    if (message.type === 'ready') {
      this.version = message.version;
      this.readyResolve(this);
      this.onState(this, 'ready');
      return;
    }
    if (message.type === 'init-failed') {
      this.readyReject(new Error(message.message));
      this.onState(this, 'failed', message.message);
      return;
    }
    const job = this.pending.get(message.id);
    if (!job) return;
    if (message.type === 'progress') {
      job.cancellable = message.cancellable;
      if (job.onProgress) job.onProgress(message);
      return;
    }
    this.pending.delete(message.id);
    if (job.token) URL.revokeObjectURL(job.token);
    if (message.ok) {
      job.resolve(message);
    } else {
      const error = new SpanfitError(message.error || internal(message.message || 'the call failed'), { fatal: !!message.fatal });
      error.reply = message;
      job.reject(error);
      if (message.fatal) this.restart();
    }
  }

  fail(error, restart) {
    for (const job of this.pending.values()) job.reject(error);
    this.pending.clear();
    if (restart) this.restart();
  }

  restart() {
    this.worker.terminate();
    for (const job of this.pending.values()) {
      const error = new SpanfitError(internal('the solver was restarted'), { stopped: true });
      // A search that could be asked to stop but did not end in time.
      error.late = job.cancellable === true;
      job.reject(error);
    }
    this.pending.clear();
    this.restarts += 1;
    this.onState(this, 'restarting');
    if (this.restarts > 20) {
      this.onState(this, 'failed', 'the solver keeps failing; reload the page');
      return;
    }
    this.start();
  }

  /**
   * Call an export by name. Resolves with the unwrapped value (an object
   * for the exports that answer in an envelope, the plain string for
   * `demo_need`, `demo_stock`, `version` and `need_fields`); rejects with a
   * `SpanfitError`.
   */
  async call(fn, ...args) {
    await this.ready;
    const id = this.nextId++;
    return new Promise((resolve, reject) => {
      this.pending.set(id, { resolve: (m) => resolve(m.value), reject });
      this.worker.postMessage({ type: 'call', id, fn, args });
    });
  }

  /**
   * Run a search. Resolves with the worker's reply `{value: bundle,
   * elapsedMs, cancelled, cancellable}`; `onProgress` gets the progress
   * messages.
   */
  async solve(job, onProgress) {
    await this.ready;
    const id = this.nextId++;
    const token = URL.createObjectURL(new Blob(['go']));
    this.current = id;
    return new Promise((resolve, reject) => {
      this.pending.set(id, { resolve, reject, onProgress, token, cancellable: undefined });
      this.worker.postMessage({ type: 'solve', id, cancelToken: token, ...job });
    }).finally(() => { if (this.current === id) this.current = null; });
  }

  /**
   * Ask the running search to stop. Returns 'token' when the search will
   * return its best design so far, 'restart' when the worker had to go.
   */
  cancel() {
    const job = this.current && this.pending.get(this.current);
    if (!job) return null;
    URL.revokeObjectURL(job.token);
    if (job.cancellable === true) {
      const id = this.current;
      setTimeout(() => { if (this.pending.has(id)) this.restart(); }, 8000);
      return 'token';
    }
    this.restart();
    return 'restart';
  }
}
