// The six shelf tables, by the file names the core reads (the stock CSV
// contract), with the labels of the page's tabs.
export const TABLES = [
  { file: 'resistors.csv', label: 'Resistors' },
  { file: 'opamps.csv', label: 'Op-amps' },
  { file: 'references.csv', label: 'References' },
  { file: 'inamps.csv', label: 'In-amps' },
  { file: 'capacitors.csv', label: 'Capacitors' },
  { file: 'networks.csv', label: 'Networks' },
];

/**
 * The table an uploaded file is meant for, judged by its name alone
 * (`my-opamps.csv` is opamps.csv); null when the name does not say.
 */
export function tableForName(name) {
  const lower = name.toLowerCase().split(/[\\/]/).pop();
  for (const t of TABLES) if (lower === t.file) return t.file;
  if (lower.includes('capacitor')) return 'capacitors.csv';
  if (lower.includes('network')) return 'networks.csv';
  if (lower.includes('inamp') || lower.includes('in-amp')) return 'inamps.csv';
  if (lower.includes('opamp') || lower.includes('op-amp')) return 'opamps.csv';
  if (lower.includes('resist')) return 'resistors.csv';
  if (lower.includes('ref')) return 'references.csv';
  return null;
}
