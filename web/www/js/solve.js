// Keeping the answer current: one search at a time in the solver worker,
// started by itself a moment after each valid edit (a newer request
// replaces the running search), by "Solve now" (or Enter in a field), and
// stopped by "Stop". While the inputs differ from those of the answer on
// show, the answer is dimmed, marked out of date, and its downloads are off.
import { $, num, setStatus } from './dom.js';
import { fmt } from './format.js';
import { engines, hooks, state, updateSolveButton } from './state.js';
import { stockJson } from './shelf.js';
import { renderGlance, setDownloads, showReport } from './results.js';
import { plainKeys } from './need-form.js';

/** Pause after the last valid edit before the search starts by itself. */
export const AUTO_PAUSE_MS = 350;

function onProgress(p) {
  if (num(p.total) && p.total > 0) {
    $('progress').max = p.total;
    $('progress').value = p.done;
  }
  const best = num(p.best) === null ? 'no design yet' : `best cost so far ${fmt(p.best)}`;
  setStatus('progress-text', `${p.done} of ${p.total} structures · ${best}`);
  $('progress-text').dataset.seen = 'yes';
}

/** The inputs as one text (need and shelf), to tell whether an answer is current. */
function inputsKey() {
  return `${JSON.stringify(state.need)}\n${stockJson()}`;
}

/** The inputs are checked by the core as they stand now. */
function inputsValid() {
  return !state.formDirty && state.needValid && state.stockValid && state.checkedNeed === JSON.stringify(state.need)
    && state.checkedStock === stockJson();
}

let queued = null;
let replacing = false;
let attemptedKey = null;
let autoTimer = null;
let firstSolve = true;

/**
 * The answer's freshness badge and the dimming of an answer whose inputs
 * have changed since; downloads of such an answer are turned off.
 */
export function refreshFreshness() {
  const badge = $('freshness');
  const result = $('result');
  const stale = !!state.result && (state.formDirty || state.result.key !== inputsKey());
  let fresh;
  let text;
  if (state.solving && !replacing) { fresh = 'solving'; text = 'solving…'; }
  else if (state.solving) { fresh = 'solving'; text = 'solving the latest edit…'; }
  else if (!state.result) { fresh = 'none'; text = 'not solved yet'; }
  else if (!stale) { fresh = 'current'; text = 'up to date'; }
  else if (!inputsValid()) { fresh = 'waiting'; text = 'out of date: waiting for valid inputs'; }
  else { fresh = 'stale'; text = 'out of date'; }
  if (state.solving && stale) text = `out of date · ${text}`;
  badge.dataset.fresh = stale ? (fresh === 'solving' ? 'stale' : fresh) : fresh;
  badge.textContent = text;
  result.dataset.stale = stale ? 'yes' : 'no';
  setDownloads(stale);
  renderGlance();
}

/**
 * After any change of the inputs or of their checks: mark the answer and,
 * when the inputs are valid and differ from the last search's, start a
 * search after a short pause (at once on the first load).
 */
export function autoSolveSoon() {
  refreshFreshness();
  clearTimeout(autoTimer);
  if (!engines.solverReady || !inputsValid()) return;
  const key = inputsKey();
  if (key === attemptedKey) return;
  autoTimer = setTimeout(() => {
    if (inputsValid() && inputsKey() !== attemptedKey) runSolve();
  }, firstSolve ? 0 : AUTO_PAUSE_MS);
}

hooks.settled = autoSolveSoon;
hooks.solveNow = () => runSolve();

/**
 * Search for a design of the current need on the current shelf. Resolves
 * with the worker's reply (null when the search failed, was ended, or was
 * replaced by a newer one). A call while a search runs replaces it.
 * `options.exhaustive`: walk every design (no time limit; Stop ends it).
 * `options.debugPauseMs` / `debugPauseOnBest`: a test hook that holds the
 * worker once, so a test can press Stop during the search.
 */
export function runSolve(options = {}) {
  clearTimeout(autoTimer);
  if (state.solving) {
    if (queued) queued.resolve(null);
    return new Promise((resolve) => {
      queued = { options, resolve };
      if (!replacing) {
        replacing = true;
        engines.solver.cancel();
      }
      refreshFreshness();
    });
  }
  return startSolve(options);
}

async function startSolve(options) {
  firstSolve = false;
  const needText = JSON.stringify(state.need);
  const stock = stockJson();
  const key = inputsKey();
  attemptedKey = key;
  state.solving = true;
  updateSolveButton();
  const { derived } = state;
  $('progress').hidden = false;
  $('progress').removeAttribute('value');
  setStatus('progress-text', 'searching…');
  $('run-status').dataset.cancelled = '';
  refreshFreshness();
  let answer = null;
  try {
    const reply = await engines.solver.solve(
      { need: needText, needName: 'need', stock, exhaustive: !!options.exhaustive, debugPauseMs: options.debugPauseMs || 0, debugPauseOnBest: !!options.debugPauseOnBest },
      onProgress,
    );
    if (!replacing) {
      state.lastSolve = { elapsedMs: reply.elapsedMs, cancelled: reply.cancelled };
      $('run-status').dataset.cancelled = reply.cancelled ? 'yes' : 'no';
      $('run-status').dataset.elapsedMs = String(reply.elapsedMs);
      const when = `solved in ${fmt(reply.elapsedMs, 3)} ms in this browser`;
      // When the inputs changed while this search ran (a project or example
      // loaded, say), the answer lands already out of date and the message
      // set since ("Project … loaded.") stays: the re-solve will report.
      if (key === inputsKey()) {
        const done = reply.cancelled ? `Stopped early: the best design found before the stop is shown (${when}).` : `Done: ${when}.`;
        const tone = reply.cancelled ? 'warn' : 'good';
        // A warning or error the page gave since (a saved shelf set aside,
        // a link it could not read) stays in front of the search's own
        // message until the next search, so a solve on load never hides it.
        const status = $('run-status');
        const notice = status.dataset.by !== 'solve' && ['warn', 'bad'].includes(status.dataset.tone) ? status.textContent : '';
        setStatus('run-status', notice ? `${notice} ${done}` : done, notice ? status.dataset.tone : tone, 'solve');
      }
      state.result = { bundle: reply.value, need: JSON.parse(needText), derived, stock, key, cancelled: !!reply.cancelled };
      showReport();
      answer = reply;
    }
  } catch (error) {
    if (replacing) {
      // replaced by a newer search: nothing to say
    } else if (error.stopped) {
      $('run-status').dataset.cancelled = 'yes';
      setStatus('run-status', error.late
        ? 'Stopped. The search did not reach a point where it could stop within a few seconds, so it was ended and the solver restarted; nothing changed.'
        : 'Stopped. A page opened from a file cannot keep a partial result; the search was ended and nothing changed.', 'warn', 'solve');
    } else if (error.fatal) {
      setStatus('run-status', `The solver stopped on an internal error (${error.message}; details on the browser console). It has been restarted; please report the need that caused it.`, 'bad', 'solve');
    } else {
      setStatus('run-status', plainKeys(error.message), 'bad', 'solve');
    }
  } finally {
    state.solving = false;
    $('progress').hidden = true;
    setStatus('progress-text', '');
    updateSolveButton();
  }
  if (queued) {
    const next = queued;
    queued = null;
    replacing = false;
    next.resolve(startSolve(next.options));
  }
  refreshFreshness();
  return answer;
}

/** Stop the running search (keeping its best design where the page can). */
export function onCancel() {
  if (queued) { queued.resolve(null); queued = null; }
  replacing = false;
  const how = engines.solver.cancel();
  if (how === 'token') setStatus('progress-text', 'stopping; keeping the best design so far…');
}
