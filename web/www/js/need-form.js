// The need form. Its fields come from the core (`need_fields`): every need
// key with its label, unit, kind, choices, default and hint, so the page
// holds no list of its own. The core is also the judge of a need: its
// structured error names the key, which marks the field, and the message
// uses the field's label.
import { $, clear, el, isObject, num, setStatus } from './dom.js';
import { eng, fmt } from './format.js';
import { saveSoon } from './storage.js';
import { engines, hooks, state, updateSolveButton } from './state.js';

// Headings of the form's groups (the need's sections); a section the page
// does not know is shown under its own name.
const SECTION_TITLES = {
  sensor: 'Sensor', adc: 'ADC', supply: 'Supply', accuracy: 'Accuracy', search: 'Search', stock: 'Stock use',
};

// A plain decimal number, read by the page as JavaScript reads it; any
// other text of a number field goes to the core.
const PLAIN_NUMBER = /^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/;

/** The id of a field's input: `f-adc-high_v` for `adc.high_v`. */
export function fieldId(key) {
  return `f-${key.replace('.', '-')}`;
}

/** The description of a need key, or undefined. */
export function fieldFor(key) {
  return state.fields.find((f) => f.key === key);
}

function split(key) {
  const at = key.indexOf('.');
  return [key.slice(0, at), key.slice(at + 1)];
}

function defaultText(f) {
  if (f.default === null || f.default === undefined) return '';
  return Array.isArray(f.default) ? f.default.join(', ') : String(f.default);
}

function inputFor(f, id) {
  const choices = Array.isArray(f.choices) ? f.choices.map(String) : [];
  if (f.kind === 'choice') {
    const select = el('select', { id, 'data-key': f.key });
    for (const option of choices) select.append(el('option', { value: option, text: option }));
    return select;
  }
  if (f.kind === 'boolean') return el('input', { id, type: 'checkbox', 'data-key': f.key });
  if (f.kind === 'choices') {
    const group = el('div', { id, className: 'checks', role: 'group', 'aria-label': f.label, 'data-key': f.key });
    for (const option of choices) {
      const box = el('input', { type: 'checkbox', value: option, id: `${id}-${option}` });
      group.append(el('label', { className: 'check', for: `${id}-${option}` }, box, document.createTextNode(option)));
    }
    return group;
  }
  return el('input', {
    id, type: 'text', 'data-key': f.key, spellcheck: 'false',
    placeholder: f.required ? undefined : defaultText(f) || undefined,
    inputmode: f.kind === 'number' ? 'decimal' : (f.kind === 'integer' ? 'numeric' : undefined),
  });
}

/** Build the form from the core's field descriptions. */
export function buildForm(fields) {
  state.fields = fields.filter((f) => isObject(f) && typeof f.key === 'string' && f.key.includes('.'));
  const form = $('need-form');
  clear(form);
  const groups = new Map();
  for (const f of state.fields) {
    const section = typeof f.section === 'string' ? f.section : split(f.key)[0];
    if (!groups.has(section)) {
      const set = el('fieldset', { className: 'need-group' }, el('legend', { text: SECTION_TITLES[section] || section }));
      groups.set(section, set);
      form.append(set);
    }
    const id = fieldId(f.key);
    const wrap = el('div', { className: `field kind-${f.kind}`, 'data-key': f.key });
    wrap.append(el('label', { for: id, text: String(f.label || f.key) }));
    const input = inputFor(f, id);
    input.setAttribute('aria-describedby', `${id}-hint ${id}-error`);
    wrap.append(input);
    wrap.append(el('span', { className: 'unit', text: f.unit ? String(f.unit) : '' }));
    const optional = !f.required && (f.default === null || f.default === undefined);
    const words = typeof f.hint === 'string' ? plainKeys(f.hint) : '';
    const note = optional ? `Optional.${words ? ` ${words}` : ''}` : words;
    wrap.append(el('span', { className: 'hint', id: `${id}-hint`, text: note }));
    wrap.append(el('span', { className: 'understood', id: `${id}-understood`, 'data-testid': `understood-${f.key}` }));
    if (typeof f.help === 'string' && f.help) {
      const more = el('details', { className: 'help' }, el('summary', { text: 'More about this field' }));
      more.append(el('p', { text: plainKeys(f.help) }));
      const facts = [
        f.unit ? `Unit: ${f.unit}.` : '',
        f.default !== null && f.default !== undefined ? `Default: ${defaultText(f)}.` : (f.required ? 'Required.' : 'Optional, no default.'),
        typeof f.typical === 'string' && f.typical ? `Typical: ${f.typical}.` : '',
      ].filter(Boolean).join(' ');
      if (facts) more.append(el('p', { className: 'facts', text: facts }));
      wrap.append(more);
    }
    wrap.append(el('span', { className: 'field-error', id: `${id}-error`, 'aria-live': 'polite' }));
    groups.get(section).append(wrap);
  }
  form.addEventListener('input', onFormInput);
  form.addEventListener('change', onFormInput);
  form.addEventListener('submit', (e) => e.preventDefault());
  // Enter in a field: check now and solve now, without the pause.
  form.addEventListener('keydown', (e) => {
    if (e.key !== 'Enter' || !(e.target instanceof HTMLInputElement) || e.target.type === 'checkbox') return;
    e.preventDefault();
    clearTimeout(needTimer);
    validateNeed().then(() => { if (state.needValid && hooks.solveNow) hooks.solveNow(); });
  });
}

/** Show a need object in the form; a key it lacks shows the default. */
export function fillForm(need) {
  for (const f of state.fields) {
    const [section, name] = split(f.key);
    const values = isObject(need[section]) ? need[section] : {};
    showValue(f, values[name]);
  }
}

/** Show one key's value in its field (undefined or null: the default). */
function showValue(f, given) {
  const value = given === null ? undefined : given;
  const input = $(fieldId(f.key));
  const shown = value === undefined ? f.default : value;
  if (f.kind === 'boolean') input.checked = shown === true;
  else if (f.kind === 'choices') {
    const chosen = Array.isArray(shown) ? shown.map(String) : [];
    for (const box of input.querySelectorAll('input')) box.checked = chosen.includes(box.value);
  } else if (f.kind === 'choice') {
    const options = [...input.options].map((o) => o.value);
    if (shown !== undefined && shown !== null && !options.includes(String(shown))) {
      input.append(el('option', { value: String(shown), text: String(shown) }));
    }
    input.value = shown === undefined || shown === null ? (options[0] || '') : String(shown);
  } else {
    input.value = value === undefined ? '' : String(value);
  }
}

/**
 * Set need keys to new values (a suggestion of the core: `{key, value}` in
 * need-file keys, null taking a key out). Only those fields change; every
 * other field keeps what the user entered, as typed. Resolves once the
 * core has checked the need.
 */
export async function applyNeedChanges(changes) {
  for (const { key, value } of changes) {
    const f = fieldFor(key);
    if (f) { showValue(f, value); continue; }
    // A key the form does not show: kept in the need as it is.
    const [section, name] = split(key);
    if (!isObject(state.need[section])) state.need[section] = {};
    if (value === null) delete state.need[section][name];
    else state.need[section][name] = value;
  }
  state.formDirty = true;
  state.need = collectForm().need;
  saveSoon();
  clearTimeout(needTimer);
  await validateNeed();
}

/**
 * A text of the core (a hint, a message, a suggestion) with each need key
 * it names (`adc.high_v`, or `high_v` alone) replaced by the field's
 * label in quotes, so the page speaks in the form's words.
 */
export function plainKeys(text) {
  if (typeof text !== 'string' || !state.fields.length) return text;
  return text.replace(/`?\b(?:(sensor|adc|supply|accuracy|search|stock)\.)?([a-z][a-z0-9]*(?:_[a-z0-9]+)+|[a-z]+)\b`?/g, (whole, section, name) => {
    const f = section ? fieldFor(`${section}.${name}`) : uniqueField(name);
    if (!f || !f.label) return whole;
    // A plain word that happens to be a key's last part (`label`, `bits`)
    // stays a word unless it was written as a key.
    if (!section && !name.includes('_') && !whole.startsWith('`')) return whole;
    return `“${f.label}”`;
  });
}

/** The one field whose key ends in `name`, or undefined when none or several do. */
function uniqueField(name) {
  const found = state.fields.filter((f) => f.key.slice(f.key.indexOf('.') + 1) === name);
  return found.length === 1 ? found[0] : undefined;
}

/**
 * The form as a need object, keeping keys the form does not show (the core
 * reports unknown ones). Number fields are read by the core
 * (`read_numbers`: SI prefixes and the field's unit accepted, `25 mV` is
 * 0.025), and what it understood is shown beside the field. Resolves with
 * {need, problems}; a problem is {key, detail} for a text the core could
 * not read as that field's number.
 */
async function readForm() {
  const { need, problems, numberTexts } = collectForm();
  const understood = {};
  if (Object.keys(numberTexts).length) {
    const read = await engines.checker.call('read_numbers', JSON.stringify(numberTexts));
    for (const [key, text] of Object.entries(numberTexts)) {
      const [section, name] = split(key);
      const answer = isObject(read[key]) ? read[key] : { detail: 'not read' };
      if (num(answer.value) !== null) {
        need[section][name] = answer.value;
        understood[key] = String(answer.understood);
      } else {
        need[section][name] = text;
        problems.push({ key, detail: String(answer.detail) });
      }
    }
  }
  showUnderstood(understood);
  return { need, problems };
}

/**
 * The form as a need object at once, without the core: number fields
 * whose text is not a plain decimal number hold their text, listed in
 * `numberTexts` for the core to read.
 */
function collectForm() {
  const need = JSON.parse(JSON.stringify(state.need || {}));
  const problems = [];
  const numberTexts = {};
  for (const f of state.fields) {
    const [section, name] = split(f.key);
    const values = isObject(need[section]) ? need[section] : {};
    need[section] = values;
    const input = $(fieldId(f.key));
    if (f.kind === 'boolean') values[name] = input.checked;
    else if (f.kind === 'choices') values[name] = [...input.querySelectorAll('input:checked')].map((b) => b.value);
    else if (f.kind === 'choice') values[name] = input.value;
    else {
      const text = input.value.trim();
      if (text === '') {
        delete values[name];
        if (f.required) problems.push({ key: f.key, detail: 'a value is needed' });
      } else if (f.kind === 'text') {
        values[name] = input.value;
      } else if (PLAIN_NUMBER.test(text) && (f.kind === 'number' || Number.isInteger(Number(text)))) {
        values[name] = Number(text);
      } else {
        numberTexts[f.key] = text;
        values[name] = text;
      }
    }
  }
  return { need, problems, numberTexts };
}

/** Beside each field whose text was more than a plain number: what it was read as. */
function showUnderstood(understood) {
  for (const f of state.fields) {
    const node = document.getElementById(`${fieldId(f.key)}-understood`);
    if (node) node.textContent = understood[f.key] ? `read as ${understood[f.key]}` : '';
  }
}

/** The label a message uses for a key: the field's label, or the key. */
export function labelOf(key) {
  const f = fieldFor(key);
  return f && f.label ? String(f.label) : key;
}

function markFields(problems) {
  for (const node of document.querySelectorAll('.field.invalid')) node.classList.remove('invalid');
  for (const node of document.querySelectorAll('.field-error')) node.textContent = '';
  for (const p of problems) {
    const input = fieldFor(p.key) && $(fieldId(p.key));
    if (!input) continue;
    input.closest('.field').classList.add('invalid');
    $(`${fieldId(p.key)}-error`).textContent = plainKeys(p.detail);
  }
}

let needTimer = null;
let needCheckSeq = 0;

function onFormInput() {
  state.formDirty = true;
  // The need follows the form at once (texts the core has yet to read as
  // numbers held as text), so a reload or a share link never lags.
  state.need = collectForm().need;
  saveSoon();
  clearTimeout(needTimer);
  needTimer = setTimeout(() => validateNeed(), 150);
  if (hooks.settled) hooks.settled();
}

/**
 * The message for a need error from the core: with the field's label when
 * the error names a key the form shows, else the core's whole message.
 */
function needMessage(info) {
  const key = typeof info.key === 'string' ? info.key : null;
  if (key && fieldFor(key) && typeof info.detail === 'string') return `${labelOf(key)}: ${plainKeys(info.detail)}`;
  return plainKeys(String(info.message));
}

/** Ask the core whether the need is complete and consistent. */
export async function validateNeed() {
  const seq = ++needCheckSeq;
  let read;
  try {
    read = await readForm();
  } catch (error) {
    if (seq === needCheckSeq) setStatus('need-status', error.message, 'bad');
    return;
  }
  if (seq !== needCheckSeq) return;
  state.formDirty = false;
  const { need, problems } = read;
  if (JSON.stringify(need) !== JSON.stringify(state.need)) {
    state.need = need;
    saveSoon();
  }
  if (hooks.settled) hooks.settled();
  if (problems.length) {
    markFields(problems);
    state.needValid = false;
    const list = problems.map((p) => `${labelOf(p.key)}: ${plainKeys(p.detail)}`).join('; ');
    setStatus('need-status', `${problems.length === 1 ? 'One value needs' : `${problems.length} values need`} attention: ${list}`, 'bad');
    updateSolveButton();
    return;
  }
  try {
    const needText = JSON.stringify(state.need);
    const checked = await engines.checker.call('check_need', needText, 'need');
    if (seq !== needCheckSeq) return;
    state.derived = isObject(checked) && isObject(checked.derived) ? checked.derived : null;
    state.needValid = true;
    state.checkedNeed = needText;
    markFields([]);
    setStatus('need-status', 'The need is complete and consistent.', 'good');
    showDerived();
  } catch (error) {
    if (seq !== needCheckSeq) return;
    state.needValid = false;
    const info = error.info || {};
    markFields(typeof info.key === 'string' ? [{ key: info.key, detail: String(info.detail ?? info.message) }] : []);
    setStatus('need-status', needMessage(info.message ? info : { message: error.message }), 'bad');
    $('derived').textContent = '';
  }
  updateSolveButton();
}

/** The figures the core derives from the need, beside the form. */
export function showDerived() {
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
