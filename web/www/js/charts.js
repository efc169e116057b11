// The three charts of a result, drawn as SVG from the report's numbers:
// the error budget, the cost-against-error front, the Monte Carlo
// histogram. Text reaches them only as SVG text nodes.
import { $, clear, el, isObject, num, svg } from './dom.js';
import { fmt } from './format.js';

/** The error figures of a design object of the report. */
export function errorOf(design) {
  const e = isObject(design) && isObject(design.error) ? design.error : {};
  return {
    worst: num(e.worst_case_pct_fs),
    rss: num(e.rss_pct_fs),
    yieldPct: num(e.yield_pct),
    budget: Array.isArray(e.budget) ? e.budget : [],
    histogram: isObject(e.histogram) ? e.histogram : null,
  };
}

/** The design of an alternative of the report. */
export function alternativeDesign(alt) {
  if (!isObject(alt)) return null;
  return isObject(alt.design) ? alt.design : alt;
}

function pointOf(alt) {
  const d = alternativeDesign(alt);
  if (!d) return null;
  const cost = num(alt.cost) ?? num(d.cost);
  const e = errorOf(d);
  const error = num(alt.basis_pct_fs) ?? num(d.error && d.error.basis_pct_fs) ?? num(alt.worst_case_pct_fs) ?? e.worst ?? e.rss;
  return cost === null || error === null ? null : { cost, error, design: d };
}

function niceTicks(lo, hi, count = 5) {
  if (!(hi > lo)) hi = lo + 1;
  const raw = (hi - lo) / count;
  const step10 = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 2.5, 5, 10].map((m) => m * step10).find((s) => s >= raw) || raw;
  const ticks = [];
  for (let v = Math.ceil(lo / step) * step; v <= hi + step * 1e-9; v += step) ticks.push(Number(v.toPrecision(12)));
  return ticks;
}

function targetOf(need) {
  return num(((need && need.accuracy) || {}).max_error_pct_fs);
}

/** The error budget: one bar per source, the totals, the target line. */
export function renderBudget(design, need) {
  const box = $('budget-chart');
  clear(box);
  const e = errorOf(design);
  const rows = e.budget
    .filter((b) => isObject(b) && num(b.pct_fs) !== null)
    .map((b) => ({ label: String(b.source ?? '?'), value: b.pct_fs, lsb: num(b.lsb), units: num(b.units), unit: b.unit, total: false }))
    .sort((a, b) => Math.abs(b.value) - Math.abs(a.value));
  if (e.worst !== null) rows.push({ label: 'total, worst case', value: e.worst, total: true });
  if (e.rss !== null) rows.push({ label: 'total, RSS', value: e.rss, total: true });
  if (!rows.length) { box.append(el('p', { className: 'empty', text: 'No error budget in this report.' })); return; }
  const target = targetOf(need);
  const W = 620; const left = 210; const right = 70; const rowH = 22; const top = 26;
  const H = top + rows.length * rowH + 28;
  const maxV = Math.max(target || 0, ...rows.map((r) => Math.abs(r.value))) * 1.08 || 1;
  const x = (v) => left + (Math.abs(v) / maxV) * (W - left - right);
  const chart = svg('svg', { viewBox: `0 0 ${W} ${H}`, class: 'chart', role: 'img', 'aria-label': 'error budget bar chart' });
  for (const tick of niceTicks(0, maxV)) {
    chart.append(svg('line', { x1: x(tick), x2: x(tick), y1: top - 4, y2: H - 24, class: 'grid' }));
    chart.append(svg('text', { x: x(tick), y: H - 8, class: 'tick', 'text-anchor': 'middle' }, fmt(tick, 3)));
  }
  rows.forEach((r, i) => {
    const y = top + i * rowH;
    chart.append(svg('text', { x: left - 8, y: y + 15, class: r.total ? 'label total' : 'label', 'text-anchor': 'end' }, r.label));
    const bar = svg('rect', {
      x: left, y: y + 4, width: Math.max(1, x(r.value) - left), height: rowH - 8,
      class: r.total ? 'bar total' : (r.value < 0 ? 'bar negative' : 'bar'), 'data-source': r.label, 'data-value': r.value,
    });
    const extra = [
      num(r.lsb) !== null ? `${fmt(r.lsb, 3)} LSB` : '',
      num(r.units) !== null && typeof r.unit === 'string' ? `${fmt(r.units, 3)} ${r.unit}` : '',
    ].filter(Boolean).join(', ');
    bar.append(svg('title', {}, `${r.label}: ${fmt(r.value, 4)} % FS${extra ? `, ${extra}` : ''}`));
    chart.append(bar);
    chart.append(svg('text', { x: x(r.value) + 5, y: y + 15, class: 'value' }, `${r.value < 0 ? '−' : ''}${fmt(Math.abs(r.value), 3)}`));
  });
  if (target !== null) {
    chart.append(svg('line', { x1: x(target), x2: x(target), y1: top - 10, y2: H - 24, class: 'target', 'data-target': target }));
    chart.append(svg('text', { x: x(target), y: top - 14, class: 'target-label', 'text-anchor': 'middle' }, `target ${fmt(target, 3)} % FS`));
  }
  box.append(chart);
}

/**
 * The cost-against-error front: one point per alternative and the chosen
 * design. `viewedIndex` is the alternative on show (-1: the chosen design);
 * `onPick(index)` is called when a point is clicked (-1 for the chosen).
 */
export function renderPareto(report, need, viewedIndex, onPick) {
  const box = $('pareto-chart');
  clear(box);
  const alts = Array.isArray(report.alternatives) ? report.alternatives : [];
  const points = alts.map((alt, index) => ({ ...pointOf(alt), index })).filter((p) => p.cost !== undefined && p.cost !== null);
  const chosen = pointOf({ design: report.design });
  if (!points.length && !chosen) { box.append(el('p', { className: 'empty', text: 'No alternatives in this report.' })); return; }
  const all = chosen ? [...points, chosen] : points;
  const target = targetOf(need);
  const W = 620; const H = 300; const L = 64; const R = 20; const T = 18; const B = 46;
  const errs = all.map((p) => p.error).concat(target === null ? [] : [target]);
  const costs = all.map((p) => p.cost);
  const xLo = 0; const xHi = Math.max(...errs) * 1.1 || 1;
  const cLo = Math.min(...costs); const cHi = Math.max(...costs);
  const pad = (cHi - cLo) * 0.1 || Math.abs(cHi) * 0.1 || 1;
  const yLo = Math.max(0, cLo - pad); const yHi = cHi + pad;
  const x = (v) => L + ((v - xLo) / (xHi - xLo)) * (W - L - R);
  const y = (v) => H - B - ((v - yLo) / (yHi - yLo)) * (H - T - B);
  const chart = svg('svg', { viewBox: `0 0 ${W} ${H}`, class: 'chart', role: 'img', 'aria-label': 'cost against error' });
  for (const tick of niceTicks(xLo, xHi)) {
    chart.append(svg('line', { x1: x(tick), x2: x(tick), y1: T, y2: H - B, class: 'grid' }));
    chart.append(svg('text', { x: x(tick), y: H - B + 16, class: 'tick', 'text-anchor': 'middle' }, fmt(tick, 3)));
  }
  for (const tick of niceTicks(yLo, yHi)) {
    chart.append(svg('line', { x1: L, x2: W - R, y1: y(tick), y2: y(tick), class: 'grid' }));
    chart.append(svg('text', { x: L - 6, y: y(tick) + 4, class: 'tick', 'text-anchor': 'end' }, fmt(tick, 3)));
  }
  const basis = ((need && need.accuracy) || {}).basis || 'chosen';
  chart.append(svg('text', { x: (L + W - R) / 2, y: H - 8, class: 'axis', 'text-anchor': 'middle' }, `error on the ${basis} basis, % FS`));
  chart.append(svg('text', { x: 14, y: (T + H - B) / 2, class: 'axis', 'text-anchor': 'middle', transform: `rotate(-90 14 ${(T + H - B) / 2})` }, 'cost'));
  if (target !== null) {
    chart.append(svg('line', { x1: x(target), x2: x(target), y1: T, y2: H - B, class: 'target' }));
    chart.append(svg('text', { x: x(target) + 4, y: T + 10, class: 'target-label' }, 'target'));
  }
  const front = [...points].sort((a, b) => a.error - b.error);
  if (front.length > 1) {
    let d = `M ${x(front[0].error)} ${y(front[0].cost)}`;
    for (const p of front.slice(1)) d += ` H ${x(p.error)} V ${y(p.cost)}`;
    chart.append(svg('path', { d, class: 'front' }));
  }
  const same = (a, b) => Math.abs(a.cost - b.cost) <= 1e-12 * Math.max(1, Math.abs(a.cost))
    && Math.abs(a.error - b.error) <= 1e-12 * Math.max(1, Math.abs(a.error));
  const chosenIndex = chosen ? points.findIndex((p) => same(p, chosen)) : -1;
  const drawPoint = (p, index, isChosen) => {
    const selected = isChosen ? viewedIndex === -1 : index === viewedIndex;
    const dot = svg('circle', {
      cx: x(p.error), cy: y(p.cost), r: isChosen ? 7 : 5.5, tabindex: 0, role: 'button',
      class: `point${isChosen ? ' chosen' : ''}${selected ? ' selected' : ''}`,
      'data-index': index, 'data-cost': p.cost, 'data-error': p.error,
    });
    dot.append(svg('title', {}, `${isChosen ? 'chosen design: ' : ''}cost ${fmt(p.cost)}, error ${fmt(p.error, 3)} % FS`));
    const pick = () => onPick(isChosen ? -1 : index);
    dot.addEventListener('click', pick);
    dot.addEventListener('keydown', (ev) => { if (ev.key === 'Enter' || ev.key === ' ') { ev.preventDefault(); pick(); } });
    chart.append(dot);
  };
  points.forEach((p) => drawPoint(p, p.index, p.index === chosenIndex));
  if (chosen && chosenIndex < 0) drawPoint(chosen, -1, true);
  box.append(chart);
}

/** The Monte Carlo histogram, when the design has one (else hidden). */
export function renderHistogram(design, need) {
  const box = $('histogram-chart');
  clear(box);
  const h = errorOf(design).histogram;
  const edges = h && Array.isArray(h.bin_edges_pct_fs) ? h.bin_edges_pct_fs.map(num) : [];
  const counts = h && Array.isArray(h.counts) ? h.counts.map(num) : [];
  const usable = edges.length === counts.length + 1 && counts.length > 0 && !edges.includes(null) && !counts.includes(null);
  $('histogram-box').hidden = !usable;
  if (!usable) return;
  const target = targetOf(need);
  const W = 620; const H = 260; const L = 56; const R = 16; const T = 16; const B = 44;
  let lo = edges[0]; let hi = edges[edges.length - 1];
  if (target !== null) { lo = Math.min(lo, -target * 1.05); hi = Math.max(hi, target * 1.05); }
  const cMax = Math.max(...counts) || 1;
  const x = (v) => L + ((v - lo) / (hi - lo || 1)) * (W - L - R);
  const y = (c) => H - B - (c / cMax) * (H - T - B);
  const chart = svg('svg', { viewBox: `0 0 ${W} ${H}`, class: 'chart', role: 'img', 'aria-label': 'Monte Carlo error histogram' });
  for (const tick of niceTicks(lo, hi, 6)) {
    chart.append(svg('text', { x: x(tick), y: H - B + 16, class: 'tick', 'text-anchor': 'middle' }, fmt(tick, 3)));
  }
  for (const tick of niceTicks(0, cMax, 4)) {
    chart.append(svg('line', { x1: L, x2: W - R, y1: y(tick), y2: y(tick), class: 'grid' }));
    chart.append(svg('text', { x: L - 6, y: y(tick) + 4, class: 'tick', 'text-anchor': 'end' }, String(tick)));
  }
  counts.forEach((c, i) => {
    const bar = svg('rect', { x: x(edges[i]), y: y(c), width: Math.max(0.5, x(edges[i + 1]) - x(edges[i]) - 0.5), height: H - B - y(c), class: 'bar' });
    bar.append(svg('title', {}, `${fmt(edges[i], 3)} to ${fmt(edges[i + 1], 3)} % FS: ${c} builds`));
    chart.append(bar);
  });
  if (target !== null) {
    for (const t of [-target, target]) chart.append(svg('line', { x1: x(t), x2: x(t), y1: T, y2: H - B, class: 'target' }));
  }
  chart.append(svg('text', { x: (L + W - R) / 2, y: H - 8, class: 'axis', 'text-anchor': 'middle' }, 'error of a build, % FS'));
  box.append(chart);
}
