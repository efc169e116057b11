// The result panel: the banner, what would make an infeasible need
// possible, the figures, the schematic, the charts, the parts, the bill of
// materials (the core's `bom_table`), the checks; and the alternatives of
// the front, each analysed by the core when picked.
import { $, clear, el, isObject, num } from './dom.js';
import { eng, fmt } from './format.js';
import { engines, state } from './state.js';
import { alternativeDesign, errorOf, renderBudget, renderHistogram, renderPareto } from './charts.js';

function reportOf(bundle) {
  return isObject(bundle.report) ? bundle.report : {};
}

/** Show a new search result (state.result), its chosen design first. */
export function showReport() {
  const report = reportOf(state.result.bundle);
  state.viewed = { design: report.design, artifacts: state.result.bundle.artifacts || {}, label: 'the chosen design', index: -1 };
  $('result').hidden = false;
  const banner = $('result-banner');
  if (report.status === 'ok') {
    banner.textContent = state.result.cancelled ? 'A design meets the need (the best found before the stop).' : 'A design meets the need.';
    banner.dataset.tone = 'good';
  } else if (state.result.cancelled) {
    banner.textContent = 'Stopped before any design was found. Run it again and let the search go on longer.';
    banner.dataset.tone = 'warn';
  } else if (report.status === 'unfinished') {
    const why = typeof report.reason === 'string' ? ` ${report.reason}.` : '';
    banner.textContent = `Not finished: no design found yet, and none shown impossible.${why}`;
    banner.dataset.tone = 'warn';
  } else {
    const why = typeof report.reason === 'string' ? report.reason
      : (isObject(report.infeasible) && typeof report.infeasible.binding === 'string' ? report.infeasible.binding : '');
    banner.textContent = `No design meets the need${why ? `. ${why}` : '.'}`;
    banner.dataset.tone = 'bad';
  }
  banner.dataset.status = String(report.status);
  renderInfeasible(report);
  renderViewed();
}

/** Redraw everything about the design on show (state.viewed). */
export function renderViewed() {
  const report = reportOf(state.result.bundle);
  const { design, artifacts, label } = state.viewed;
  const need = state.result.need;
  $('viewing').textContent = design ? `Showing ${label}.` : '';
  $('design-details').hidden = !isObject(design);
  renderFigures(design, report);
  renderSchematic(artifacts.svg);
  renderBudget(design, need);
  renderPareto(report, need, state.viewed.index, viewAlternative);
  renderHistogram(design, need);
  renderParts(design);
  renderBom(artifacts.bom_table);
  renderFindings(design);
  const extra = { stages: design && design.stages, transfer: design && design.transfer, search: report.search };
  $('raw-extra').textContent = JSON.stringify(extra, null, 2);
  $('dl-bom').disabled = typeof artifacts.bom_csv !== 'string';
  $('dl-spice').disabled = typeof artifacts.spice !== 'string';
  $('dl-svg').disabled = typeof artifacts.svg !== 'string';
  $('dl-design').disabled = !(isObject(design) && isObject(design.file));
}

function inUnits(pct) {
  const report = reportOf(state.result.bundle);
  const d = isObject(report.need) && num(report.need.lsb_v) ? report.need : state.result.derived;
  const need = state.result.need;
  const out = { pct: `${fmt(pct, 3)} % FS` };
  if (pct === null) return out;
  if (d && num(d.full_scale_v) && num(d.lsb_v)) out.lsb = `${fmt((pct / 100) * d.full_scale_v / d.lsb_v, 3)} LSB`;
  const unit = need.sensor && need.sensor.quantity_unit;
  if (d && num(d.volts_per_unit) && unit) {
    out.unit = `${fmt((pct / 100) * d.full_scale_v / Math.abs(d.volts_per_unit), 3)} ${unit}`;
  }
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
  figure(list, 'cost', 'Cost', fmt(design.cost), design.cost, `${design.part_count ?? '—'} parts · ${design.bom_lines ?? '—'} BOM lines`);
  const worst = inUnits(e.worst);
  figure(list, 'worst', 'Worst-case error', worst.pct, e.worst, [worst.lsb, worst.unit].filter(Boolean).join(' · '));
  const rss = inUnits(e.rss);
  figure(list, 'rss', 'RSS error', rss.pct, e.rss, [rss.lsb, rss.unit].filter(Boolean).join(' · '));
  const err = isObject(design.error) ? design.error : {};
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
function renderSchematic(svgText) {
  const box = $('schematic');
  clear(box);
  if (schematicUrl) URL.revokeObjectURL(schematicUrl);
  schematicUrl = null;
  if (typeof svgText !== 'string') {
    box.append(el('p', { className: 'empty', text: 'No schematic in this report.' }));
    return;
  }
  // As an image: any script or link inside the SVG stays inert.
  schematicUrl = URL.createObjectURL(new Blob([svgText], { type: 'image/svg+xml' }));
  box.append(el('img', { src: schematicUrl, alt: 'Schematic of the design', 'data-testid': 'schematic-img' }));
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
      else if (c === 'unit_cost') text = fmt(part.unit_cost);
      else if (c === 'tolerance_pct' || c === 'tcr_ppm_per_c') text = part[c] === undefined ? '' : fmt(part[c]);
      else text = part[c] === undefined ? '' : String(part[c]);
      tr.append(el('td', { 'data-col': c, 'data-raw': part[c] === undefined ? undefined : JSON.stringify(part[c]), text }));
    }
    body.append(tr);
  }
  node.append(body);
}

function renderInfeasible(report) {
  const box = $('infeasible-box');
  const info = report.status !== 'ok' && !state.result.cancelled && isObject(report.infeasible) ? report.infeasible : null;
  box.hidden = !info;
  const tips = $('suggestions');
  const largest = $('largest');
  clear(tips);
  clear(largest);
  if (!info) return;
  for (const tip of Array.isArray(info.suggestions) ? info.suggestions : []) {
    if (!isObject(tip)) continue;
    const figures = [num(tip.cost) !== null ? `cost ${fmt(tip.cost)}` : '', num(tip.error_pct_fs) !== null ? `${fmt(tip.error_pct_fs, 3)} % FS` : '']
      .filter(Boolean).join(', ');
    tips.append(el('li', {}, el('span', { className: 'change', text: String(tip.change ?? '') }),
      el('span', { className: 'aside', text: figures ? ` (${figures})` : '' })));
  }
  for (const item of Array.isArray(info.largest) ? info.largest : []) {
    if (!isObject(item)) continue;
    largest.append(el('li', { text: `${String(item.source ?? '?')}: ${fmt(item.pct_fs, 3)} % FS` }));
  }
  tips.parentElement.hidden = !tips.childElementCount;
  largest.parentElement.hidden = !largest.childElementCount;
  if (!tips.childElementCount && !largest.childElementCount) box.hidden = true;
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

/** The bill of materials as the core made it (`artifacts.bom_table`). */
function renderBom(table) {
  const node = $('bom-table');
  clear(node);
  const ok = isObject(table) && Array.isArray(table.header) && Array.isArray(table.rows);
  if (!ok) {
    const waiting = state.viewed.index >= 0 && isObject(state.viewed.design);
    node.append(el('caption', { className: 'empty', text: waiting ? 'The bill of materials comes with this design’s analysis.' : 'No bill of materials for this report.' }));
    return;
  }
  node.append(el('thead', {}, el('tr', {}, ...table.header.map((h) => el('th', { text: String(h), scope: 'col' })))));
  node.append(el('tbody', {}, ...table.rows.filter(Array.isArray).map((r) => el('tr', {}, ...r.map((c) => el('td', { text: String(c) }))))));
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
  if (!isObject(design)) return;
  const designFile = isObject(design.file) ? design.file : design;
  const seq = ++analyzeSeq;
  try {
    const analysed = await engines.checker.call('analyze', JSON.stringify(state.result.need), 'need', state.result.stock, JSON.stringify(designFile), 'design.json');
    if (seq !== analyzeSeq || state.viewed.index !== index) return;
    const analysedReport = reportOf(analysed);
    state.viewed = { design: analysedReport.design || design, artifacts: analysed.artifacts || {}, label: state.viewed.label, index };
    renderViewed();
  } catch (error) {
    if (seq === analyzeSeq) $('viewing').textContent = `Showing ${state.viewed.label}; its full analysis failed: ${error.message}`;
  }
}
