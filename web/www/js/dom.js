// DOM helpers shared by every part of the page.
//
// Safety rule of the whole page: text that comes from a user, a CSV, a
// report or the URL is only ever put on the page with textContent, an
// input's value, or an SVG text node; never as markup. `el` and `svg` are
// the only ways the page builds elements, and neither takes markup.

/** The element with this id. */
export const $ = (id) => document.getElementById(id);

/**
 * A new HTML element. `attrs.text` becomes its textContent, `className`
 * its class, `on<event>` a listener; other attributes are set as strings
 * (true gives an empty attribute; undefined, null and false are left out).
 */
export function el(tag, attrs, ...children) {
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

/** A new SVG element; `text` (if given) becomes its text node. */
export function svg(tag, attrs, text) {
  const node = document.createElementNS(SVG_NS, tag);
  for (const [name, value] of Object.entries(attrs || {})) {
    if (value !== undefined && value !== null) node.setAttribute(name, String(value));
  }
  if (text !== undefined) node.textContent = String(text);
  return node;
}

/** Remove every child of a node. */
export function clear(node) {
  while (node.firstChild) node.removeChild(node.firstChild);
}

/**
 * A status line: its text, its tone (good, warn, bad or none) and who
 * wrote it (`by`: 'solve' for the search's own messages, which the next
 * search replaces; none for the page's, which it keeps in front).
 */
export function setStatus(id, text, tone, by) {
  const node = $(id);
  node.textContent = text || '';
  node.dataset.tone = tone || '';
  if (by) node.dataset.by = by;
  else delete node.dataset.by;
}

/** A plain object (not an array, not null). */
export function isObject(value) {
  return value !== null && typeof value === 'object' && !Array.isArray(value);
}

/** The value if it is a finite number, else null. */
export function num(value) {
  return typeof value === 'number' && Number.isFinite(value) ? value : null;
}
