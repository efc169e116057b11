// The result panel: the banner, what would make an infeasible need
// possible (the binding limit, the verified suggestions, each one click to
// apply, and the best attempt shown as a design), the warnings, the
// figures, the schematic, the charts, the parts, the bill of materials (the
// core's `bom_table`), the checks; and the alternatives of the front, each
// analysed by the core when picked.
import { $, clear, el, isObject, num, setStatus } from './dom.js';
import { eng, fmt } from './format.js';
import { engines, hooks, state } from './state.js';
import { alternativeDesign, errorOf, money, renderBode, renderBudget, renderBudgetNotes, renderHistogram, renderPareto, renderSweep } from './charts.js';
import { applyNeedChanges, fieldFor, plainKeys } from './need-form.js';
import { applyStockChanges } from './shelf.js';

/** `state.viewed.index` of the best attempt of an infeasible need. */
const ATTEMPT = -2;

function reportOf(bundle) {
  return isObject(bundle.report) ? bundle.report : {};
}

/** The best attempt of an infeasible need (a design object), or null. */
function bestAttempt(report) {
  if (report.status === 'ok' || state.result.cancelled || !isObject(report.infeasible)) return null;
  return isObject(report.infeasible.best_attempt) ? report.infeasible.best_attempt : null;
}

/** Show a new search result (state.result), its chosen design first. */
export function showReport() {
  const report = reportOf(state.result.bundle);
  const attempt = isObject(report.design) ? null : bestAttempt(report);
  state.viewed = attempt
    ? { design: attempt, artifacts: {}, label: 'the best attempt, which misses the target', index: ATTEMPT }
    : { design: report.design, artifacts: state.result.bundle.artifacts || {}, label: 'the chosen design', index: -1 };
  $('result').hidden = false;
  const banner = $('result-banner');
  if (report.status === 'ok') {
    banner.textContent = state.result.cancelled ? 'A design meets the need (the best found before the stop).' : 'A design meets the need.';
    banner.dataset.tone = 'good';
  } else if (state.result.cancelled) {
    banner.textContent = 'Stopped before any design was found. Run it again and let the search go on longer.';
    banner.dataset.tone = 'warn';
  } else if (report.status === 'unfinished') {
    const why = typeof report.reason === 'string' ? pageReason(report.reason).trim() : '';
    banner.textContent = why
      ? `Not finished. ${why.charAt(0).toUpperCase()}${why.slice(1)}.`
      : 'Not finished: no design found yet, and none shown impossible.';
    banner.dataset.tone = 'warn';
  } else {
    const why = typeof report.reason === 'string' ? report.reason
      : (isObject(report.infeasible) && typeof report.infeasible.binding === 'string' ? report.infeasible.binding : '');
    banner.textContent = `No design meets the need${why ? `. ${plainKeys(why)}` : '.'}`;
    banner.dataset.tone = 'bad';
  }
  if (report.status === 'unfinished') banner.textContent = plainKeys(banner.textContent);
  banner.dataset.status = String(report.status);
  // What the page offers where the command line would take --exhaustive:
  // a search of every design (shown while nothing is found and nothing
  // proven, unless that search itself ran to its end).
  const walkedAll = isObject(report.search) && report.search.mode === 'exhaustive' && !state.result.cancelled;
  $('every-offer').hidden = report.status !== 'unfinished' || walkedAll;
  renderInfeasible(report);
  renderViewed();
  if (attempt) analyseViewed(attempt, ATTEMPT);
}

/**
 * The core's reason for an unfinished search in the page's words: its
 * advice for the command line (`solve with --exhaustive ...`) is left out,
 * as the page offers "Search every design" beside the banner instead.
 */
export function pageReason(reason) {
  return reason.replace(/;?\s*solve with --exhaustive to search every design/, '');
}

/** The figures of a design that the comparison shows, from the core's report. */
function summaryOf(design, label) {
  const e = errorOf(design);
  const parts = isObject(design) && Array.isArray(design.parts) ? design.parts : [];
  return {
    label,
    need: JSON.stringify(state.result.need),
    rows: [
      ['Cost', money(design.cost)],
      ['Worst-case error', `${fmt(e.worst, 3)} % FS`],
      ['RSS error', `${fmt(e.rss, 3)} % FS`],
      ['Topology', String(design.topology ?? '—')],
      ['Parts', parts.filter(isObject).map((p) => `${p.ref} ${partValueText(p)}`).join(', ')],
    ],
  };
}

/** Pin the design on show, to compare later designs against it. */
export function pinViewed() {
  if (!state.viewed || !isObject(state.viewed.design)) return;
  state.pinned = summaryOf(state.viewed.design, state.viewed.label);
  renderCompare();
}

/** The pinned design beside the one on show (or nothing when none is pinned). */
export function renderCompare() {
  const box = $('compare');
  const pinned = state.pinned;
  box.hidden = !pinned;
  if (!pinned) return;
  const node = $('compare-table');
  clear(node);
  const now = state.viewed && isObject(state.viewed.design) ? summaryOf(state.viewed.design, state.viewed.label) : null;
  const sameNeed = now && now.need === pinned.need;
  node.append(el('thead', {}, el('tr', {},
    el('th', { scope: 'col', text: 'Figure' }),
    el('th', { scope: 'col', text: `Pinned (${pinned.label})` }),
    el('th', { scope: 'col', text: now ? `On show (${now.label}${sameNeed ? '' : ', another need'})` : 'On show' }))));
  const body = el('tbody');
  pinned.rows.forEach(([name, value], i) => {
    body.append(el('tr', {}, el('th', { scope: 'row', text: name }), el('td', { text: value }), el('td', { text: now ? now.rows[i][1] : '—' })));
  });
  node.append(body);
}

/** Redraw everything about the design on show (state.viewed). */
export function renderViewed() {
  const report = reportOf(state.result.bundle);
  const { design, artifacts, label } = state.viewed;
  const need = state.result.need;
  $('viewing').textContent = design ? `Showing ${label}.` : '';
  $('viewing').dataset.attempt = state.viewed.index === ATTEMPT ? 'yes' : 'no';
  $('design-details').hidden = !isObject(design);
  renderWarnings(design);
  renderFigures(design, report);
  renderSchematic(artifacts.svg);
  renderBudget(design, need);
  renderBudgetNotes(design);
  renderPareto(report, need, state.viewed.index, viewAlternative);
  $('pareto-box').hidden = state.viewed.index === ATTEMPT;
  renderHistogram(design, need);
  renderBode(design, need);
  if (state.viewed.sweep) renderSweep(state.viewed.sweep);
  else loadSweep(design);
  renderParts(design);
  renderPrintNeed(need);
  renderBom(artifacts.bom_table);
  renderFindings(design);
  const extra = { stages: design && design.stages, transfer: design && design.transfer, search: report.search };
  $('raw-extra').textContent = JSON.stringify(extra, null, 2);
  setDownloads($('result').dataset.stale === 'yes');
  $('pin').disabled = !isObject(design);
  renderCompare();
}

/**
 * Turn the downloads on for what the design on show has, or all off when
 * the answer is out of date (its design no longer fits the inputs).
 */
export function setDownloads(stale) {
  const viewed = state.viewed || { artifacts: {} };
  const artifacts = viewed.artifacts || {};
  const off = (yes) => stale || !yes;
  $('dl-bom').disabled = off(typeof artifacts.bom_csv === 'string');
  $('dl-spice').disabled = off(typeof artifacts.spice === 'string');
  $('dl-svg').disabled = off(typeof artifacts.svg === 'string');
  $('dl-design').disabled = off(isObject(viewed.design) && isObject(viewed.design.file));
  $('dl-json').disabled = off(!!state.result);
  const why = stale ? 'The answer is out of date; these downloads return when it is current.' : '';
  for (const id of ['dl-bom', 'dl-spice', 'dl-svg', 'dl-design', 'dl-json']) $(id).title = why;
}

/**
 * A total as the core gave it: % FS, LSB and the sensor's unit
 * (`<name>_pct_fs`, `<name>_lsb`, `<name>_units` of `design.error`).
 */
function inUnits(err, name) {
  const pct = num(err[`${name}_pct_fs`]);
  const out = { pct: `${fmt(pct, 3)} % FS` };
  if (pct === null) return out;
  const lsb = num(err[`${name}_lsb`]);
  if (lsb !== null) out.lsb = `${fmt(lsb, 3)} LSB`;
  const unit = state.result.need.sensor && state.result.need.sensor.quantity_unit;
  const units = num(err[`${name}_units`]);
  if (units !== null && unit) out.unit = `${fmt(units, 3)} ${unit}`;
  return out;
}

function figure(list, key, label, text, raw, extra) {
  const dd = el('dd', { 'data-figure': key, 'data-raw': raw === undefined ? undefined : String(raw) });
  dd.append(el('span', { className: 'main', text }));
  if (extra) dd.append(el('span', { className: 'aside', text: extra }));
  list.append(el('div', { className: 'figure' }, el('dt', { text: label }), dd));
}

// One figure after another from the report's numbers; long only because
// there are many figures, each a line.
function renderFigures(design, report) {
  const list = $('figures');
  clear(list);
  if (!isObject(design)) return;
  const e = errorOf(design);
  const target = state.result.need.accuracy || {};
  figure(list, 'cost', 'Cost', money(design.cost), design.cost, `${design.part_count ?? '—'} parts · ${design.bom_lines ?? '—'} BOM lines`);
  const err = isObject(design.error) ? design.error : {};
  const worst = inUnits(err, 'worst_case');
  figure(list, 'worst', 'Worst-case error', worst.pct, e.worst, [worst.lsb, worst.unit].filter(Boolean).join(' · '));
  const rss = inUnits(err, 'rss');
  figure(list, 'rss', 'RSS error', rss.pct, e.rss, [rss.lsb, rss.unit].filter(Boolean).join(' · '));
  if (num(err.corner_check_pct_fs) !== null) {
    figure(list, 'corner', 'Corner check', `${fmt(err.corner_check_pct_fs, 3)} % FS`, err.corner_check_pct_fs, 'every part at a limit, both span ends');
  }
  if (e.yieldPct !== null) {
    const ci = Array.isArray(err.yield_confidence_pct) ? ` (${err.yield_confidence_pct.map((v) => fmt(v, 4)).join(' to ')} %)` : '';
    figure(list, 'yield', 'Monte Carlo yield', `${fmt(e.yieldPct, 4)} %`, e.yieldPct, `${err.yield_builds ?? '—'} builds${ci}`);
  }
  if (num(err.quantisation_lsb) !== null) {
    figure(list, 'quantisation', 'ADC quantisation', `±${fmt(err.quantisation_lsb, 3)} LSB`, err.quantisation_pct_fs, `${fmt(err.quantisation_pct_fs, 3)} % FS, reported apart`);
  }
  const verdict = err.meets_target === true ? 'met' : (err.meets_target === false ? 'missed' : '');
  figure(list, 'target', 'Target', `${fmt(target.max_error_pct_fs, 3)} % FS`, target.max_error_pct_fs,
    `${verdict ? `${verdict} · ` : ''}${target.basis || ''} basis, calibration ${target.calibration || '—'}`);
  const t = isObject(design.transfer) ? design.transfer : {};
  figure(list, 'gain', 'Gain', fmt(t.gain, 6), t.gain, `ideal ${fmt(t.ideal_gain, 6)}`);
  figure(list, 'offset', 'Offset', eng(t.offset_v, 'V', 5), t.offset_v, `ideal ${eng(t.ideal_offset_v, 'V', 5)}`);
  const stages = Array.isArray(design.stages) ? design.stages.length : '—';
  figure(list, 'topology', 'Topology', String(design.topology ?? '—'), design.topology, `${stages} stage${stages === 1 ? '' : 's'}`);
  const s = isObject(report.search) ? report.search : {};
  const last = state.lastSolve || {};
  figure(list, 'search', 'Search', s.proven_optimal ? 'proven optimum' : 'best found', s.proven_optimal,
    `${s.evaluated ?? '—'} evaluated · core ${fmt(s.elapsed_ms, 3)} ms · page ${fmt(last.elapsedMs, 3)} ms`);
}

let schematicUrl = null;
let schematicSize = { w: 0, h: 0 };

/**
 * The schematic's zoom: 1 draws it at the size the core wrote it. Its
 * smallest text is 10 px there, so the page opens it at 1.1 (11 px).
 */
export const ZOOM = { initial: 1.1, min: 0.3, max: 4, step: 1.25 };
let zoom = ZOOM.initial;

function sizeOf(svgText) {
  const w = /<svg[^>]*\swidth="([\d.]+)"/.exec(svgText);
  const h = /<svg[^>]*\sheight="([\d.]+)"/.exec(svgText);
  return { w: w ? Number(w[1]) : 800, h: h ? Number(h[1]) : 400 };
}

function applyZoom() {
  const img = $('schematic').querySelector('img');
  if (!img) return;
  img.style.width = `${Math.round(schematicSize.w * zoom)}px`;
  img.style.height = `${Math.round(schematicSize.h * zoom)}px`;
  img.dataset.zoom = String(zoom);
  $('zoom-fit').setAttribute('aria-pressed', 'false');
}

/**
 * Zoom the schematic by `factor`, keeping the point `at` of the box (in
 * box pixels; the middle of the view when not given) in place, or fit it.
 */
export function zoomSchematic(factor, at) {
  const box = $('schematic');
  if (factor === 'fit') {
    zoom = Math.max(ZOOM.min, Math.min(ZOOM.max, (box.clientWidth - 4) / schematicSize.w));
    applyZoom();
    return;
  }
  const ax = at ? at.x : box.clientWidth / 2;
  const ay = at ? at.y : box.clientHeight / 2;
  const cx = (box.scrollLeft + ax) / zoom;
  const cy = (box.scrollTop + ay) / zoom;
  zoom = Math.max(ZOOM.min, Math.min(ZOOM.max, zoom * factor));
  applyZoom();
  box.scrollLeft = cx * zoom - ax;
  box.scrollTop = cy * zoom - ay;
}

/**
 * Touch on the schematic: two fingers pinch to zoom about their midpoint
 * (one finger scrolls the box, as the browser does by itself).
 */
function wirePinch(box) {
  const touches = new Map();
  let pinch = null;
  const spread = () => {
    const [a, b] = [...touches.values()];
    const r = box.getBoundingClientRect();
    return { d: Math.hypot(a.x - b.x, a.y - b.y), mid: { x: (a.x + b.x) / 2 - r.left, y: (a.y + b.y) / 2 - r.top } };
  };
  box.addEventListener('pointerdown', (e) => {
    if (e.pointerType !== 'touch') return;
    touches.set(e.pointerId, { x: e.clientX, y: e.clientY });
    if (touches.size === 2) {
      const s = spread();
      pinch = { d: Math.max(s.d, 1) };
      box.dataset.pinching = 'yes';
    }
  });
  box.addEventListener('pointermove', (e) => {
    if (e.pointerType !== 'touch' || !touches.has(e.pointerId)) return;
    touches.set(e.pointerId, { x: e.clientX, y: e.clientY });
    if (!pinch || touches.size !== 2) return;
    e.preventDefault();
    const s = spread();
    const factor = Math.max(s.d, 1) / pinch.d;
    if (Math.abs(factor - 1) < 0.01) return;
    zoomSchematic(factor, s.mid);
    pinch.d = Math.max(s.d, 1);
  });
  const lift = (e) => {
    if (e.pointerType !== 'touch') return;
    touches.delete(e.pointerId);
    if (touches.size < 2) { pinch = null; delete box.dataset.pinching; }
  };
  box.addEventListener('pointerup', lift);
  box.addEventListener('pointercancel', lift);
  // Two fingers: keep the browser from taking the gesture as a scroll (which
  // would cancel the pointers); one finger still scrolls natively.
  box.addEventListener('touchmove', (e) => { if (e.touches.length > 1) e.preventDefault(); }, { passive: false });
}

/** Wheel (with Ctrl, as a trackpad pinch sends it), pinch, keys and dragging on the schematic. */
export function wireSchematic() {
  const box = $('schematic');
  $('zoom-in').addEventListener('click', () => zoomSchematic(ZOOM.step));
  $('zoom-out').addEventListener('click', () => zoomSchematic(1 / ZOOM.step));
  $('zoom-fit').addEventListener('click', () => zoomSchematic('fit'));
  $('zoom-full').addEventListener('click', openFullSchematic);
  $('schematic-close').addEventListener('click', () => $('schematic-dialog').close());
  box.addEventListener('wheel', (e) => {
    if (!e.ctrlKey && !e.metaKey) return;
    e.preventDefault();
    zoomSchematic(e.deltaY < 0 ? 1.1 : 1 / 1.1);
  }, { passive: false });
  box.addEventListener('keydown', (e) => {
    const pan = { ArrowLeft: [-60, 0], ArrowRight: [60, 0], ArrowUp: [0, -60], ArrowDown: [0, 60] }[e.key];
    if (pan) { box.scrollBy(pan[0], pan[1]); e.preventDefault(); return; }
    if (e.key === '+' || e.key === '=') { zoomSchematic(ZOOM.step); e.preventDefault(); }
    if (e.key === '-') { zoomSchematic(1 / ZOOM.step); e.preventDefault(); }
    if (e.key === '0') { zoom = ZOOM.initial; applyZoom(); e.preventDefault(); }
  });
  wirePinch(box);
  let drag = null;
  box.addEventListener('pointerdown', (e) => {
    if (e.pointerType !== 'mouse' || e.button !== 0) return;
    drag = { x: e.clientX, y: e.clientY, left: box.scrollLeft, top: box.scrollTop };
    box.setPointerCapture(e.pointerId);
    box.classList.add('dragging');
  });
  box.addEventListener('pointermove', (e) => {
    if (!drag) return;
    box.scrollLeft = drag.left - (e.clientX - drag.x);
    box.scrollTop = drag.top - (e.clientY - drag.y);
  });
  const end = () => { drag = null; box.classList.remove('dragging'); };
  box.addEventListener('pointerup', end);
  box.addEventListener('pointercancel', end);
}

function openFullSchematic() {
  const body = $('schematic-full');
  clear(body);
  if (!schematicUrl) return;
  body.append(el('img', {
    src: schematicUrl, alt: 'Schematic of the design, full size',
    style: undefined, width: Math.round(schematicSize.w * 1.4), height: Math.round(schematicSize.h * 1.4),
  }));
  $('schematic-dialog').showModal();
}

function renderSchematic(svgText) {
  const box = $('schematic');
  clear(box);
  if (schematicUrl) URL.revokeObjectURL(schematicUrl);
  schematicUrl = null;
  for (const id of ['zoom-in', 'zoom-out', 'zoom-fit', 'zoom-full']) $(id).disabled = typeof svgText !== 'string';
  if (typeof svgText !== 'string') {
    box.append(el('p', { className: 'empty', text: 'No schematic in this report.' }));
    return;
  }
  schematicSize = sizeOf(svgText);
  // As an image: any script or link inside the SVG stays inert.
  schematicUrl = URL.createObjectURL(new Blob([svgText], { type: 'image/svg+xml' }));
  box.append(el('img', { src: schematicUrl, alt: 'Schematic of the design', 'data-testid': 'schematic-img', draggable: 'false' }));
  applyZoom();
}

function partValueText(part) {
  const v = part.value;
  if (typeof v === 'number') {
    const kind = String(part.kind || '').toLowerCase();
    if (kind.startsWith('res')) return eng(v, 'Ω', 3);
    if (kind.startsWith('ref')) return eng(v, 'V');
    return fmt(v, 6);
  }
  return v === undefined || v === null ? '—' : String(v);
}

function renderParts(design) {
  const node = $('parts-table');
  clear(node);
  const parts = isObject(design) && Array.isArray(design.parts) ? design.parts : [];
  const cols = ['ref', 'kind', 'value', 'part_id', 'unit_cost', 'tolerance_pct', 'tcr_ppm_per_c'];
  const names = ['Ref', 'Kind', 'Value', 'Part', 'Unit cost', 'Tol. %', 'TCR ppm/°C'];
  node.append(el('thead', {}, el('tr', {}, ...names.map((n) => el('th', { text: n, scope: 'col' })))));
  const body = el('tbody');
  for (const part of parts) {
    if (!isObject(part)) continue;
    const tr = el('tr', { 'data-ref': String(part.ref ?? '') });
    for (const c of cols) {
      let text;
      if (c === 'value') text = partValueText(part);
      else if (c === 'unit_cost') text = money(part.unit_cost);
      else if (c === 'tolerance_pct' || c === 'tcr_ppm_per_c') text = part[c] === undefined ? '' : fmt(part[c]);
      else text = part[c] === undefined ? '' : String(part[c]);
      tr.append(el('td', { 'data-col': c, 'data-raw': part[c] === undefined ? undefined : JSON.stringify(part[c]), text }));
    }
    body.append(tr);
  }
  node.append(body);
}

/** The changes of a suggestion the page can apply: need keys and shelf columns. */
function changesOf(tip) {
  const need = (Array.isArray(tip.apply) ? tip.apply : [])
    .filter((a) => isObject(a) && typeof a.key === 'string' && a.key.includes('.'));
  const stock = (Array.isArray(tip.apply_stock) ? tip.apply_stock : [])
    .filter((a) => isObject(a) && typeof a.file === 'string' && typeof a.column === 'string' && num(a.value) !== null);
  return { need, stock };
}

/**
 * Apply a verified suggestion: only the need keys (or shelf columns) it
 * names change, everything else the user entered stays; then solve again.
 */
async function applySuggestion(tip) {
  const { need, stock } = changesOf(tip);
  const what = suggestionWords(tip) || 'the change';
  setStatus('run-status', `Applied: ${what}. Solving again…`, 'good');
  if (need.length) await applyNeedChanges(need);
  if (stock.length) await applyStockChanges(stock);
  $('answer').focus();
  if (state.needValid && state.stockValid && hooks.solveNow) hooks.solveNow();
}

/**
 * A suggestion's words with each need key it sets written as its field's
 * label (the core writes `calibration = "two-point"`; the page says
 * “Calibration on the board” = "two-point").
 */
export function suggestionWords(tip) {
  let words = String(tip.change ?? '');
  for (const one of Array.isArray(tip.apply) ? tip.apply : []) {
    if (!isObject(one) || typeof one.key !== 'string') continue;
    const f = fieldFor(one.key);
    if (!f || !f.label) continue;
    const name = one.key.slice(one.key.indexOf('.') + 1);
    const section = one.key.slice(0, one.key.indexOf('.'));
    const at = new RegExp(`\\b(?:${section}\\.)?${name}\\b(?=\\s*=)`, 'g');
    words = words.replace(at, `“${f.label}”`);
  }
  return plainKeys(words);
}

function renderInfeasible(report) {
  const box = $('infeasible-box');
  const info = report.status !== 'ok' && !state.result.cancelled && isObject(report.infeasible) ? report.infeasible : null;
  box.hidden = !info;
  const tips = $('suggestions');
  const largest = $('largest');
  clear(tips);
  clear(largest);
  $('binding').textContent = '';
  if (!info) return;
  const best = num(info.best_error_pct_fs);
  const target = num(info.target_pct_fs);
  $('binding').textContent = typeof info.binding === 'string' ? plainKeys(info.binding) : '';
  $('binding-figures').textContent = best !== null && target !== null
    ? `Best attempt ${fmt(best, 3)} % FS against a target of ${fmt(target, 3)} % FS${info.proven ? '' : ' (the search did not prove that no design exists)'}.`
    : (info.proven ? '' : 'The search did not prove that no design exists.');
  (Array.isArray(info.suggestions) ? info.suggestions : []).forEach((tip, i) => {
    if (!isObject(tip)) return;
    const figures = [num(tip.cost) !== null ? `cost ${money(tip.cost)}` : '', num(tip.error_pct_fs) !== null ? `${fmt(tip.error_pct_fs, 3)} % FS` : '']
      .filter(Boolean).join(', ');
    const change = suggestionWords(tip);
    const item = el('li', { 'data-suggestion': i }, el('span', { className: 'change', text: change }),
      el('span', { className: 'aside', text: figures ? ` (${figures})` : '' }));
    const { need, stock } = changesOf(tip);
    if (need.length || stock.length) {
      const button = el('button', {
        type: 'button', className: 'apply', 'data-testid': 'apply-suggestion',
        'aria-label': `${stock.length ? 'Apply to the shelf and solve' : 'Apply and solve'}: ${change}`,
        text: stock.length ? 'Apply to the shelf and solve' : 'Apply and solve',
      });
      button.addEventListener('click', () => applySuggestion(tip));
      item.append(button);
    }
    tips.append(item);
  });
  for (const item of Array.isArray(info.largest) ? info.largest : []) {
    if (!isObject(item)) continue;
    largest.append(el('li', { text: `${String(item.source ?? '?')}: ${fmt(item.pct_fs, 3)} % FS` }));
  }
  $('suggestions-none').hidden = tips.childElementCount > 0;
  largest.parentElement.hidden = !largest.childElementCount;
}

/** The plain-language warnings of the design on show (`design.warnings`), when it has any. */
function renderWarnings(design) {
  const list = $('warnings');
  clear(list);
  const warnings = isObject(design) && Array.isArray(design.warnings) ? design.warnings.filter((w) => typeof w === 'string' && w) : [];
  for (const w of warnings) list.append(el('li', { text: w }));
  $('warnings-box').hidden = !warnings.length;
}

function renderFindings(design) {
  const node = $('findings');
  clear(node);
  const findings = isObject(design) && Array.isArray(design.findings) ? design.findings : [];
  $('findings-box').hidden = !findings.length;
  for (const f of findings) {
    if (!isObject(f)) continue;
    node.append(el('li', { className: f.ok ? 'ok' : 'not-ok', 'data-ok': f.ok ? 'yes' : 'no' },
      el('span', { className: 'mark', text: f.ok ? '✓' : '✗', 'aria-label': f.ok ? 'passes' : 'fails' }),
      el('span', { className: 'subject', text: String(f.subject ?? '') }),
      el('span', { className: 'check-name', text: String(f.check ?? '') }),
      el('span', { className: 'detail', text: String(f.detail ?? '') })));
  }
}

/** Need sections the printed report lists (search and stock settings stay off paper). */
const PRINTED_SECTIONS = ['sensor', 'adc', 'supply', 'accuracy'];

/**
 * The need of the answer on show, for the printed report only: each field
 * of those sections that has a value (given, or its default), under the
 * core's label and unit.
 */
function renderPrintNeed(need) {
  const list = $('print-need');
  clear(list);
  for (const f of state.fields) {
    const [section, name] = [f.key.slice(0, f.key.indexOf('.')), f.key.slice(f.key.indexOf('.') + 1)];
    if (!PRINTED_SECTIONS.includes(section)) continue;
    const given = isObject(need[section]) ? need[section][name] : undefined;
    const value = given === undefined || given === null ? f.default : given;
    if (value === undefined || value === null || value === '' || (Array.isArray(value) && !value.length)) continue;
    const text = Array.isArray(value) ? value.join(', ') : String(value);
    list.append(el('div', {}, el('dt', { text: String(f.label || f.key) }), el('dd', { text: f.unit && typeof value === 'number' ? `${text} ${f.unit}` : text })));
  }
}

/** The bill of materials as the core made it (`artifacts.bom_table`). */
function renderBom(table) {
  const node = $('bom-table');
  clear(node);
  const ok = isObject(table) && Array.isArray(table.header) && Array.isArray(table.rows);
  if (!ok) {
    const waiting = state.viewed.index !== -1 && isObject(state.viewed.design);
    node.append(el('caption', { className: 'empty', text: waiting ? 'The bill of materials comes with this design’s analysis.' : 'No bill of materials for this report.' }));
    return;
  }
  node.append(el('thead', {}, el('tr', {}, ...table.header.map((h) => el('th', { text: String(h), scope: 'col' })))));
  node.append(el('tbody', {}, ...table.rows.filter(Array.isArray).map((r) => el('tr', {}, ...r.map((c) => el('td', { text: String(c) }))))));
}

let sweepSeq = 0;

/** Ask the core for the design's error over the temperature range (worst case, cheap). */
async function loadSweep(design) {
  const seq = ++sweepSeq;
  const viewed = state.viewed;
  const file = isObject(design) && isObject(design.file) ? design.file : null;
  if (!file) { renderSweep(null); return; }
  renderSweep('Working out the error over temperature…');
  try {
    const sweep = await engines.checker.call('temperature_sweep', JSON.stringify(state.result.need), 'need', state.result.stock, JSON.stringify(file), 'design.json');
    if (seq !== sweepSeq || state.viewed !== viewed) return;
    viewed.sweep = sweep;
    renderSweep(sweep);
  } catch (error) {
    if (seq === sweepSeq) renderSweep(`The error over temperature could not be worked out: ${error.message}`);
  }
}

/** Redraw the charts when the answer's width changes (their text stays at its CSS size). */
export function watchChartWidth() {
  let width = 0;
  let timer = null;
  const observer = new ResizeObserver((entries) => {
    const w = Math.round(entries[0].contentRect.width);
    if (w === width) return;
    width = w;
    clearTimeout(timer);
    timer = setTimeout(() => { if (state.result && state.viewed) renderViewed(); }, 120);
  });
  observer.observe($('answer'));
}

let analyzeSeq = 0;

/**
 * Show alternative `index` of the front (-1: the chosen design). Its
 * figures show at once; its schematic, BOM and checks come from the core's
 * analysis of it.
 */
export async function viewAlternative(index) {
  const { bundle } = state.result;
  const report = reportOf(bundle);
  if (index < 0) {
    state.viewed = { design: report.design, artifacts: bundle.artifacts || {}, label: 'the chosen design', index: -1 };
    renderViewed();
    return;
  }
  const design = alternativeDesign(report.alternatives[index]);
  state.viewed = { design, artifacts: {}, label: `alternative ${index + 1} of ${report.alternatives.length}`, index };
  renderViewed();
  await analyseViewed(design, index);
}

/**
 * The core's full analysis of the design on show (an alternative, or the
 * best attempt of an infeasible need): its schematic, BOM and checks.
 */
async function analyseViewed(design, index) {
  if (!isObject(design)) return;
  const result = state.result;
  const designFile = isObject(design.file) ? design.file : design;
  const seq = ++analyzeSeq;
  try {
    const analysed = await engines.checker.call('analyze', JSON.stringify(result.need), 'need', result.stock, JSON.stringify(designFile), 'design.json');
    if (seq !== analyzeSeq || state.result !== result || state.viewed.index !== index) return;
    const analysedReport = reportOf(analysed);
    state.viewed = { design: analysedReport.design || design, artifacts: analysed.artifacts || {}, label: state.viewed.label, index };
    renderViewed();
  } catch (error) {
    if (seq === analyzeSeq) $('viewing').textContent = `Showing ${state.viewed.label}; its full analysis failed: ${error.message}`;
  }
}

/**
 * The bar at the foot of a narrow screen: the answer's state and headline
 * figures (the core's, as the figures above show them) while the answer
 * itself is out of view.
 */
export function renderGlance() {
  const fresh = $('freshness');
  let words = fresh.textContent;
  let tone = '';
  if (state.result) {
    const report = reportOf(state.result.bundle);
    if (report.status === 'ok' && isObject(report.design)) {
      const e = errorOf(report.design);
      const basis = state.result.need.accuracy && state.result.need.accuracy.basis === 'rss' ? 'RSS' : 'worst case';
      const value = basis === 'RSS' ? e.rss : e.worst;
      words = `A design meets the need: ${basis} ${fmt(value, 3)} % FS, cost ${money(report.design.cost)}`;
      tone = 'good';
    } else if (report.status === 'unfinished' || state.result.cancelled) {
      words = 'Not finished: no design found yet';
      tone = 'warn';
    } else {
      words = 'No design meets the need';
      tone = 'bad';
    }
    if (fresh.dataset.fresh !== 'current') words = `${fresh.textContent} · ${words}`;
  }
  $('glance-text').textContent = words;
  $('glance').dataset.tone = tone;
}

/** Show the foot bar only while the answer panel is out of view. */
export function watchGlance() {
  const bar = $('glance');
  if (typeof IntersectionObserver !== 'function') return;
  const seen = new IntersectionObserver((entries) => {
    for (const entry of entries) bar.hidden = entry.isIntersecting;
  });
  seen.observe($('answer'));
  renderGlance();
}
