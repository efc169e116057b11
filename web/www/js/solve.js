// "Design it" and "Stop": one search in the solver worker, its progress,
// and its outcome on the run status.
import { $, num, setStatus } from './dom.js';
import { fmt } from './format.js';
import { engines, state, updateSolveButton } from './state.js';
import { stockJson } from './shelf.js';
import { showReport } from './results.js';

function onProgress(p) {
  if (num(p.total) && p.total > 0) {
    $('progress').max = p.total;
    $('progress').value = p.done;
  }
  const best = num(p.best) === null ? 'no design yet' : `best cost so far ${fmt(p.best)}`;
  setStatus('progress-text', `${p.done} of ${p.total} structures · ${best}`);
  $('progress-text').dataset.seen = 'yes';
}

/**
 * Search for a design of the current need on the current shelf. Resolves
 * with the worker's reply (null when the search failed or was ended).
 * `options.debugPauseMs` / `debugPauseOnBest`: a test hook that holds the
 * worker once, so a test can press Stop during the search.
 */
export async function runSolve(options = {}) {
  if (state.solving) return null;
  state.solving = true;
  updateSolveButton();
  const needText = JSON.stringify(state.need);
  const stock = stockJson();
  const { derived } = state;
  $('progress').hidden = false;
  $('progress').removeAttribute('value');
  setStatus('progress-text', 'searching…');
  setStatus('run-status', '');
  $('run-status').dataset.cancelled = '';
  try {
    const reply = await engines.solver.solve(
      { need: needText, needName: 'need', stock, debugPauseMs: options.debugPauseMs || 0, debugPauseOnBest: !!options.debugPauseOnBest },
      onProgress,
    );
    state.lastSolve = { elapsedMs: reply.elapsedMs, cancelled: reply.cancelled };
    $('run-status').dataset.cancelled = reply.cancelled ? 'yes' : 'no';
    $('run-status').dataset.elapsedMs = String(reply.elapsedMs);
    const when = `solved in ${fmt(reply.elapsedMs, 3)} ms in this browser`;
    setStatus('run-status', reply.cancelled ? `Stopped early: the best design found before the stop is shown (${when}).` : `Done: ${when}.`, reply.cancelled ? 'warn' : 'good');
    state.result = { bundle: reply.value, need: JSON.parse(needText), derived, stock, cancelled: !!reply.cancelled };
    showReport();
    return reply;
  } catch (error) {
    if (error.stopped) {
      $('run-status').dataset.cancelled = 'yes';
      setStatus('run-status', 'Stopped. A page opened from a file cannot keep a partial result; the search was ended and nothing changed.', 'warn');
    } else if (error.fatal) {
      setStatus('run-status', `The solver stopped on an internal error (${error.message}; details on the browser console). It has been restarted; please report the need that caused it.`, 'bad');
    } else {
      setStatus('run-status', error.message, 'bad');
    }
    return null;
  } finally {
    state.solving = false;
    $('progress').hidden = true;
    setStatus('progress-text', '');
    updateSolveButton();
  }
}

/** Stop the running search (keeping its best design where the page can). */
export function onCancel() {
  const how = engines.solver.cancel();
  if (how === 'token') setStatus('progress-text', 'stopping; keeping the best design so far…');
}
