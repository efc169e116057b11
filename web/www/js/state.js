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
  needValid: false,
  stockValid: false,
  solving: false,
  result: null,
  viewed: null,
  lastSolve: null,
};

/** The checker (validation and small calls) and the solver (searches). */
export const engines = { checker: null, solver: null, solverReady: false, states: {} };

/** Enable "Design it" when both halves are valid and the solver is ready. */
export function updateSolveButton() {
  const ready = engines.solver && engines.solverReady;
  $('solve').disabled = !ready || state.solving || !state.needValid || !state.stockValid;
  $('cancel').disabled = !state.solving;
}
