// The page's state, shared by its parts, and the two engines (workers).
import { $ } from './dom.js';

/**
 * What the page holds. `need`: the need as the form has it (an object of
 * sections); `fields`: the need's field descriptions from the core
 * (`need_fields`); `stock`: file name -> `{header, rows}` (the shelf);
 * `result`: the last search `{bundle, need, derived, stock, cancelled}`;
 * `viewed`: the design on show `{design, artifacts, label, index}`.
 */
export const state = {
  need: {},
  fields: [],
  stock: {},
  activeTable: 'resistors.csv',
  derived: null,
  checkedNeed: null,
  checkedStock: null,
  formDirty: false,
  currency: '',
  pinned: null,
  needValid: false,
  stockValid: false,
  solving: false,
  result: null,
  viewed: null,
  lastSolve: null,
};

/** The checker (validation and small calls) and the solver (searches). */
export const engines = { checker: null, solver: null, solverReady: false, states: {} };

/**
 * Hooks set by other modules: `settled()` runs after every change of the
 * inputs' checks or of the solver's state (the answer's freshness and the
 * search that starts by itself, in solve.js); `solveNow()` starts a
 * search at once.
 */
export const hooks = { settled: null, solveNow: null };

/**
 * Enable "Solve now" when both halves are valid and the solver is ready
 * (also while a search runs: a new request replaces it), and Stop while a
 * search runs.
 */
export function updateSolveButton() {
  const ready = engines.solver && engines.solverReady;
  $('solve').disabled = !ready || !state.needValid || !state.stockValid;
  $('solve-every').disabled = $('solve').disabled;
  $('cancel').disabled = !state.solving;
  if (hooks.settled) hooks.settled();
}
