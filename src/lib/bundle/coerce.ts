/**
 * Typing of input columns: a reader's column becomes the kind a bundle table
 * expects, and every value that does not fit is reported with its row and column,
 * with what was expected and what was found.
 */
import type { Column } from '../io/table.ts';
import type { Problem } from '../core/problems.ts';

/** At most this many problems of one kind per column are listed; the rest are counted. */
export const MAX_PER_COLUMN = 10;

export class ProblemSink {
  readonly problems: Problem[] = [];
  private groups = new Map<string, { first: Problem; n: number }>();
  /** Adds a problem; beyond MAX_PER_COLUMN of one kind (`key`, default file, column and message) they are only counted. */
  add(p: Problem, key?: string): void {
    const k = key ?? `${p.severity}|${p.file}|${p.field}|${p.column}|${p.message}`;
    const g = this.groups.get(k);
    if (g) g.n++;
    else this.groups.set(k, { first: p, n: 1 });
    if ((g?.n ?? 1) <= MAX_PER_COLUMN) this.problems.push(p);
  }
  /** Every listed problem, then one summary line per kind with more than MAX_PER_COLUMN. */
  finish(): Problem[] {
    const extra: Problem[] = [];
    for (const { first, n } of this.groups.values()) {
      if (n > MAX_PER_COLUMN) {
        const { row: _row, object: _object, got: _got, ...rest } = first;
        extra.push({ ...rest, message: `${first.message}: ${n - MAX_PER_COLUMN} more like this (${n} in all)` });
      }
    }
    return [...this.problems, ...extra];
  }
  get hasErrors(): boolean {
    return this.problems.some((p) => p.severity === 'error');
  }

  /** Cells (and whole columns) whose values could not be typed: later checks skip them. */
  private failed = new Map<string, Set<number> | 'all'>();
  failCell(file: string, column: string, row: number): void {
    const k = `${file}|${column}`;
    const f = this.failed.get(k);
    if (f === 'all') return;
    if (f) f.add(row);
    else this.failed.set(k, new Set([row]));
  }
  failColumn(file: string, column: string): void {
    this.failed.set(`${file}|${column}`, 'all');
  }
  /** True when the cell (1-based row), or with no row the whole column, was already reported as untypable. */
  isFailed(file: string, column: string, row?: number): boolean {
    const f = this.failed.get(`${file}|${column}`);
    if (f === undefined) return false;
    if (f === 'all') return true;
    return row !== undefined && f.has(row);
  }
  /** The 1-based rows of a column reported as untypable ('all' for the whole column). */
  failedRows(file: string, column: string): ReadonlySet<number> | 'all' | undefined {
    return this.failed.get(`${file}|${column}`);
  }
}

export interface Ctx {
  file: string;
  sink: ProblemSink;
  rowOffset: number;
}

function describe(col: Column, i: number): string {
  const v = col.values[i];
  return typeof v === 'string' ? JSON.stringify(v.length > 60 ? v.slice(0, 57) + '...' : v) : String(v);
}

const MISSING = new Set(['', 'nan', 'null', 'na', 'n/a']);

/** Text holding several values in one cell: a list, vector or array (a wide layout). */
export function looksLikeList(t: string): boolean {
  if (/^[[({].*[\])}]$/s.test(t)) return true;
  const parts = t.split(/[\s,;]+/).filter((s) => s !== '');
  return parts.length > 1 && parts.every((s) => s !== '' && !Number.isNaN(Number(s)));
}

/** Parses one text cell as a float: empty, NaN, null and NA are missing (NaN); inf and -inf are infinities. */
export function parseNumber(text: string): number {
  const t = text.trim();
  const low = t.toLowerCase();
  if (MISSING.has(low)) return NaN;
  if (low === 'inf' || low === '+inf' || low === 'infinity' || low === '+infinity') return Infinity;
  if (low === '-inf' || low === '-infinity') return -Infinity;
  // Number() accepts hex, binary and octal literals; a table cell is a decimal number
  if (/^[+-]?0[xob]/i.test(t)) return NaN;
  return Number(t);
}

/** Float64 values; empty text, NaN and nulls become NaN. */
export function toFloat64(col: Column, ctx: Ctx): Float64Array {
  const n = col.values.length;
  if (col.kind === 'float64' && !col.valid) return col.values as Float64Array;
  const out = new Float64Array(n);
  if (col.kind === 'string') {
    const vals = col.values as string[];
    let listReported = false;
    for (let i = 0; i < n; i++) {
      const v = parseNumber(vals[i]);
      if (Number.isNaN(v) && !MISSING.has(vals[i].trim().toLowerCase())) {
        const t = vals[i].trim();
        if (looksLikeList(t)) {
          if (!listReported) {
            ctx.sink.failColumn(ctx.file, col.name);
            ctx.sink.add({
              severity: 'error',
              file: ctx.file,
              row: ctx.rowOffset + i + 1,
              column: col.name,
              message: 'a cell holds a list of values (wide layout); store one value per cell, one posterior draw per row (long layout)',
              expected: 'one number per cell',
              got: describe(col, i),
            });
          }
          listReported = true;
        } else {
          ctx.sink.failCell(ctx.file, col.name, ctx.rowOffset + i + 1);
          ctx.sink.add({ severity: 'error', file: ctx.file, row: ctx.rowOffset + i + 1, column: col.name, message: 'not a number', expected: 'a number (empty or NaN for a missing value)', got: describe(col, i) });
        }
        out[i] = NaN;
        continue;
      }
      out[i] = v;
    }
    return out;
  }
  if (col.kind === 'bool') {
    ctx.sink.failColumn(ctx.file, col.name);
    ctx.sink.add({ severity: 'error', file: ctx.file, column: col.name, message: 'wrong type', expected: 'a number column', got: 'a boolean column' });
  }
  for (let i = 0; i < n; i++) {
    const v = col.values[i];
    out[i] = col.valid && col.valid[i] === 0 ? NaN : typeof v === 'bigint' ? Number(v) : (v as number);
  }
  return out;
}

/** Identifier text; 64-bit integers are printed exactly. */
export function toIds(col: Column, ctx: Ctx): string[] {
  const n = col.values.length;
  const out = new Array<string>(n);
  for (let i = 0; i < n; i++) {
    const v = col.values[i];
    let s: string;
    if (col.valid && col.valid[i] === 0) s = '';
    else if (typeof v === 'string') s = v.trim();
    else if (typeof v === 'bigint') s = v.toString();
    else if (typeof v === 'number') {
      if (col.kind === 'float64' || col.kind === 'float32') {
        // a float column cannot hold 64-bit ids exactly (2^53 + 1 reads as 2^53)
        if (!Number.isNaN(v) && !Number.isSafeInteger(v)) {
          ctx.sink.add({
            severity: 'error',
            file: ctx.file,
            row: ctx.rowOffset + i + 1,
            column: col.name,
            message: 'ids stored as floating-point numbers cannot be read exactly; store them as text or 64-bit integers',
            expected: 'a text or integer id column',
            got: `${col.kind} value ${String(v)}`,
          });
        }
      }
      s = Number.isNaN(v) ? '' : String(v);
    } else s = String(v);
    if (s === '') ctx.sink.add({ severity: 'error', file: ctx.file, row: ctx.rowOffset + i + 1, column: col.name, message: 'empty id', expected: 'a non-empty object id', got: 'an empty cell' });
    out[i] = s;
  }
  return out;
}

export function toStrings(col: Column): string[] {
  const n = col.values.length;
  if (col.kind === 'string' && !col.valid) return col.values as string[];
  const out = new Array<string>(n);
  for (let i = 0; i < n; i++) {
    const v = col.values[i];
    out[i] = col.valid && col.valid[i] === 0 ? '' : typeof v === 'string' ? v : col.kind === 'bool' ? (v ? 'true' : 'false') : String(v);
  }
  return out;
}

const TRUE = new Set(['true', 't', '1', 'yes', 'y']);
const FALSE = new Set(['false', 'f', '0', 'no', 'n', '']);

/** Booleans as 0/1. */
export function toBool(col: Column, ctx: Ctx): Uint8Array {
  const n = col.values.length;
  const out = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    const v = col.values[i];
    if (col.valid && col.valid[i] === 0) continue;
    if (typeof v === 'string') {
      const t = v.trim().toLowerCase();
      if (TRUE.has(t)) out[i] = 1;
      else if (!FALSE.has(t))
        ctx.sink.add({ severity: 'error', file: ctx.file, row: ctx.rowOffset + i + 1, column: col.name, message: 'not a boolean', expected: 'true/false or 1/0', got: describe(col, i) });
    } else if (typeof v === 'number' && col.kind !== 'bool' && v !== 0 && v !== 1 && !Number.isNaN(v)) {
      ctx.sink.add({ severity: 'error', file: ctx.file, row: ctx.rowOffset + i + 1, column: col.name, message: 'not a boolean', expected: 'true/false or 1/0', got: describe(col, i) });
    } else out[i] = typeof v === 'bigint' ? (v !== 0n ? 1 : 0) : v ? 1 : 0;
  }
  return out;
}

/** 32-bit integers; non-integers are reported. Missing becomes -1. */
export function toInt32(col: Column, ctx: Ctx): Int32Array {
  const f = toFloat64(col, ctx);
  const out = new Int32Array(f.length);
  for (let i = 0; i < f.length; i++) {
    const v = f[i];
    if (Number.isNaN(v)) {
      out[i] = -1;
      continue;
    }
    if (!Number.isInteger(v) || Math.abs(v) > 2147483647) {
      ctx.sink.failCell(ctx.file, col.name, ctx.rowOffset + i + 1);
      ctx.sink.add({ severity: 'error', file: ctx.file, row: ctx.rowOffset + i + 1, column: col.name, message: 'not an integer', expected: 'a whole number in the 32-bit range', got: String(v) });
    }
    out[i] = v | 0;
  }
  return out;
}

const INT_TEXT = /^[+-]?(0|[1-9][0-9]*)$/;
const INT64_MIN = -(1n << 63n);
const INT64_MAX = (1n << 63n) - 1n;

/**
 * The one kind a passed-through column has whatever the input format, so a CSV bundle and
 * the same bundle in FITS or Parquet publish the same catalogue. Text from an untyped format
 * (CSV) is typed by its values: booleans (true/false), integers (within int64), numbers;
 * otherwise, or when a value has leading zeros (a code such as "007"), it stays text. Typed columns keep their kind, with every integer
 * kind widened to int64 and float32 to float64 (exact).
 */
export function normalisePassThrough(col: Column, untyped: boolean): Column {
  const n = col.values.length;
  const { values: _v, valid: _m, kind: _k, ...meta } = col;
  if (col.kind === 'string') {
    if (!untyped) return col;
    const vals = col.values as string[];
    const isNull = (i: number) => (col.valid !== undefined && col.valid[i] === 0) || vals[i].trim() === '';
    let nonEmpty = 0, allBool = true, allInt = true, allNum = true;
    for (let i = 0; i < n; i++) {
      if (isNull(i)) continue;
      nonEmpty++;
      const t = vals[i].trim();
      const low = t.toLowerCase();
      if (low !== 'true' && low !== 'false') allBool = false;
      if (!INT_TEXT.test(t)) allInt = false;
      else {
        const b = BigInt(t);
        if (b < INT64_MIN || b > INT64_MAX) allInt = false;
      }
      if (allNum && Number.isNaN(parseNumber(t)) && !MISSING.has(low)) allNum = false;
      // codes with leading zeros ("007") are names, not numbers
      if (/^[+-]?0[0-9]/.test(t)) allInt = allNum = false;
      if (!allBool && !allInt && !allNum) return col;
    }
    if (nonEmpty === 0) return col;
    const valid = new Uint8Array(n);
    for (let i = 0; i < n; i++) valid[i] = isNull(i) ? 0 : 1;
    const anyNull = valid.includes(0);
    if (allBool) {
      const out = new Uint8Array(n);
      for (let i = 0; i < n; i++) out[i] = !isNull(i) && vals[i].trim().toLowerCase() === 'true' ? 1 : 0;
      return { ...meta, kind: 'bool', values: out, ...(anyNull ? { valid } : {}) };
    }
    if (allInt) {
      const out = new BigInt64Array(n);
      for (let i = 0; i < n; i++) if (!isNull(i)) out[i] = BigInt(vals[i].trim());
      return { ...meta, kind: 'int64', values: out, ...(anyNull ? { valid } : {}) };
    }
    const out = new Float64Array(n);
    for (let i = 0; i < n; i++) out[i] = isNull(i) ? NaN : parseNumber(vals[i]);
    return { ...meta, kind: 'float64', values: out };
  }
  switch (col.kind) {
    case 'float32': {
      const out = new Float64Array(n);
      out.set(col.values as Float32Array);
      if (col.valid) for (let i = 0; i < n; i++) if (col.valid[i] === 0) out[i] = NaN;
      return { ...meta, kind: 'float64', values: out };
    }
    case 'float64': {
      if (!col.valid) return col;
      const out = Float64Array.from(col.values as Float64Array);
      for (let i = 0; i < n; i++) if (col.valid[i] === 0) out[i] = NaN;
      return { ...meta, kind: 'float64', values: out };
    }
    case 'int32':
    case 'int16':
    case 'uint8': {
      const out = new BigInt64Array(n);
      const src = col.values as Int32Array;
      for (let i = 0; i < n; i++) out[i] = BigInt(src[i]);
      return { ...meta, kind: 'int64', values: out, ...(col.valid && col.valid.includes(0) ? { valid: col.valid } : {}) };
    }
    default:
      if (col.valid && !col.valid.includes(0)) return { ...meta, kind: col.kind, values: col.values };
      return col;
  }
}
