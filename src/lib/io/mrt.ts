/**
 * The byte-by-byte described ASCII table that astronomy journals (the AAS "machine-readable
 * table") and the astronomical data centre (a catalogue's ReadMe with its data files) accept:
 * fixed-width rows, and a header whose "Byte-by-byte Description" gives each column's first
 * and last byte, Fortran-style format (An text, In integer, Fw.d fixed, Ew.d exponent), unit,
 * label and explanation. Conventions followed (the data centre's standards for ReadMe files and
 * the AAS guide to machine-readable tables): units in the data centre's syntax, `---` for
 * none, a logarithmic quantity as its unit in square brackets (`[Msun/yr]`); an explanation
 * starting with `?` marks a column whose blank fields are missing values; text is ASCII.
 *
 * Values are written at a stated precision (journals ask for values rounded to what their
 * uncertainties support, not the float's every digit): each float column has its number of
 * decimals, chosen by the caller or, with `decimals: 'auto'`, the fewest that write every value
 * exactly (its shortest round-trip decimal form), up to a cap.
 */
import { createWriteStream } from 'node:fs';
import { once } from 'node:events';
import type { Column, Table } from './table.ts';
import { PosterityError } from '../core/problems.ts';

export interface MrtColumnSpec {
  /** The table column. */
  name: string;
  /** Label in the description (default: the column name); no spaces. */
  label?: string;
  /** Unit in the data centre's syntax (`---` for none); see `cdsUnit` for VOUnits. */
  unit: string;
  explanation: string;
  /** Float columns: decimals after the point, or `auto` (fewest that are exact, at most `maxDecimals`). */
  decimals?: number | 'auto';
  maxDecimals?: number;
  /** Float columns: exponent form with this many mantissa decimals (for values spanning many decades). */
  exponent?: number;
}

export interface MrtLayoutColumn {
  spec: MrtColumnSpec;
  column: Column;
  format: string;
  start: number;
  end: number;
  width: number;
  nullable: boolean;
  text: (i: number) => string;
}

export interface MrtDocument {
  title: string;
  authors: string;
  /** One line: what the table holds. */
  table: string;
  /** Data file name, as the description names it. */
  dataFile: string;
  /** Paragraphs of the description/abstract (ReadMe only). */
  description?: string[];
  /** Numbered notes, referenced as "(n)" from explanations. */
  notes?: string[];
}

/** A VOUnit (as in the catalogue's column dictionary) in the data centre's unit syntax. */
export function cdsUnit(voUnit: string): string {
  const u = voUnit.trim();
  if (u === '') return '---';
  // a difference of log10 values (a spread in dex): the log of a dimensionless ratio
  if (u === 'dex') return '[-]';
  const log = /^(?:log|dex)\((.*)\)$/.exec(u);
  if (log) return `[${cdsUnit(log[1])}]`;
  return u
    .replace(/\bsolMass\b/g, 'Msun')
    .replace(/\bsolLum\b/g, 'Lsun')
    .replace(/\bsolRad\b/g, 'Rsun')
    .replace(/\bAngstrom\b/g, '0.1nm')
    .replace(/\*\*/g, '')
    .replace(/\^/g, '');
}

const RULE = '-'.repeat(80);
const DOUBLE_RULE = '='.repeat(80);

/** Digits after the point in the shortest decimal form of v that reads back as v. */
function exactDecimals(v: number): number {
  const s = String(Math.abs(v));
  const m = /^(\d+)(?:\.(\d+))?(?:e([+-]\d+))?$/.exec(s);
  if (!m) return 0;
  const frac = m[2]?.length ?? 0;
  const exp = m[3] ? Number(m[3]) : 0;
  return Math.max(0, frac - exp);
}

function isAscii(s: string): boolean {
  return /^[\x20-\x7e]*$/.test(s);
}

function expText(v: number, d: number): string {
  const [m, e] = v.toExponential(d).split('e');
  const n = Number(e);
  return `${m}e${n < 0 ? '-' : '+'}${String(Math.abs(n)).padStart(2, '0')}`;
}

/** Formats, byte positions and cell text of every column; problems for text that is not ASCII. */
export function mrtLayout(table: Table, specs: MrtColumnSpec[], file: string): MrtLayoutColumn[] {
  const out: MrtLayoutColumn[] = [];
  let pos = 1;
  for (const spec of specs) {
    const column = table.columns.find((c) => c.name === spec.name);
    if (!column) throw new PosterityError({ severity: 'error', file, column: spec.name, message: 'no such column in the table' });
    const n = table.numRows;
    const valid = (i: number) => !column.valid || column.valid[i] !== 0;
    let text: (i: number) => string;
    let format: string;
    let nullable = false;
    let width = 1;
    if (column.kind === 'string') {
      const v = column.values as string[];
      for (let i = 0; i < n; i++) {
        const s = valid(i) ? v[i] : '';
        if (!isAscii(s)) throw new PosterityError({ severity: 'error', file, column: spec.name, row: i + 1, message: 'text outside printable ASCII cannot go into a byte-by-byte table', got: JSON.stringify(s) });
        width = Math.max(width, s.length);
      }
      text = (i) => (valid(i) ? v[i] : '');
      format = `A${width}`;
    } else if (column.kind === 'float64' || column.kind === 'float32') {
      const v = column.values as Float64Array;
      let d: number;
      if (spec.exponent !== undefined) d = spec.exponent;
      else if (typeof spec.decimals === 'number') d = spec.decimals;
      else {
        d = 0;
        const cap = spec.maxDecimals ?? 6;
        for (let i = 0; i < n && d < cap; i++) if (valid(i) && Number.isFinite(v[i])) d = Math.max(d, Math.min(cap, exactDecimals(v[i])));
      }
      const fmt = spec.exponent !== undefined ? (x: number) => expText(x, d) : (x: number) => fixedText(x, d);
      text = (i) => (valid(i) && Number.isFinite(v[i]) ? fmt(v[i]) : '');
      for (let i = 0; i < n; i++) {
        const t = text(i);
        if (t === '') nullable = true;
        else width = Math.max(width, t.length);
      }
      format = spec.exponent !== undefined ? `E${width}.${d}` : `F${width}.${d}`;
    } else {
      const v = column.values;
      text = (i) => (valid(i) ? String(v[i]) : '');
      for (let i = 0; i < n; i++) {
        const t = text(i);
        if (t === '') nullable = true;
        else width = Math.max(width, t.length);
      }
      format = `I${width}`;
    }
    out.push({ spec, column, format, start: pos, end: pos + width - 1, width, nullable, text });
    pos += width + 1;
  }
  return out;
}

/** Fixed-point text at d decimals; "-0.00" written as "0.00". */
function fixedText(x: number, d: number): string {
  const s = x.toFixed(d);
  return /^-0\.?0*$/.test(s) ? s.slice(1) : s;
}

/** Wrap an explanation into lines of at most `width` characters (words kept whole). */
function wrap(text: string, width: number): string[] {
  const words = text.split(/\s+/).filter(Boolean);
  const lines: string[] = [];
  let line = '';
  for (const w of words) {
    if (line && line.length + 1 + w.length > width) {
      lines.push(line);
      line = w;
    } else line = line ? `${line} ${w}` : w;
  }
  if (line) lines.push(line);
  return lines.length ? lines : [''];
}

/** The "Byte-by-byte Description" block of a layout. */
export function byteByByte(layout: MrtLayoutColumn[], dataFile: string): string[] {
  const endW = String(layout[layout.length - 1]?.end ?? 1).length;
  const fmtW = Math.max(6, ...layout.map((c) => c.format.length));
  const unitW = Math.max(5, ...layout.map((c) => c.spec.unit.length));
  const labelW = Math.max(5, ...layout.map((c) => (c.spec.label ?? c.spec.name).length));
  const lines = [`Byte-by-byte Description of file: ${dataFile}`, RULE];
  const bytesW = 2 * endW + 1;
  lines.push(`${'Bytes'.padStart(bytesW)} ${'Format'.padEnd(fmtW)} ${'Units'.padEnd(unitW)} ${'Label'.padEnd(labelW)} Explanations`);
  lines.push(RULE);
  const indent = bytesW + fmtW + unitW + labelW + 4;
  for (const c of layout) {
    const bytes = c.start === c.end ? String(c.end).padStart(bytesW) : `${String(c.start).padStart(endW)}-${String(c.end).padStart(endW)}`;
    const head = `${bytes} ${c.format.padEnd(fmtW)} ${c.spec.unit.padEnd(unitW)} ${(c.spec.label ?? c.spec.name).padEnd(labelW)} `;
    const expl = (c.nullable ? '? ' : '') + c.spec.explanation;
    const parts = wrap(expl, Math.max(20, 80 - indent - 2));
    lines.push(head + parts[0]);
    // continuation lines start with spaces under the explanation column
    for (const p of parts.slice(1)) lines.push(' '.repeat(indent + 2) + p);
  }
  lines.push(RULE);
  return lines;
}

function notesBlock(notes: string[] | undefined): string[] {
  if (!notes?.length) return [];
  const out: string[] = [];
  notes.forEach((n, k) => {
    const head = `Note (${k + 1}): `;
    const parts = wrap(n, 80 - head.length);
    out.push(head + parts[0], ...parts.slice(1).map((p) => ' '.repeat(head.length) + p));
  });
  out.push(RULE);
  return out;
}

async function writeRows(path: string, layout: MrtLayoutColumn[], numRows: number, header: string | null): Promise<void> {
  const out = createWriteStream(path);
  const write = async (s: string) => {
    if (!out.write(s)) await once(out, 'drain');
  };
  if (header !== null) await write(header);
  let buf = '';
  for (let i = 0; i < numRows; i++) {
    let line = '';
    for (let j = 0; j < layout.length; j++) {
      const c = layout[j];
      const t = c.text(i);
      const cell = c.column.kind === 'string' ? t.padEnd(c.width) : t.padStart(c.width);
      line += j ? ` ${cell}` : cell;
    }
    buf += line + '\n';
    if (buf.length > 1 << 20) {
      await write(buf);
      buf = '';
    }
  }
  await write(buf);
  out.end();
  await once(out, 'finish');
}

/**
 * The data centre's form: a ReadMe (title, authors, description, file summary, byte-by-byte
 * description, notes) and the data file it describes.
 */
export async function writeCdsReadme(readmePath: string, dataPath: string, table: Table, specs: MrtColumnSpec[], doc: MrtDocument): Promise<MrtLayoutColumn[]> {
  const layout = mrtLayout(table, specs, doc.dataFile);
  const lrecl = layout[layout.length - 1].end;
  const fileW = Math.max(12, doc.dataFile.length);
  const lines: string[] = [];
  for (const l of wrap(doc.title, 80)) lines.push(l);
  for (const l of wrap(doc.authors, 76)) lines.push(`    ${l}`);
  lines.push(DOUBLE_RULE);
  if (doc.description?.length) {
    lines.push('Description:');
    for (const p of doc.description) {
      for (const l of wrap(p, 76)) lines.push(`    ${l}`);
      lines.push('');
    }
  }
  lines.push('File Summary:', RULE);
  lines.push(`${'FileName'.padEnd(fileW)}  Lrecl  Records  Explanations`, RULE);
  lines.push(`${'ReadMe'.padEnd(fileW)}  ${'80'.padStart(5)}  ${'.'.padStart(7)}  This file`);
  lines.push(`${doc.dataFile.padEnd(fileW)}  ${String(lrecl).padStart(5)}  ${String(table.numRows).padStart(7)}  ${doc.table}`);
  lines.push(RULE, '');
  lines.push(...byteByByte(layout, doc.dataFile));
  lines.push(...notesBlock(doc.notes));
  lines.push('', DOUBLE_RULE, '(End)');
  const { writeFile } = await import('node:fs/promises');
  await writeFile(readmePath, lines.join('\n') + '\n');
  await writeRows(dataPath, layout, table.numRows, null);
  return layout;
}

/** The journal's form: one file with the title, authors and table lines, the description, notes, then the rows. */
export async function writeMrt(path: string, table: Table, specs: MrtColumnSpec[], doc: MrtDocument): Promise<MrtLayoutColumn[]> {
  const layout = mrtLayout(table, specs, doc.dataFile);
  const head: string[] = [];
  const field = (k: string, v: string) => {
    const parts = wrap(v, 80 - k.length - 1);
    head.push(`${k} ${parts[0]}`, ...parts.slice(1).map((p) => ' '.repeat(k.length + 1) + p));
  };
  field('Title:', doc.title);
  field('Authors:', doc.authors);
  field('Table:', doc.table);
  head.push(DOUBLE_RULE);
  head.push(...byteByByte(layout, doc.dataFile));
  head.push(...notesBlock(doc.notes));
  await writeRows(path, layout, table.numRows, head.join('\n') + '\n');
  return layout;
}
