// spanfit page: the need form, the stock shelf, and the result views.
//
// All engineering happens in the WebAssembly module (the spanfit core),
// which runs in two workers: a "checker" for validation and small calls,
// and a "solver" for searches. This file only moves text between the form,
// the workers and the views.
//
// Safety rule of this file: text that comes from a user, a CSV, a report or
// the URL is only ever put on the page with textContent, an input's value,
// or an SVG text node; never as markup.
'use strict';

(function spanfitPage() {
  const STORAGE_KEY = 'spanfit-project-v1';
  const PROJECT_FORMAT = 'spanfit-project';
  const MAX_UPLOAD_BYTES = 4 * 1024 * 1024;
  const TABLES = [
    { file: 'resistors.csv', label: 'Resistors', detect: ['value_ohms', 'series', 'tcr_ppm_per_c'] },
    { file: 'opamps.csv', label: 'Op-amps', detect: ['channels', 'gbw_mhz', 'vos_max_uv'] },
    { file: 'references.csv', label: 'References', detect: ['volts', 'dropout_v', 'initial_pct'] },
    { file: 'inamps.csv', label: 'In-amps', detect: ['gain_resistor_ohms', 'gain_error_pct'] },
  ];
  const TOPOLOGIES = ['non-inverting', 'inverting', 'difference', 'instrumentation'];
  const SERIES = ['E6', 'E12', 'E24', 'E48', 'E96', 'E192'];

  // The need, key by key (DESIGN.md section 3), as the form shows it.
  const NEED_FIELDS = [
    { section: 'sensor', title: 'Sensor', fields: [
      { key: 'label', label: 'Label', kind: 'text' },
      { key: 'signal_low_v', label: 'Signal at range bottom', unit: 'V', kind: 'number' },
      { key: 'signal_high_v', label: 'Signal at range top', unit: 'V', kind: 'number' },
      { key: 'quantity_low', label: 'Quantity at bottom', unit: '(unit below)', kind: 'number', optional: true },
      { key: 'quantity_high', label: 'Quantity at top', unit: '(unit below)', kind: 'number', optional: true },
      { key: 'quantity_unit', label: 'Quantity unit', kind: 'text', optional: true },
      { key: 'output', label: 'Output', kind: 'select', options: ['differential', 'single-ended'] },
      { key: 'common_mode_v', label: 'Common mode', unit: 'V', kind: 'number', optional: true, hint: 'differential sensors' },
      { key: 'source_ohms', label: 'Source resistance', unit: 'Ω', kind: 'number' },
    ] },
    { section: 'adc', title: 'ADC', fields: [
      { key: 'low_v', label: 'Window bottom', unit: 'V', kind: 'number' },
      { key: 'high_v', label: 'Window top', unit: 'V', kind: 'number' },
      { key: 'bits', label: 'Resolution', unit: 'bits', kind: 'integer' },
      { key: 'margin_pct', label: 'Margin each end', unit: '% of span', kind: 'number' },
    ] },
    { section: 'supply', title: 'Supply', fields: [
      { key: 'positive_v', label: 'Positive rail', unit: 'V', kind: 'number' },
      { key: 'negative_v', label: 'Negative rail', unit: 'V', kind: 'number' },
      { key: 'tolerance_pct', label: 'Rail tolerance', unit: '%', kind: 'number' },
      { key: 'ratiometric', label: 'ADC reference is this supply', kind: 'bool' },
    ] },
    { section: 'accuracy', title: 'Accuracy', fields: [
      { key: 'max_error_pct_fs', label: 'Error target', unit: '% FS', kind: 'number' },
      { key: 'basis', label: 'Basis', kind: 'select', options: ['worst-case', 'rss', 'yield'] },
      { key: 'yield_pct', label: 'Yield wanted', unit: '%', kind: 'number', optional: true, hint: 'basis = yield' },
      { key: 'temp_min_c', label: 'Coldest', unit: '°C', kind: 'number' },
      { key: 'temp_max_c', label: 'Hottest', unit: '°C', kind: 'number' },
      { key: 'calibration', label: 'Calibration', kind: 'select', options: ['none', 'offset', 'two-point'] },
      { key: 'bandwidth_hz', label: 'Signal bandwidth', unit: 'Hz', kind: 'number' },
    ] },
    { section: 'search', title: 'Search', fields: [
      { key: 'max_stages', label: 'Stages at most', unit: '1–3', kind: 'integer' },
      { key: 'topologies', label: 'Topologies', kind: 'list', options: TOPOLOGIES },
      { key: 'resistor_series', label: 'Resistor series', kind: 'list', options: SERIES },
      { key: 'objective', label: 'Minimise', kind: 'select', options: ['cost', 'error', 'parts'] },
      { key: 'bom_line_cost', label: 'Cost per BOM line', unit: 'per line', kind: 'number' },
      { key: 'max_parts', label: 'Parts at most', kind: 'integer' },
      { key: 'time_limit_ms', label: 'Time budget', unit: 'ms', kind: 'integer' },
    ] },
    { section: 'stock', title: 'Stock use', fields: [
      { key: 'only', label: 'Use only parts on the shelf', kind: 'bool' },
      { key: 'path', label: 'Stock folder', kind: 'text', optional: true, hint: 'command line only; this page uses the shelf' },
    ] },
  ];

  const $ = (id) => document.getElementById(id);
  const bundle = window.SPANFIT_BUNDLE || null;

  // ---------------------------------------------------------------- helpers

  function el(tag, attrs, ...children) {
    const node = document.createElement(tag);
    for (const [name, value] of Object.entries(attrs || {})) {
      if (value === undefined || value === null || value === false) continue;
      if (name === 'text') node.textContent = String(value);
      else if (name === 'className') node.className = value;
      else if (name.startsWith('on')) node.addEventListener(name.slice(2), value);
      else node.setAttribute(name, value === true ? '' : String(value));
    }
    for (const child of children) if (child) node.append(child);
    return node;
  }

  const SVG_NS = 'http://www.w3.org/2000/svg';
  function svg(tag, attrs, text) {
    const node = document.createElementNS(SVG_NS, tag);
    for (const [name, value] of Object.entries(attrs || {})) {
      if (value !== undefined && value !== null) node.setAttribute(name, String(value));
    }
    if (text !== undefined) node.textContent = String(text);
    return node;
  }

  function clear(node) {
    while (node.firstChild) node.removeChild(node.firstChild);
  }

  function isObject(value) {
    return value !== null && typeof value === 'object' && !Array.isArray(value);
  }

  function num(value) {
    return typeof value === 'number' && Number.isFinite(value) ? value : null;
  }

  // Significant-figure formatting used for every figure on the page.
  function fmt(value, digits = 4) {
    const x = num(value);
    if (x === null) return '—';
    if (x === 0) return '0';
    return String(Number(x.toPrecision(digits)));
  }

  const PREFIXES = [[1e9, 'G'], [1e6, 'M'], [1e3, 'k'], [1, ''], [1e-3, 'm'], [1e-6, 'µ'], [1e-9, 'n'], [1e-12, 'p']];
  function eng(value, unit, digits = 4) {
    const x = num(value);
    if (x === null) return '—';
    if (x === 0) return `0 ${unit}`;
    const magnitude = Math.abs(x);
    for (const [scale, prefix] of PREFIXES) {
      if (magnitude >= scale * 0.9995) return `${fmt(x / scale, digits)} ${prefix}${unit}`;
    }
    return `${fmt(x, digits)} ${unit}`;
  }

  function download(name, text, type) {
    const url = URL.createObjectURL(new Blob([text], { type }));
    const link = el('a', { href: url, download: name });
    document.body.append(link);
    link.click();
    link.remove();
    setTimeout(() => URL.revokeObjectURL(url), 10000);
  }

  function readFileText(file) {
    return new Promise((resolve, reject) => {
      if (file.size > MAX_UPLOAD_BYTES) {
        reject(new Error(`${file.name}: ${(file.size / 1048576).toFixed(1)} MB is more than this page takes (${MAX_UPLOAD_BYTES / 1048576} MB)`));
        return;
      }
      const reader = new FileReader();
      reader.onload = () => resolve(String(reader.result));
      reader.onerror = () => reject(new Error(`${file.name}: could not be read`));
      reader.readAsText(file);
    });
  }

  // UTF-8 text <-> base64url (RFC 4648 section 5), for the share link.
  function toBase64Url(text) {
    const bytes = new TextEncoder().encode(text);
    let binary = '';
    for (let i = 0; i < bytes.length; i += 0x8000) binary += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
    return btoa(binary).replace(/\+/g, '-').replace(/\//g, '_').replace(/=+$/, '');
  }

  function fromBase64Url(code) {
    if (!/^[A-Za-z0-9_-]*$/.test(code)) throw new Error('not base64url text');
    const padded = code.replace(/-/g, '+').replace(/_/g, '/') + '==='.slice((code.length + 3) % 4);
    const binary = atob(padded);
    const bytes = Uint8Array.from(binary, (c) => c.charCodeAt(0));
    return new TextDecoder('utf-8', { fatal: true }).decode(bytes);
  }

  function base64ToBytes(code) {
    const binary = atob(code);
    const bytes = new Uint8Array(binary.length);
    for (let i = 0; i < binary.length; i += 1) bytes[i] = binary.charCodeAt(i);
    return bytes;
  }

  // ---------------------------------------------------------------- CSV

  // RFC 4180 CSV: quoted fields may hold commas, quotes ("") and newlines.
  // Returns {header, rows} or throws an Error naming the line.
  function parseCsv(text, name) {
    const records = [];
    const lines = [];
    let field = '';
    let record = [];
    let quoted = false;
    let line = 1;
    let recordLine = 1;
    let i = 0;
    if (text.charCodeAt(0) === 0xfeff) i = 1;
    for (; i < text.length; i += 1) {
      const c = text[i];
      if (quoted) {
        if (c === '"') {
          if (text[i + 1] === '"') { field += '"'; i += 1; } else quoted = false;
        } else {
          if (c === '\n') line += 1;
          field += c;
        }
      } else if (c === '"') {
        if (field !== '') throw new Error(`${name}, line ${line}: a quote inside an unquoted field; quote the whole field`);
        quoted = true;
      } else if (c === ',') {
        record.push(field); field = '';
      } else if (c === '\n' || c === '\r') {
        if (c === '\r' && text[i + 1] === '\n') i += 1;
        record.push(field); field = '';
        records.push(record); lines.push(recordLine);
        record = [];
        line += 1;
        recordLine = line;
      } else {
        field += c;
      }
    }
    if (quoted) throw new Error(`${name}, line ${recordLine}: a quoted field is not closed`);
    if (field !== '' || record.length) { record.push(field); records.push(record); lines.push(recordLine); }
    const kept = [];
    records.forEach((r, k) => { if (!(r.length === 1 && r[0].trim() === '')) kept.push([r, lines[k]]); });
    if (!kept.length) throw new Error(`${name}: the file is empty; expected a header row`);
    const header = kept[0][0].map((h) => h.trim());
    const rows = [];
    for (const [r, at] of kept.slice(1)) {
      if (r.length !== header.length) {
        throw new Error(`${name}, line ${at}: ${r.length} fields, but the header has ${header.length}`);
      }
      rows.push(r);
    }
    return { header, rows };
  }

  function csvField(value) {
    const text = String(value);
    return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
  }

  function toCsv(table) {
    return [table.header, ...table.rows].map((r) => r.map(csvField).join(',')).join('\n') + '\n';
  }

  function tableForUpload(name, parsed) {
    const lower = name.toLowerCase();
    for (const t of TABLES) if (lower === t.file) return t.file;
    if (lower.includes('inamp') || lower.includes('in-amp')) return 'inamps.csv';
    if (lower.includes('opamp') || lower.includes('op-amp')) return 'opamps.csv';
    if (lower.includes('resist')) return 'resistors.csv';
    if (lower.includes('ref')) return 'references.csv';
    for (const t of TABLES) if (t.detect.some((c) => parsed.header.includes(c))) return t.file;
    return null;
  }

  // ---------------------------------------------------------------- engine

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

  // One worker hosting the module; replaced when the module traps (a panic)
  // or when a search is stopped where the cancel token cannot reach it.
  class Engine {
    constructor(name, onState) {
      this.name = name;
      this.onState = onState;
      this.nextId = 1;
      this.pending = new Map();
      this.restarts = 0;
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
        this.fail(new Error(`the ${this.name} worker failed: ${event.message || 'script error'}`), true);
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
        const error = new Error(message.message);
        error.fatal = !!message.fatal;
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
        const error = new Error('the solver was restarted');
        error.stopped = true;
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

    async call(fn, ...args) {
      await this.ready;
      const id = this.nextId++;
      return new Promise((resolve, reject) => {
        this.pending.set(id, { resolve: (m) => resolve(m.value), reject });
        this.worker.postMessage({ type: 'call', id, fn, args });
      });
    }

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

    // Ask the running search to stop. Returns 'token' when the search will
    // return its best design so far, 'restart' when the worker had to go.
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

  // ---------------------------------------------------------------- state

  const state = {
    need: {},
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

  function projectObject() {
    const stock = {};
    for (const [file, table] of Object.entries(state.stock)) stock[file] = toCsv(table);
    return { format: PROJECT_FORMAT, version: 1, need: state.need, stock };
  }

  let saveTimer = null;
  function saveSoon() {
    clearTimeout(saveTimer);
    saveTimer = setTimeout(saveNow, 200);
  }
  function saveNow() {
    clearTimeout(saveTimer);
    try {
      localStorage.setItem(STORAGE_KEY, JSON.stringify(projectObject()));
    } catch (_) {
      setStatus('run-status', 'This browser does not keep the project between visits (storage is off or full).', 'warn');
    }
  }

  // Validates a project object (from storage or a file); throws with a
  // message naming what is wrong.
  function readProject(value, name) {
    if (!isObject(value) || value.format !== PROJECT_FORMAT) {
      throw new Error(`${name}: not a spanfit project (expected "format": "${PROJECT_FORMAT}")`);
    }
    if (!isObject(value.need)) throw new Error(`${name}, key \`need\`: expected an object of need sections`);
    if (!isObject(value.stock)) throw new Error(`${name}, key \`stock\`: expected an object mapping file names to CSV text`);
    const stock = {};
    for (const [file, text] of Object.entries(value.stock)) {
      if (typeof text !== 'string') throw new Error(`${name}, key \`stock.${file}\`: expected CSV text`);
      stock[file] = parseCsv(text, file);
    }
    return { need: value.need, stock };
  }

  function loadStored() {
    let text = null;
    try { text = localStorage.getItem(STORAGE_KEY); } catch (_) { return null; }
    if (!text) return null;
    try {
      return readProject(JSON.parse(text), 'saved project');
    } catch (error) {
      setStatus('run-status', `The saved project could not be read and was set aside: ${error.message}`, 'warn');
      return null;
    }
  }

  function setStatus(id, text, tone) {
    const node = $(id);
    node.textContent = text || '';
    node.dataset.tone = tone || '';
  }

  // ---------------------------------------------------------------- form

  function fieldId(section, key) {
    return `f-${section}-${key}`;
  }

  function buildForm() {
    const form = $('need-form');
    for (const group of NEED_FIELDS) {
      const set = el('fieldset', { className: 'need-group' }, el('legend', { text: group.title }));
      for (const f of group.fields) {
        const id = fieldId(group.section, f.key);
        const keyPath = `${group.section}.${f.key}`;
        const wrap = el('div', { className: `field kind-${f.kind}`, 'data-key': keyPath });
        const label = el('label', { for: id, text: f.label });
        wrap.append(label);
        let input;
        if (f.kind === 'select') {
          input = el('select', { id, 'data-key': keyPath });
          for (const option of f.options) input.append(el('option', { value: option, text: option }));
        } else if (f.kind === 'bool') {
          input = el('input', { id, type: 'checkbox', 'data-key': keyPath });
        } else if (f.kind === 'list') {
          input = el('div', { id, className: 'checks', role: 'group', 'data-key': keyPath });
          for (const option of f.options) {
            const box = el('input', { type: 'checkbox', value: option, id: `${id}-${option}` });
            input.append(el('label', { className: 'check', for: `${id}-${option}` }, box, document.createTextNode(option)));
          }
        } else {
          input = el('input', {
            id, type: 'text', 'data-key': keyPath, spellcheck: 'false',
            inputmode: f.kind === 'text' ? undefined : (f.kind === 'integer' ? 'numeric' : 'decimal'),
          });
        }
        wrap.append(input);
        if (f.unit) wrap.append(el('span', { className: 'unit', text: f.unit }));
        const note = [f.optional ? 'optional' : '', f.hint || ''].filter(Boolean).join('; ');
        if (note) wrap.append(el('span', { className: 'hint', text: note }));
        wrap.append(el('span', { className: 'field-error', id: `${id}-error`, 'aria-live': 'polite' }));
        set.append(wrap);
      }
      form.append(set);
    }
    form.addEventListener('input', onFormInput);
    form.addEventListener('change', onFormInput);
    form.addEventListener('submit', (e) => e.preventDefault());
  }

  function fillForm(need) {
    for (const group of NEED_FIELDS) {
      const section = isObject(need[group.section]) ? need[group.section] : {};
      for (const f of group.fields) {
        const input = $(fieldId(group.section, f.key));
        const value = section[f.key];
        if (f.kind === 'bool') input.checked = value === true;
        else if (f.kind === 'list') {
          const chosen = Array.isArray(value) ? value.map(String) : [];
          for (const box of input.querySelectorAll('input')) box.checked = chosen.includes(box.value);
        } else if (f.kind === 'select') {
          if (value !== undefined && !f.options.includes(String(value))) {
            input.append(el('option', { value: String(value), text: String(value) }));
          }
          input.value = value === undefined ? f.options[0] : String(value);
        } else {
          input.value = value === undefined || value === null ? '' : String(value);
        }
      }
    }
  }

  // Reads the form into a need object, keeping keys the form does not show
  // (the core reports unknown ones). Returns {need, problems}.
  function readForm() {
    const need = JSON.parse(JSON.stringify(state.need || {}));
    const problems = [];
    for (const group of NEED_FIELDS) {
      const section = isObject(need[group.section]) ? need[group.section] : {};
      need[group.section] = section;
      for (const f of group.fields) {
        const input = $(fieldId(group.section, f.key));
        const keyPath = `${group.section}.${f.key}`;
        if (f.kind === 'bool') section[f.key] = input.checked;
        else if (f.kind === 'list') section[f.key] = [...input.querySelectorAll('input:checked')].map((b) => b.value);
        else if (f.kind === 'select') section[f.key] = input.value;
        else {
          const text = input.value.trim();
          if (text === '') {
            delete section[f.key];
            if (!f.optional) problems.push({ key: keyPath, message: 'a value is needed' });
          } else if (f.kind === 'text') {
            section[f.key] = input.value;
          } else {
            const value = Number(text);
            if (!Number.isFinite(value) || !/^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/.test(text)) {
              section[f.key] = text;
              problems.push({ key: keyPath, message: `"${text}" is not a number` });
            } else if (f.kind === 'integer' && !Number.isInteger(value)) {
              section[f.key] = value;
              problems.push({ key: keyPath, message: 'expected a whole number' });
            } else {
              section[f.key] = value;
            }
          }
        }
      }
    }
    return { need, problems };
  }

  function markFields(problems) {
    for (const node of document.querySelectorAll('.field.invalid')) node.classList.remove('invalid');
    for (const node of document.querySelectorAll('.field-error')) node.textContent = '';
    for (const p of problems) {
      const [section, key] = p.key.split('.');
      const input = $(fieldId(section, key));
      if (!input) continue;
      input.closest('.field').classList.add('invalid');
      $(`${fieldId(section, key)}-error`).textContent = p.message;
    }
  }

  let needTimer = null;
  let needCheckSeq = 0;
  function onFormInput() {
    const { need, problems } = readForm();
    state.need = need;
    saveSoon();
    clearTimeout(needTimer);
    needTimer = setTimeout(() => validateNeed(problems), 150);
  }

  // The core is the judge of a need; its message names the key, which is
  // used to mark the field.
  async function validateNeed(localProblems) {
    const seq = ++needCheckSeq;
    const problems = localProblems || readForm().problems;
    if (problems.length) {
      markFields(problems);
      state.needValid = false;
      setStatus('need-status', `${problems.length === 1 ? 'One value needs' : `${problems.length} values need`} attention: ${problems.map((p) => `${p.key}: ${p.message}`).join('; ')}`, 'bad');
      updateSolveButton();
      return;
    }
    try {
      const needText = JSON.stringify(state.need);
      const text = await engines.checker.call('check_need', needText, 'need');
      if (seq !== needCheckSeq) return;
      const checked = JSON.parse(text);
      state.derived = checked.derived || null;
      state.needValid = true;
      state.checkedNeed = needText;
      markFields([]);
      setStatus('need-status', 'The need is complete and consistent.', 'good');
      showDerived();
    } catch (error) {
      if (seq !== needCheckSeq) return;
      state.needValid = false;
      const keyMatch = /key `([^`]+)`/.exec(error.message);
      markFields(keyMatch ? [{ key: keyMatch[1], message: error.message }] : []);
      setStatus('need-status', error.message, 'bad');
      $('derived').textContent = '';
    }
    updateSolveButton();
  }

  function showDerived() {
    const d = state.derived;
    if (!d) { $('derived').textContent = ''; return; }
    const unit = state.need.sensor && state.need.sensor.quantity_unit;
    const parts = [
      `gain K = ${fmt(d.ideal_gain)}`,
      `offset B = ${eng(d.ideal_offset_v, 'V')}`,
      `output window ${eng(d.target_low_v, 'V')} to ${eng(d.target_high_v, 'V')}`,
      `1 LSB = ${eng(d.lsb_v, 'V')}`,
    ];
    if (num(d.volts_per_unit) !== null && unit) parts.push(`${eng(d.volts_per_unit, 'V')} per ${unit}`);
    $('derived').textContent = `Ideal: ${parts.join(' · ')}`;
  }

  // ---------------------------------------------------------------- stock

  function buildTabs() {
    const tabs = $('stock-tabs');
    clear(tabs);
    for (const t of TABLES) {
      const table = state.stock[t.file];
      const count = table ? table.rows.length : 0;
      tabs.append(el('button', {
        type: 'button', role: 'tab', className: 'tab', 'data-file': t.file,
        'aria-selected': state.activeTable === t.file ? 'true' : 'false',
        text: `${t.label} (${count})`,
        onclick: () => { state.activeTable = t.file; buildTabs(); renderStockTable(); },
      }));
    }
  }

  function renderStockTable() {
    const node = $('stock-table');
    clear(node);
    const file = state.activeTable;
    const table = state.stock[file];
    if (!table) {
      node.append(el('caption', { text: `No ${file} on the shelf. Upload one, or take the demo stock.` }));
      return;
    }
    node.append(el('caption', { text: file }));
    const head = el('tr', {}, el('th', { text: '#' }));
    for (const h of table.header) head.append(el('th', { text: h, scope: 'col' }));
    head.append(el('th', { text: '' }));
    node.append(el('thead', {}, head));
    const body = el('tbody');
    table.rows.forEach((row, r) => {
      const tr = el('tr', {}, el('td', { className: 'row-no', text: String(r + 2) }));
      row.forEach((cell, c) => {
        const input = el('input', {
          type: 'text', 'aria-label': `${table.header[c]}, row ${r + 1}`, spellcheck: 'false',
          'data-row': r, 'data-col': c,
        });
        input.value = cell;
        input.addEventListener('change', () => {
          table.rows[r][c] = input.value;
          stockChanged();
        });
        tr.append(el('td', {}, input));
      });
      tr.append(el('td', {}, el('button', {
        type: 'button', className: 'row-del', 'aria-label': `delete row ${r + 1}`, text: '✕',
        onclick: () => { table.rows.splice(r, 1); stockChanged(); renderStockTable(); },
      })));
      body.append(tr);
    });
    node.append(body);
  }

  function stockChanged() {
    saveSoon();
    buildTabs();
    validateStockSoon();
  }

  let stockTimer = null;
  let stockCheckSeq = 0;
  function validateStockSoon() {
    clearTimeout(stockTimer);
    stockTimer = setTimeout(validateStock, 150);
  }

  function stockJson() {
    const stock = {};
    for (const [file, table] of Object.entries(state.stock)) stock[file] = toCsv(table);
    return JSON.stringify(stock);
  }

  async function validateStock() {
    const seq = ++stockCheckSeq;
    if (!Object.keys(state.stock).length) {
      state.stockValid = false;
      setStatus('stock-status', 'The shelf is empty. Upload CSVs or take the demo stock.', 'bad');
      updateSolveButton();
      return;
    }
    try {
      const counts = JSON.parse(await engines.checker.call('check_stock', stockJson()));
      if (seq !== stockCheckSeq) return;
      state.stockValid = true;
      setStatus('stock-status', `Shelf read: ${counts.resistors} resistor values, ${counts.opamps} op-amps, ${counts.references} references, ${counts.inamps} in-amps.`, 'good');
    } catch (error) {
      if (seq !== stockCheckSeq) return;
      state.stockValid = false;
      setStatus('stock-status', error.message, 'bad');
      markBadCell(error.message);
    }
    updateSolveButton();
  }

  // Point at the cell a stock message names ("resistors.csv, line 3,
  // column unit_cost: ..."). Rows are sent one a line after the header, so
  // line n is row n - 2.
  function markBadCell(message) {
    const match = /^([\w.-]+\.csv), line (\d+)(?:, column ([\w]+))?/.exec(message);
    if (!match || !state.stock[match[1]]) return;
    const [, file, line, column] = match;
    if (state.activeTable !== file) {
      state.activeTable = file;
      buildTabs();
      renderStockTable();
    }
    const table = state.stock[file];
    const row = Number(line) - 2;
    const col = column === undefined ? -1 : table.header.indexOf(column);
    const selector = col >= 0 ? `input[data-row="${row}"][data-col="${col}"]` : `input[data-row="${row}"]`;
    for (const input of $('stock-table').querySelectorAll(selector)) input.classList.add('bad-cell');
  }

  async function onStockUpload(files) {
    const messages = [];
    let lastTable = null;
    for (const file of files) {
      try {
        const text = await readFileText(file);
        const parsed = parseCsv(text, file.name);
        const target = tableForUpload(file.name, parsed);
        if (!target) {
          throw new Error(`${file.name}: cannot tell which table this is; name it resistors.csv, opamps.csv, references.csv or inamps.csv`);
        }
        state.stock[target] = parsed;
        lastTable = target;
      } catch (error) {
        messages.push(error.message);
      }
    }
    if (lastTable) state.activeTable = lastTable;
    buildTabs();
    renderStockTable();
    saveSoon();
    if (messages.length) {
      ++stockCheckSeq;
      state.stockValid = false;
      setStatus('stock-status', messages.join(' · '), 'bad');
      updateSolveButton();
    } else {
      validateStock();
    }
  }

  // ---------------------------------------------------------------- solve

  function updateSolveButton() {
    const ready = engines.solver && engines.solverReady;
    $('solve').disabled = !ready || state.solving || !state.needValid || !state.stockValid;
    $('cancel').disabled = !state.solving;
  }

  async function runSolve(options = {}) {
    if (state.solving) return null;
    state.solving = true;
    updateSolveButton();
    const needText = JSON.stringify(state.need);
    const stock = stockJson();
    const derived = state.derived;
    $('progress').hidden = false;
    $('progress').removeAttribute('value');
    setStatus('progress-text', 'searching…');
    setStatus('run-status', '');
    $('run-status').dataset.cancelled = '';
    try {
      const reply = await engines.solver.solve(
        { need: needText, needName: 'need', stock, debugPauseMs: options.debugPauseMs || 0, debugPauseOnBest: !!options.debugPauseOnBest },
        (p) => {
          if (num(p.total) && p.total > 0) {
            $('progress').max = p.total;
            $('progress').value = p.done;
          }
          const best = num(p.best) === null ? 'no design yet' : `best cost so far ${fmt(p.best)}`;
          setStatus('progress-text', `${p.done} of ${p.total} structures · ${best}`);
          $('progress-text').dataset.seen = 'yes';
        },
      );
      const bundleValue = JSON.parse(reply.value);
      state.lastSolve = { elapsedMs: reply.elapsedMs, cancelled: reply.cancelled };
      $('run-status').dataset.cancelled = reply.cancelled ? 'yes' : 'no';
      $('run-status').dataset.elapsedMs = String(reply.elapsedMs);
      const when = `solved in ${fmt(reply.elapsedMs, 3)} ms in this browser`;
      setStatus('run-status', reply.cancelled ? `Stopped early: the best design found before the stop is shown (${when}).` : `Done: ${when}.`, reply.cancelled ? 'warn' : 'good');
      state.result = { bundle: bundleValue, need: JSON.parse(needText), derived, stock, cancelled: !!reply.cancelled };
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

  function onCancel() {
    const how = engines.solver.cancel();
    if (how === 'token') setStatus('progress-text', 'stopping; keeping the best design so far…');
  }

  // ---------------------------------------------------------------- results

  function errorOf(design) {
    const e = isObject(design) && isObject(design.error) ? design.error : {};
    return {
      worst: num(e.worst_case_pct_fs),
      rss: num(e.rss_pct_fs),
      yieldPct: num(e.yield_pct),
      budget: Array.isArray(e.budget) ? e.budget : [],
      histogram: isObject(e.histogram) ? e.histogram : null,
    };
  }

  function alternativeDesign(alt) {
    if (!isObject(alt)) return null;
    return isObject(alt.design) ? alt.design : alt;
  }

  function pointOf(alt) {
    const d = alternativeDesign(alt);
    const cost = num(alt.cost) ?? num(d && d.cost);
    const e = errorOf(d);
    const error = num(alt.basis_pct_fs) ?? num(d && d.error && d.error.basis_pct_fs) ?? num(alt.worst_case_pct_fs) ?? e.worst ?? e.rss;
    return cost === null || error === null ? null : { cost, error, design: d };
  }

  function showReport() {
    const { bundle: b } = state.result;
    const report = isObject(b.report) ? b.report : b;
    state.viewed = { design: report.design, artifacts: b.artifacts || {}, label: 'the chosen design', index: -1 };
    $('result').hidden = false;
    const banner = $('result-banner');
    if (report.status === 'ok') {
      banner.textContent = state.result.cancelled ? 'A design meets the need (the best found before the stop).' : 'A design meets the need.';
      banner.dataset.tone = 'good';
    } else if (state.result.cancelled) {
      banner.textContent = 'Stopped before any design was found. Run it again and let the search go on longer.';
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

  function renderViewed() {
    const report = isObject(state.result.bundle.report) ? state.result.bundle.report : state.result.bundle;
    const { design, artifacts, label } = state.viewed;
    $('viewing').textContent = design ? `Showing ${label}.` : '';
    $('design-details').hidden = !isObject(design);
    renderFigures(design, report);
    renderSchematic(artifacts.svg);
    renderBudget(design);
    renderPareto(report);
    renderHistogram(design);
    renderParts(design);
    renderBom(design, artifacts.bom_csv);
    renderFindings(design);
    const extra = { stages: design && design.stages, transfer: design && design.transfer, search: report.search };
    $('raw-extra').textContent = JSON.stringify(extra, null, 2);
    for (const id of ['dl-bom', 'dl-spice', 'dl-svg']) $(id).disabled = true;
    $('dl-bom').disabled = !(typeof artifacts.bom_csv === 'string' || (design && Array.isArray(design.parts)));
    $('dl-spice').disabled = typeof artifacts.spice !== 'string';
    $('dl-svg').disabled = typeof artifacts.svg !== 'string';
    $('dl-design').disabled = !(isObject(design) && isObject(design.file));
  }

  function inUnits(pct) {
    const report = state.result.bundle.report;
    const d = report && isObject(report.need) && num(report.need.lsb_v) ? report.need : state.result.derived;
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

  function niceTicks(lo, hi, count = 5) {
    if (!(hi > lo)) hi = lo + 1;
    const raw = (hi - lo) / count;
    const step10 = 10 ** Math.floor(Math.log10(raw));
    const step = [1, 2, 2.5, 5, 10].map((m) => m * step10).find((s) => s >= raw) || raw;
    const ticks = [];
    for (let v = Math.ceil(lo / step) * step; v <= hi + step * 1e-9; v += step) ticks.push(Number(v.toPrecision(12)));
    return ticks;
  }

  function renderBudget(design) {
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
    const target = num((state.result.need.accuracy || {}).max_error_pct_fs);
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

  function renderPareto(report) {
    const box = $('pareto-chart');
    clear(box);
    const alts = Array.isArray(report.alternatives) ? report.alternatives : [];
    const points = alts.map((alt, index) => ({ ...pointOf(alt), index })).filter((p) => p.cost !== undefined && p.cost !== null);
    const chosen = pointOf({ design: report.design });
    if (!points.length && !chosen) { box.append(el('p', { className: 'empty', text: 'No alternatives in this report.' })); return; }
    const all = chosen ? [...points, chosen] : points;
    const target = num((state.result.need.accuracy || {}).max_error_pct_fs);
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
    chart.append(svg('text', { x: (L + W - R) / 2, y: H - 8, class: 'axis', 'text-anchor': 'middle' }, `error on the ${(state.result.need.accuracy || {}).basis || 'chosen'} basis, % FS`));
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
    const viewedIndex = state.viewed ? state.viewed.index : -1;
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
      const pick = () => viewAlternative(isChosen ? -1 : index);
      dot.addEventListener('click', pick);
      dot.addEventListener('keydown', (ev) => { if (ev.key === 'Enter' || ev.key === ' ') { ev.preventDefault(); pick(); } });
      chart.append(dot);
    };
    points.forEach((p) => drawPoint(p, p.index, p.index === chosenIndex));
    if (chosen && chosenIndex < 0) drawPoint(chosen, -1, true);
    box.append(chart);
  }

  let analyzeSeq = 0;
  async function viewAlternative(index) {
    const report = isObject(state.result.bundle.report) ? state.result.bundle.report : state.result.bundle;
    if (index < 0) {
      state.viewed = { design: report.design, artifacts: state.result.bundle.artifacts || {}, label: 'the chosen design', index: -1 };
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
      const text = await engines.checker.call('analyze', JSON.stringify(state.result.need), 'need', state.result.stock, JSON.stringify(designFile));
      if (seq !== analyzeSeq || state.viewed.index !== index) return;
      const analysed = JSON.parse(text);
      state.viewed = { design: analysed.design || design, artifacts: analysed.artifacts || {}, label: state.viewed.label, index };
      renderViewed();
    } catch (error) {
      if (seq === analyzeSeq) $('viewing').textContent = `Showing ${state.viewed.label}; its full analysis failed: ${error.message}`;
    }
  }

  function renderHistogram(design) {
    const box = $('histogram-chart');
    clear(box);
    const h = errorOf(design).histogram;
    const edges = h && Array.isArray(h.bin_edges_pct_fs) ? h.bin_edges_pct_fs.map(num) : [];
    const counts = h && Array.isArray(h.counts) ? h.counts.map(num) : [];
    const usable = edges.length === counts.length + 1 && counts.length > 0 && !edges.includes(null) && !counts.includes(null);
    $('histogram-box').hidden = !usable;
    if (!usable) return;
    const target = num((state.result.need.accuracy || {}).max_error_pct_fs);
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

  function bomFromParts(design) {
    const lines = new Map();
    for (const part of design.parts || []) {
      const key = String(part.part_id ?? part.ref);
      const line = lines.get(key) || { part_id: key, kind: part.kind, value: part.value, refs: [], unit_cost: part.unit_cost };
      line.refs.push(part.ref);
      lines.set(key, line);
    }
    const header = ['part_id', 'kind', 'value', 'quantity', 'refs', 'unit_cost'];
    const rows = [...lines.values()].map((l) => [l.part_id, l.kind, l.value, l.refs.length, l.refs.join(' '), l.unit_cost].map((v) => String(v ?? '')));
    return { header, rows };
  }

  function currentBom() {
    const { design, artifacts } = state.viewed;
    if (typeof artifacts.bom_csv === 'string') {
      try { return parseCsv(artifacts.bom_csv, 'BOM'); } catch (_) { /* fall back */ }
    }
    return isObject(design) ? bomFromParts(design) : { header: [], rows: [] };
  }

  function renderBom() {
    const node = $('bom-table');
    clear(node);
    const bom = currentBom();
    node.append(el('thead', {}, el('tr', {}, ...bom.header.map((h) => el('th', { text: h, scope: 'col' })))));
    node.append(el('tbody', {}, ...bom.rows.map((r) => el('tr', {}, ...r.map((c) => el('td', { text: c }))))));
  }

  // ---------------------------------------------------------------- share, project

  function shareLink() {
    const base = location.href.split('#')[0];
    return `${base}#need=${toBase64Url(JSON.stringify(state.need))}`;
  }

  function needFromFragment() {
    if (!location.hash.startsWith('#need=')) return null;
    try {
      const need = JSON.parse(fromBase64Url(location.hash.slice('#need='.length)));
      if (!isObject(need)) throw new Error('expected an object of need sections');
      return need;
    } catch (error) {
      setStatus('run-status', `The link's need could not be read (${error.message}); the saved need is shown instead.`, 'warn');
      return null;
    }
  }

  async function importProject(file) {
    try {
      const text = await readFileText(file);
      let value;
      try { value = JSON.parse(text); } catch (error) { throw new Error(`${file.name}: not JSON (${error.message})`); }
      const project = readProject(value, file.name);
      state.need = project.need;
      state.stock = project.stock;
      fillForm(state.need);
      buildTabs();
      renderStockTable();
      saveNow();
      validateNeed();
      validateStock();
      setStatus('run-status', `Project ${file.name} loaded.`, 'good');
    } catch (error) {
      setStatus('run-status', error.message, 'bad');
    }
  }

  async function openNeedFile(file) {
    try {
      const text = await readFileText(file);
      const keys = JSON.parse(await engines.checker.call('need_keys', text, file.name));
      state.need = keys;
      fillForm(state.need);
      saveNow();
      validateNeed();
    } catch (error) {
      setStatus('need-status', error.message, 'bad');
    }
  }

  async function demoNeed() {
    const toml = await engines.checker.call('demo_need');
    return JSON.parse(await engines.checker.call('need_keys', toml, 'demo-need.toml'));
  }

  async function demoStock() {
    const files = JSON.parse(await engines.checker.call('demo_stock'));
    const stock = {};
    for (const [file, text] of Object.entries(files)) stock[file] = parseCsv(text, file);
    return stock;
  }

  // ---------------------------------------------------------------- start

  const engines = { checker: null, solver: null, solverReady: false, states: {} };

  // The badge shows the two workers together: ready when both are.
  function engineState(engine, what, detail) {
    const badge = $('engine-state');
    engines.states[engine.name] = what;
    if (engine.name === 'solver') engines.solverReady = what === 'ready';
    if (what === 'ready') $('version').textContent = engine.version || '';
    const states = Object.values(engines.states);
    if (what === 'failed') {
      badge.textContent = `solver failed: ${detail}`;
      badge.dataset.state = 'failed';
    } else if (states.length === 2 && states.every((x) => x === 'ready')) {
      badge.textContent = `solver ready (${bundle ? 'single file' : 'served'})`;
      badge.dataset.state = 'ready';
    } else if (!states.includes('failed')) {
      badge.textContent = what === 'restarting' ? 'restarting the solver…' : 'loading the solver…';
      badge.dataset.state = 'loading';
    }
    updateSolveButton();
  }

  function wire() {
    $('need-open').addEventListener('click', () => $('need-file').click());
    $('need-file').addEventListener('change', (e) => { if (e.target.files[0]) openNeedFile(e.target.files[0]); e.target.value = ''; });
    $('need-reset').addEventListener('click', async () => {
      state.need = await demoNeed();
      fillForm(state.need);
      saveNow();
      validateNeed();
    });
    $('stock-upload').addEventListener('click', () => $('stock-file').click());
    $('stock-file').addEventListener('change', (e) => { onStockUpload([...e.target.files]); e.target.value = ''; });
    $('stock-reset').addEventListener('click', async () => {
      state.stock = await demoStock();
      buildTabs();
      renderStockTable();
      stockChanged();
    });
    $('row-add').addEventListener('click', () => {
      const table = state.stock[state.activeTable];
      if (!table) return;
      table.rows.push(table.header.map(() => ''));
      renderStockTable();
      stockChanged();
    });
    $('stock-download').addEventListener('click', () => {
      const table = state.stock[state.activeTable];
      if (table) download(state.activeTable, toCsv(table), 'text/csv');
    });
    $('solve').addEventListener('click', () => runSolve());
    $('cancel').addEventListener('click', onCancel);
    $('project-export').addEventListener('click', () => download('spanfit-project.json', `${JSON.stringify(projectObject(), null, 2)}\n`, 'application/json'));
    $('project-import').addEventListener('click', () => $('project-file').click());
    $('project-file').addEventListener('change', (e) => { if (e.target.files[0]) importProject(e.target.files[0]); e.target.value = ''; });
    $('share').addEventListener('click', async () => {
      const link = shareLink();
      $('share-line').hidden = false;
      $('share-url').value = link;
      $('share-url').select();
      try { await navigator.clipboard.writeText(link); setStatus('run-status', 'Link copied.', 'good'); } catch (_) { /* selected for copying */ }
    });
    $('dl-bom').addEventListener('click', () => {
      const a = state.viewed.artifacts;
      download('spanfit-bom.csv', typeof a.bom_csv === 'string' ? a.bom_csv : toCsv(currentBom()), 'text/csv');
    });
    $('dl-spice').addEventListener('click', () => download('spanfit.cir', state.viewed.artifacts.spice, 'text/plain'));
    $('dl-svg').addEventListener('click', () => download('spanfit-schematic.svg', state.viewed.artifacts.svg, 'image/svg+xml'));
    $('dl-design').addEventListener('click', () => {
      download('spanfit-design.json', `${JSON.stringify(state.viewed.design.file, null, 2)}\n`, 'application/json');
    });
    $('dl-json').addEventListener('click', () => {
      const value = state.viewed.index < 0 ? state.result.bundle.report : { design: state.viewed.design };
      download('spanfit-report.json', `${JSON.stringify(value, null, 2)}\n`, 'application/json');
    });
    window.addEventListener('hashchange', () => {
      const need = needFromFragment();
      if (need) { state.need = need; fillForm(need); saveNow(); validateNeed(); }
    });
  }

  async function start() {
    buildForm();
    wire();
    engines.checker = new Engine('checker', engineState);
    engines.solver = new Engine('solver', engineState);
    const stored = loadStored();
    try {
      await engines.checker.ready;
    } catch (error) {
      engineState(engines.checker, 'failed', error.message);
      return;
    }
    state.need = stored ? stored.need : await demoNeed();
    state.stock = stored ? stored.stock : await demoStock();
    const linked = needFromFragment();
    if (linked) state.need = linked;
    fillForm(state.need);
    buildTabs();
    renderStockTable();
    saveNow();
    await Promise.all([validateNeed(), validateStock()]);
    document.body.dataset.ready = 'yes';
  }

  // A small handle for the page's own tests and for the curious.
  window.spanfitPage = {
    state,
    solve: (options) => runSolve(options),
    panic: () => engines.checker.call('diagnostic_panic'),
    call: (fn, ...args) => engines.checker.call(fn, ...args),
    shareLink,
    parseCsv,
    toCsv,
  };

  start();
}());
