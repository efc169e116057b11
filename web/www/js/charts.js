// The charts of a result, drawn as SVG from the report's numbers: the
// error budget, the cost-against-error front, the Monte Carlo histogram,
// the error over temperature and the frequency response (Bode plot). Text
// reaches them only as SVG text nodes.
import { $, clear, el, isObject, num, svg } from './dom.js';
import { eng, fmt } from './format.js';
import { state } from './state.js';

/** The error figures of a design object of the report. */
export function errorOf(design) {
  const e = isObject(design) && isObject(design.error) ? design.error : {};
  return {
    worst: num(e.worst_case_pct_fs),
    rss: num(e.rss_pct_fs),
    yieldPct: num(e.yield_pct),
    budget: Array.isArray(e.budget) ? e.budget : [],
    histogram: isObject(e.histogram) ? e.histogram : null,
    builds: num(e.yield_builds),
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

/**
 * The drawing width of a chart: the width its box has on screen, so one
 * unit of the drawing is one CSS pixel and the text keeps its CSS size
 * (at least 11 px) at every screen width.
 */
function widthOf(box) {
  const w = Math.floor(box.clientWidth || 0);
  return w >= 240 ? w : 620;
}

/** The currency symbol the user picked, with a space where it is a code. */
export function money(value) {
  const symbol = currencySymbol();
  const text = fmt(value);
  if (text === '—' || !symbol) return text;
  return symbol.length > 1 ? `${text} ${symbol}` : `${symbol}${text}`;
}

/** The currency symbol of the project ('' for none). */
export function currencySymbol() {
  return typeof state.currency === 'string' ? state.currency : '';
}

function targetOf(need) {
  return num(((need && need.accuracy) || {}).max_error_pct_fs);
}

/**
 * The error budget: one bar per source, the totals, the target line. Each
 * bar's tooltip (and the list under the chart) says what the line is.
 * On a narrow box each label sits on its own line above its bar.
 */
export function renderBudget(design, need) {
  const box = $('budget-chart');
  clear(box);
  const e = errorOf(design);
  const rows = e.budget
    .filter((b) => isObject(b) && num(b.pct_fs) !== null)
    .map((b) => ({ label: String(b.source ?? '?'), value: b.pct_fs, lsb: num(b.lsb), units: num(b.units), unit: b.unit, line: b.line, total: false }))
    .sort((a, b) => Math.abs(b.value) - Math.abs(a.value));
  if (e.worst !== null) rows.push({ label: 'total, worst case', value: e.worst, total: true });
  if (e.rss !== null) rows.push({ label: 'total, RSS', value: e.rss, total: true });
  if (!rows.length) { box.append(el('p', { className: 'empty', text: 'No error budget in this report.' })); return; }
  const target = targetOf(need);
  const W = widthOf(box);
  const narrow = W < 560;
  const left = narrow ? 8 : Math.min(250, Math.round(W * 0.4)); const right = 64;
  const rowH = narrow ? 40 : 24; const barTop = narrow ? 20 : 4; const barH = narrow ? 14 : 16;
  const top = 34; const H = top + rows.length * rowH + 40;
  const maxV = Math.max(target || 0, ...rows.map((r) => Math.abs(r.value))) * 1.08 || 1;
  const x = (v) => left + (Math.abs(v) / maxV) * (W - left - right);
  const chart = svg('svg', { viewBox: `0 0 ${W} ${H}`, width: W, height: H, class: 'chart', role: 'img', 'aria-label': 'error budget bar chart' });
  chart.append(svg('title', {}, 'Error budget: the size of each error source in % of full scale, with the target'));
  for (const tick of niceTicks(0, maxV, narrow ? 3 : 5)) {
    chart.append(svg('line', { x1: x(tick), x2: x(tick), y1: top - 4, y2: H - 34, class: 'grid' }));
    chart.append(svg('text', { x: x(tick), y: H - 20, class: 'tick', 'text-anchor': 'middle' }, fmt(tick, 3)));
  }
  chart.append(svg('text', { x: (left + W - right) / 2, y: H - 4, class: 'axis', 'text-anchor': 'middle' }, 'error, % of full scale'));
  rows.forEach((r, i) => {
    const y = top + i * rowH;
    const labelAt = narrow ? { x: left, y: y + 14, anchor: 'start' } : { x: left - 8, y: y + 17, anchor: 'end' };
    chart.append(svg('text', { x: labelAt.x, y: labelAt.y, class: r.total ? 'label total' : 'label', 'text-anchor': labelAt.anchor }, r.label));
    const bar = svg('rect', {
      x: left, y: y + barTop, width: Math.max(1, x(r.value) - left), height: barH,
      class: r.total ? 'bar total' : (r.value < 0 ? 'bar negative' : 'bar'), 'data-source': r.label, 'data-value': r.value,
    });
    const extra = [
      num(r.lsb) !== null ? `${fmt(r.lsb, 3)} LSB` : '',
      num(r.units) !== null && typeof r.unit === 'string' ? `${fmt(r.units, 3)} ${r.unit}` : '',
    ].filter(Boolean).join(', ');
    bar.append(svg('title', {}, `${r.label}: ${fmt(r.value, 4)} % FS${extra ? `, ${extra}` : ''}`));
    chart.append(bar);
    // The value beside its bar, moved past the target line where it would cross it.
    const value = `${r.value < 0 ? '−' : ''}${fmt(Math.abs(r.value), 3)}`;
    let vx = x(r.value) + 5;
    const guess = value.length * 7.5;
    if (target !== null && vx < x(target) + 3 && vx + guess > x(target) - 3) vx = x(target) + 5;
    chart.append(svg('text', { x: vx, y: y + barTop + barH - 3, class: 'value' }, value));
  });
  if (target !== null && !narrow) {
    chart.append(svg('line', { x1: x(target), x2: x(target), y1: top - 8, y2: H - 34, class: 'target', 'data-target': target }));
  } else if (target !== null) {
    // Narrow: each label has a line of its own above its bar, so the
    // target is drawn through the bars' bands only, never through a label.
    rows.forEach((r, i) => {
      const y = top + i * rowH;
      chart.append(svg('line', { x1: x(target), x2: x(target), y1: y + barTop - 3, y2: y + barTop + barH + 3, class: 'target', 'data-target': target }));
    });
  }
  if (target !== null) {
    const anchor = x(target) > W - 90 ? 'end' : (x(target) < left + 60 ? 'start' : 'middle');
    chart.append(svg('text', { x: x(target), y: top - 14, class: 'target-label', 'text-anchor': anchor }, `target ${fmt(target, 3)} % FS`));
  }
  box.append(chart);
}

/** The parts behind an input of a line's explanation, as the core named them. */
function partsText(input) {
  const refs = Array.isArray(input.refs) ? input.refs.map(String) : [];
  const ids = Array.isArray(input.part_ids) ? input.part_ids.map(String) : [];
  if (!refs.length && !ids.length) return '';
  return ` (${[refs.join(', '), ids.join(', ')].filter(Boolean).join(': ')})`;
}

/**
 * Under the budget chart: each line of this budget as the core worked it
 * out (`explain` of each budget line: its formula over named inputs, their
 * values and units, and the parts behind them). Nothing is computed here;
 * numbers are only shown to four figures, and a fraction (unit `1`) bare.
 */
export function renderBudgetNotes(design) {
  const list = $('budget-notes');
  clear(list);
  for (const b of errorOf(design).budget) {
    if (!isObject(b)) continue;
    const kind = b.systematic ? 'fixed' : 'random';
    const head = el('p', { className: 'explain-head' },
      el('strong', { text: `${String(b.source ?? b.line ?? '?')}: ` }),
      el('span', { className: 'explain-value', 'data-value': String(b.pct_fs), text: fmt(b.pct_fs, 4) }),
      document.createTextNode(` % FS (${kind})`));
    const item = el('li', { 'data-line': String(b.line ?? '') }, head);
    const ex = isObject(b.explain) ? b.explain : null;
    if (ex && typeof ex.formula === 'string') {
      item.append(el('p', { className: 'explain-formula' }, document.createTextNode('= '), el('code', { text: ex.formula })));
      const inputs = el('ul', { className: 'explain-inputs' });
      for (const i of Array.isArray(ex.inputs) ? ex.inputs : []) {
        if (!isObject(i)) continue;
        inputs.append(el('li', { 'data-name': String(i.name ?? '') },
          el('code', { text: String(i.name ?? '?') }),
          document.createTextNode(' = '),
          el('span', { className: 'explain-value', 'data-value': String(i.value), text: fmt(i.value, 4) }),
          document.createTextNode(`${i.unit === '1' ? '' : ` ${String(i.unit ?? '')}`}: ${String(i.what ?? '')}${partsText(i)}`)));
      }
      item.append(inputs);
      if (typeof ex.note === 'string') item.append(el('p', { className: 'explain-note', text: ex.note }));
    }
    list.append(item);
  }
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
  const W = widthOf(box); const H = 300; const L = 70; const R = 20; const T = 22; const B = 50;
  const errs = all.map((p) => p.error).concat(target === null ? [] : [target]);
  const costs = all.map((p) => p.cost);
  const xLo = 0; const xHi = Math.max(...errs) * 1.1 || 1;
  const cLo = Math.min(...costs); const cHi = Math.max(...costs);
  const pad = (cHi - cLo) * 0.1 || Math.abs(cHi) * 0.1 || 1;
  const yLo = Math.max(0, cLo - pad); const yHi = cHi + pad;
  const x = (v) => L + ((v - xLo) / (xHi - xLo)) * (W - L - R);
  const y = (v) => H - B - ((v - yLo) / (yHi - yLo)) * (H - T - B);
  const chart = svg('svg', { viewBox: `0 0 ${W} ${H}`, width: W, height: H, class: 'chart', 'aria-label': 'cost against error; each point is a design' });
  for (const tick of niceTicks(xLo, xHi, W < 480 ? 3 : 5)) {
    chart.append(svg('line', { x1: x(tick), x2: x(tick), y1: T, y2: H - B, class: 'grid' }));
    chart.append(svg('text', { x: x(tick), y: H - B + 16, class: 'tick', 'text-anchor': 'middle' }, fmt(tick, 3)));
  }
  for (const tick of niceTicks(yLo, yHi)) {
    chart.append(svg('line', { x1: L, x2: W - R, y1: y(tick), y2: y(tick), class: 'grid' }));
    chart.append(svg('text', { x: L - 6, y: y(tick) + 4, class: 'tick', 'text-anchor': 'end' }, fmt(tick, 3)));
  }
  const basis = ((need && need.accuracy) || {}).basis || 'chosen';
  chart.append(svg('text', { x: (L + W - R) / 2, y: H - 8, class: 'axis', 'text-anchor': 'middle' }, `error on the ${basis} basis, % FS`));
  chart.append(svg('text', { x: 14, y: (T + H - B) / 2, class: 'axis', 'text-anchor': 'middle', transform: `rotate(-90 14 ${(T + H - B) / 2})` }, currencySymbol() ? `cost, ${currencySymbol()}` : 'cost (stock currency)'));
  if (target !== null) {
    chart.append(svg('line', { x1: x(target), x2: x(target), y1: T, y2: H - B, class: 'target' }));
    chart.append(svg('text', { x: x(target) + 4, y: T - 6, class: 'target-label', 'text-anchor': x(target) > W - 80 ? 'end' : 'start' }, 'target'));
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
    dot.setAttribute('aria-label', `${isChosen ? 'chosen design: ' : ''}cost ${money(p.cost)}, error ${fmt(p.error, 3)} % FS`);
    dot.append(svg('title', {}, `${isChosen ? 'chosen design: ' : ''}cost ${money(p.cost)}, error ${fmt(p.error, 3)} % FS`));
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
  const W = widthOf(box); const H = 270; const L = 64; const R = 16; const T = 24; const B = 50;
  let lo = edges[0]; let hi = edges[edges.length - 1];
  if (target !== null) { lo = Math.min(lo, -target * 1.05); hi = Math.max(hi, target * 1.05); }
  const cMax = Math.max(...counts) || 1;
  const x = (v) => L + ((v - lo) / (hi - lo || 1)) * (W - L - R);
  const y = (c) => H - B - (c / cMax) * (H - T - B);
  const chart = svg('svg', { viewBox: `0 0 ${W} ${H}`, width: W, height: H, class: 'chart', role: 'img', 'aria-label': 'Monte Carlo histogram: builds at each error, with the target' });
  for (const tick of niceTicks(lo, hi, W < 480 ? 4 : 6)) {
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
    for (const t of [-target, target]) {
      chart.append(svg('line', { x1: x(t), x2: x(t), y1: T, y2: H - B, class: 'target', 'data-target': t }));
      chart.append(svg('text', { x: x(t), y: T - 8, class: 'target-label', 'text-anchor': 'middle' }, `${t < 0 ? '−' : '+'}target`));
    }
  }
  chart.append(svg('text', { x: (L + W - R) / 2, y: H - 8, class: 'axis', 'text-anchor': 'middle' }, 'largest error of a build, % FS (signed)'));
  chart.append(svg('text', { x: 14, y: (T + H - B) / 2, class: 'axis', 'text-anchor': 'middle', transform: `rotate(-90 14 ${(T + H - B) / 2})` }, 'builds'));
  const total = num(errorOf(design).builds) ?? counts.reduce((a, c) => a + c, 0);
  $('histogram-note').textContent = `Each of the ${total} simulated builds is counted once, at its largest error (by size, with its sign) over both ends of the span and both ends of the temperature range. Taking the largest pulls builds away from zero, which is why the counts form two humps rather than one peak.`;
  box.append(chart);
}

/**
 * The error over the temperature range (the core's `temperature_sweep`):
 * worst case and RSS at each temperature, the target line.
 */
export function renderSweep(sweep) {
  const box = $('sweep-chart');
  clear(box);
  const points = isObject(sweep) && Array.isArray(sweep.points) ? sweep.points.filter((p) => isObject(p) && num(p.temp_c) !== null && num(p.worst_case_pct_fs) !== null) : [];
  if (!points.length) {
    box.append(el('p', { className: 'empty', text: typeof sweep === 'string' ? sweep : 'No sweep for this design yet.' }));
    return;
  }
  const target = num(sweep.target_pct_fs);
  const W = widthOf(box); const H = 260; const L = 64; const R = 16; const T = 24; const B = 50;
  let tLo = points[0].temp_c; let tHi = points[points.length - 1].temp_c;
  if (!(tHi > tLo)) { tLo -= 1; tHi += 1; }
  const eHi = Math.max(target || 0, ...points.map((p) => p.worst_case_pct_fs)) * 1.1 || 1;
  const x = (t) => L + ((t - tLo) / (tHi - tLo)) * (W - L - R);
  const y = (v) => H - B - (v / eHi) * (H - T - B);
  const chart = svg('svg', { viewBox: `0 0 ${W} ${H}`, width: W, height: H, class: 'chart', role: 'img', 'aria-label': 'error against temperature, worst case and RSS, with the target' });
  for (const tick of niceTicks(tLo, tHi, W < 480 ? 4 : 6)) {
    chart.append(svg('line', { x1: x(tick), x2: x(tick), y1: T, y2: H - B, class: 'grid' }));
    chart.append(svg('text', { x: x(tick), y: H - B + 19, class: 'tick', 'text-anchor': 'middle' }, fmt(tick, 3)));
  }
  for (const tick of niceTicks(0, eHi, 4)) {
    chart.append(svg('line', { x1: L, x2: W - R, y1: y(tick), y2: y(tick), class: 'grid' }));
    chart.append(svg('text', { x: L - 6, y: y(tick) + 4, class: 'tick', 'text-anchor': 'end' }, fmt(tick, 3)));
  }
  chart.append(svg('text', { x: (L + W - R) / 2, y: H - 8, class: 'axis', 'text-anchor': 'middle' }, 'temperature, °C'));
  chart.append(svg('text', { x: 14, y: (T + H - B) / 2, class: 'axis', 'text-anchor': 'middle', transform: `rotate(-90 14 ${(T + H - B) / 2})` }, 'error, % FS'));
  if (target !== null) {
    chart.append(svg('line', { x1: L, x2: W - R, y1: y(target), y2: y(target), class: 'target', 'data-target': target }));
    chart.append(svg('text', { x: W - R, y: y(target) - 5, class: 'target-label', 'text-anchor': 'end' }, `target ${fmt(target, 3)} % FS`));
  }
  const line = (key, cls) => {
    const d = points.map((p, i) => `${i ? 'L' : 'M'} ${x(p.temp_c)} ${y(p[key])}`).join(' ');
    chart.append(svg('path', { d, class: cls }));
    for (const p of points) {
      const dot = svg('circle', { cx: x(p.temp_c), cy: y(p[key]), r: 3.5, class: `${cls}-dot`, 'data-temp': p.temp_c, 'data-value': p[key] });
      dot.append(svg('title', {}, `${fmt(p.temp_c, 3)} °C: ${fmt(p[key], 3)} % FS`));
      chart.append(dot);
    }
  };
  if (points.every((p) => num(p.rss_pct_fs) !== null)) line('rss_pct_fs', 'sweep-rss');
  line('worst_case_pct_fs', 'sweep-worst');
  const legendY = T - 8;
  chart.append(svg('line', { x1: L, x2: L + 18, y1: legendY - 4, y2: legendY - 4, class: 'sweep-worst' }));
  chart.append(svg('text', { x: L + 22, y: legendY, class: 'label' }, 'worst case'));
  chart.append(svg('line', { x1: L + 110, x2: L + 128, y1: legendY - 4, y2: legendY - 4, class: 'sweep-rss' }));
  chart.append(svg('text', { x: L + 132, y: legendY, class: 'label' }, 'RSS'));
  box.append(chart);
}

/** The Bode points of a design's filter report (`design.filter.bode`), in order of frequency. */
function bodeOf(design) {
  const filter = isObject(design) && isObject(design.filter) ? design.filter : null;
  const points = filter && Array.isArray(filter.bode) ? filter.bode : [];
  return points.filter((p) => isObject(p) && num(p.frequency_hz) > 0 && num(p.magnitude_db) !== null && num(p.phase_deg) !== null)
    .sort((a, b) => a.frequency_hz - b.frequency_hz);
}

/**
 * The frequency response of the whole chain, sensor to ADC pin: gain (dB)
 * and phase (degrees) against frequency on a log scale, from the core's AC
 * analysis (`design.filter.bode`), with the chain's corner and, where the
 * need gives a sample rate, half of it (Nyquist) marked. Hidden when the
 * design has no filter report.
 */
export function renderBode(design, need) {
  const box = $('bode-chart');
  clear(box);
  const points = bodeOf(design);
  $('bode-box').hidden = points.length < 2;
  if (points.length < 2) { $('bode-note').textContent = ''; return; }
  const filter = design.filter;
  const corner = num(filter.corner_hz);
  const rate = num(((need && need.adc) || {}).sample_rate_hz);
  const nyquist = rate !== null && rate > 0 ? rate / 2 : null;
  const W = widthOf(box); const L = 64; const R = 16; const T = 26; const gap = 40; const B = 50;
  const magH = 190; const phaseH = 130; const H = T + magH + gap + phaseH + B;
  const fLo = points[0].frequency_hz; const fHi = points[points.length - 1].frequency_hz;
  const lf = (f) => Math.log10(f);
  const x = (f) => L + ((lf(f) - lf(fLo)) / (lf(fHi) - lf(fLo))) * (W - L - R);
  const dbs = points.map((p) => p.magnitude_db);
  let dLo = Math.min(...dbs); let dHi = Math.max(...dbs);
  const dPad = (dHi - dLo) * 0.06 || 1; dLo -= dPad; dHi += dPad;
  const magTop = T; const magBottom = T + magH;
  const phaseTop = magBottom + gap; const phaseBottom = phaseTop + phaseH;
  const yMag = (v) => magBottom - ((v - dLo) / (dHi - dLo)) * magH;
  const yPhase = (v) => phaseBottom - ((v + 180) / 360) * phaseH;
  const chart = svg('svg', { viewBox: `0 0 ${W} ${H}`, width: W, height: H, class: 'chart bode', role: 'img', 'aria-label': 'frequency response of the chain: gain in dB and phase in degrees against frequency, with the corner and the Nyquist frequency marked' });
  chart.append(svg('title', {}, 'Bode plot of the whole chain from the sensor to the ADC pin'));
  // Decades on the frequency axis, labelled with SI prefixes.
  const decades = [];
  for (let d = Math.ceil(lf(fLo) - 1e-9); d <= lf(fHi) + 1e-9; d += 1) decades.push(10 ** d);
  const step = decades.length > (W < 480 ? 4 : 7) ? 2 : 1;
  decades.forEach((f, i) => {
    for (const [y1, y2] of [[magTop, magBottom], [phaseTop, phaseBottom]]) chart.append(svg('line', { x1: x(f), x2: x(f), y1, y2, class: 'grid' }));
    if (i % step === 0) chart.append(svg('text', { x: x(f), y: phaseBottom + 16, class: 'tick', 'text-anchor': 'middle' }, eng(f, 'Hz', 3)));
  });
  for (const tick of niceTicks(dLo, dHi, 4)) {
    chart.append(svg('line', { x1: L, x2: W - R, y1: yMag(tick), y2: yMag(tick), class: 'grid' }));
    chart.append(svg('text', { x: L - 6, y: yMag(tick) + 4, class: 'tick', 'text-anchor': 'end' }, fmt(tick, 3)));
  }
  for (const tick of [-180, -90, 0, 90, 180]) {
    chart.append(svg('line', { x1: L, x2: W - R, y1: yPhase(tick), y2: yPhase(tick), class: 'grid' }));
    chart.append(svg('text', { x: L - 6, y: yPhase(tick) + 4, class: 'tick', 'text-anchor': 'end' }, String(tick)));
  }
  chart.append(svg('text', { x: (L + W - R) / 2, y: H - 8, class: 'axis', 'text-anchor': 'middle' }, 'frequency, Hz (log scale)'));
  const ylabel = (text, mid) => chart.append(svg('text', { x: 14, y: mid, class: 'axis', 'text-anchor': 'middle', transform: `rotate(-90 14 ${mid})` }, text));
  ylabel('gain, dB', (magTop + magBottom) / 2);
  ylabel('phase, °', (phaseTop + phaseBottom) / 2);
  // The curves: one path each, broken where the phase wraps at ±180°.
  let magPath = '';
  let phasePath = '';
  points.forEach((p, i) => {
    magPath += `${i ? 'L' : 'M'} ${x(p.frequency_hz).toFixed(2)} ${yMag(p.magnitude_db).toFixed(2)} `;
    const wraps = i > 0 && Math.abs(p.phase_deg - points[i - 1].phase_deg) > 180;
    phasePath += `${i && !wraps ? 'L' : 'M'} ${x(p.frequency_hz).toFixed(2)} ${yPhase(p.phase_deg).toFixed(2)} `;
  });
  chart.append(svg('path', { d: magPath.trim(), class: 'bode-mag' }));
  chart.append(svg('path', { d: phasePath.trim(), class: 'bode-phase' }));
  for (const p of points) {
    const dot = svg('circle', {
      cx: x(p.frequency_hz), cy: yMag(p.magnitude_db), r: 1.8, class: 'bode-point',
      'data-frequency': p.frequency_hz, 'data-db': p.magnitude_db, 'data-deg': p.phase_deg,
    });
    dot.append(svg('title', {}, `${eng(p.frequency_hz, 'Hz', 4)}: ${fmt(p.magnitude_db, 4)} dB, ${fmt(p.phase_deg, 4)}°`));
    chart.append(dot);
  }
  // Marks: the corner and Nyquist, each a labelled vertical line.
  const notes = [];
  const mark = (f, cls, text, row) => {
    if (f === null) return;
    if (f < fLo || f > fHi) { notes.push(`${text} is outside the plotted range.`); return; }
    chart.append(svg('line', { x1: x(f), x2: x(f), y1: magTop - 4, y2: phaseBottom, class: `mark ${cls}`, 'data-hz': f }));
    const anchor = x(f) > W - R - 110 ? 'end' : 'start';
    chart.append(svg('text', { x: x(f) + (anchor === 'end' ? -4 : 4), y: magTop + 12 + row * 15, class: `mark-label ${cls}`, 'text-anchor': anchor }, text));
  };
  mark(corner, 'corner', corner === null ? '' : `corner ${eng(corner, 'Hz', 3)}`, 0);
  mark(nyquist, 'nyquist', nyquist === null ? '' : `Nyquist ${eng(nyquist, 'Hz', 3)}`, 1);
  const rejection = num(filter.rejection_at_nyquist_db);
  const said = [
    corner !== null ? `Corner (−3 dB) of the whole chain: ${eng(corner, 'Hz', 4)}.` : '',
    nyquist !== null && rejection !== null ? `At half the sample rate (${eng(nyquist, 'Hz', 4)}) the chain is ${fmt(rejection, 3)} dB down.` : '',
    nyquist === null ? 'No sample rate in the need, so no Nyquist mark.' : '',
    ...notes,
    'From the core\'s AC analysis of the whole chain at nominal values (each op-amp section one pole at its gain-bandwidth); the gain includes the chain\'s own gain.',
  ];
  $('bode-note').textContent = said.filter(Boolean).join(' ');
  box.append(chart);
}
