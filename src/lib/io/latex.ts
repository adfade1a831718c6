/**
 * A LaTeX table ready to paste into a paper: a `table` float with a `tabular` in the base
 * LaTeX kernel only (no packages), text escaped, and estimates with asymmetric errors as
 * `$m^{+u}_{-l}$`.
 */

const SPECIAL: Record<string, string> = {
  '\\': '\\textbackslash{}',
  '{': '\\{',
  '}': '\\}',
  '$': '\\$',
  '&': '\\&',
  '#': '\\#',
  '^': '\\textasciicircum{}',
  _: '\\_',
  '%': '\\%',
  '~': '\\textasciitilde{}',
};

/** Characters outside ASCII that the table may meet, in plain LaTeX. */
const UNICODE: Record<string, string> = {
  '−': '$-$',
  '–': '--',
  '—': '---',
  '×': '$\\times$',
  '±': '$\\pm$',
  '☉': '$_\\odot$',
  '⊙': '$_\\odot$',
  'σ': '$\\sigma$',
  'τ': '$\\tau$',
  'δ': '$\\delta$',
  'α': '$\\alpha$',
  'β': '$\\beta$',
  'λ': '$\\lambda$',
  'μ': '$\\mu$',
  '²': '$^2$',
  '°': '$^\\circ$',
  'Å': '\\AA{}',
  '′': "'",
  '″': "''",
};

/** Text with LaTeX's special characters escaped; other non-ASCII characters mapped where known, else `?`. */
export function latexText(s: string): string {
  let out = '';
  for (const ch of s) {
    if (SPECIAL[ch]) out += SPECIAL[ch];
    else if (ch.charCodeAt(0) < 128) out += ch;
    else out += UNICODE[ch] ?? '?';
  }
  return out;
}

/** Decimals that show two significant digits of the smaller error (common practice). */
export function errorDecimals(lo: number, hi: number): number {
  const e = Math.min(Math.abs(lo), Math.abs(hi)) || Math.max(Math.abs(lo), Math.abs(hi));
  if (!(e > 0) || !Number.isFinite(e)) return 2;
  return Math.max(0, Math.min(6, 1 - Math.floor(Math.log10(e))));
}

const fixed = (x: number, d: number) => {
  const s = x.toFixed(d);
  return /^-0\.?0*$/.test(s) ? s.slice(1) : s;
};

/** `$m^{+u}_{-l}$` from a median and its interval [lo, hi]; `\ldots` when missing. */
export function latexEstimate(median: number, lo: number, hi: number): string {
  if (![median, lo, hi].every(Number.isFinite)) return '\\ldots';
  const d = errorDecimals(median - lo, hi - median);
  return `$${fixed(median, d)}^{+${fixed(hi - median, d)}}_{-${fixed(median - lo, d)}}$`;
}

export interface LatexTable {
  caption: string;
  label: string;
  /** Column alignment per column: l, c or r. */
  align: string;
  /** Header cells, already LaTeX. */
  head: string[];
  /** Body rows of LaTeX cells; a string row is a full-width group heading. */
  rows: (string[] | string)[];
  /** A note under the table (already LaTeX). */
  note?: string;
}

export function latexTable(t: LatexTable): string {
  const n = t.head.length;
  const lines = [
    '\\begin{table}',
    '\\centering',
    `\\caption{${t.caption}}`,
    `\\label{${t.label}}`,
    `\\begin{tabular}{${t.align}}`,
    '\\hline',
    `${t.head.join(' & ')} \\\\`,
    '\\hline',
  ];
  for (const r of t.rows) {
    if (typeof r === 'string') lines.push(`\\multicolumn{${n}}{l}{${r}} \\\\`);
    else lines.push(`${r.join(' & ')} \\\\`);
  }
  lines.push('\\hline', '\\end{tabular}');
  if (t.note) lines.push('', `\\par\\smallskip{\\small ${t.note}}`);
  lines.push('\\end{table}');
  return lines.join('\n') + '\n';
}
