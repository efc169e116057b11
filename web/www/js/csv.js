// Writing a shelf table back to CSV text. Reading CSV is the core's job
// (the `read_stock_table` export); the page never parses CSV itself.

const PLAIN_NUMBER = /^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/;

/**
 * One CSV field: quoted when it holds a comma, quote or line break. With
 * `spreadsheet`, a cell starting with = + - @ (or a tab or carriage return)
 * that is not a plain number gets a leading `'`, so a spreadsheet shows it
 * as text instead of running it as a formula (the OWASP advice on CSV
 * injection, common practice).
 */
function csvField(value, spreadsheet) {
  let text = String(value);
  if (spreadsheet && /^[=+\-@\t\r]/.test(text) && !PLAIN_NUMBER.test(text)) text = `'${text}`;
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/**
 * A table `{header, rows}` as CSV text, and the 1-based line each row
 * starts on (a quoted line break inside a cell moves the rows below it),
 * so a message from the core that names a line can be traced to a row.
 * Options: `spreadsheet` escapes formula-like cells (for downloads only:
 * the core must see the cells as they are).
 */
export function csvWithLines(table, { spreadsheet = false } = {}) {
  const lines = [];
  let line = 1;
  const out = [];
  [table.header, ...table.rows].forEach((row, i) => {
    const text = row.map((cell) => csvField(cell, spreadsheet)).join(',');
    if (i > 0) lines.push(line);
    out.push(text);
    line += 1 + (text.match(/\r\n|\r|\n/g) || []).length;
  });
  return { text: `${out.join('\n')}\n`, rowLines: lines };
}

/** A table as CSV text; see `csvWithLines`. */
export function toCsv(table, options) {
  return csvWithLines(table, options).text;
}
