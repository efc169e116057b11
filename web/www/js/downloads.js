// The download buttons: the result's files as the core wrote them (BOM,
// SPICE netlist, schematic, design file, report), the shelf table on show,
// and the project.
import { $ } from './dom.js';
import { toCsv } from './csv.js';
import { download } from './io.js';
import { projectObject } from './storage.js';
import { state } from './state.js';

/** Wire every download button of the page. */
export function wireDownloads() {
  $('dl-bom').addEventListener('click', () => download('spanfit-bom.csv', state.viewed.artifacts.bom_csv, 'text/csv'));
  $('dl-spice').addEventListener('click', () => download('spanfit.cir', state.viewed.artifacts.spice, 'text/plain'));
  $('dl-svg').addEventListener('click', () => download('spanfit-schematic.svg', state.viewed.artifacts.svg, 'image/svg+xml'));
  $('dl-design').addEventListener('click', () => {
    download('spanfit-design.json', `${JSON.stringify(state.viewed.design.file, null, 2)}\n`, 'application/json');
  });
  $('dl-json').addEventListener('click', () => {
    const value = state.viewed.index < 0 ? state.result.bundle.report : { design: state.viewed.design };
    download('spanfit-report.json', `${JSON.stringify(value, null, 2)}\n`, 'application/json');
  });
  // For a spreadsheet: formula-like cells are escaped.
  $('stock-download').addEventListener('click', () => {
    const table = state.stock[state.activeTable];
    if (table) download(state.activeTable, toCsv(table, { spreadsheet: true }), 'text/csv');
  });
  $('project-export').addEventListener('click', () => download('spanfit-project.json', `${JSON.stringify(projectObject(), null, 2)}\n`, 'application/json'));
}
