/**
 * Typing of input columns: a reader's column becomes the kind a bundle table
 * expects, and every value that does not fit is reported with its row and column.
 */
import type { Column } from '../io/table.ts';
import type { Problem } from '../core/problems.ts';

/** At most this many problems of one kind per column are listed; the rest are counted. */
export const MAX_PER_COLUMN = 10;

export class ProblemSink {
  readonly problems: Problem[] = [];
  private counts = new Map<string, number>();
  add(p: Problem, key?: string): void {
    const k = key ?? `${p.file}|${p.column}|${p.message}`;
    const n = (this.counts.get(k) ?? 0) + 1;
    this.counts.set(k, n);
    if (n <= MAX_PER_COLUMN) this.problems.push(p);
  }
  /** Summary lines for problems beyond the listed ones. */
  finish(): Problem[] {
    const extra: Problem[] = [];
    for (const [k, n] of this.counts) {
      if (n > MAX_PER_COLUMN) {
        const [file, column, message] = k.split('|');
        const first = this.problems.find((p) => `${p.file}|${p.column}|${p.message}` === k);
        extra.push({ severity: first?.severity ?? 'error', file, column: column === 'undefined' ? undefined : column, message: `${message}: ${n - MAX_PER_COLUMN} more rows like this` });
      }
    }
    return [...this.problems, ...extra];
  }
  get hasErrors(): boolean {
    return this.problems.some((p) => p.severity === 'error');
  }
}

interface Ctx {
  file: string;
  sink: ProblemSink;
  rowOffset: number;
}

function describe(col: Column, i: number): string {
  const v = col.values[i];
  return typeof v === 'string' ? JSON.stringify(v) : String(v);
}

/** Float64 values; empty text, NaN and nulls become NaN. */
export function toFloat64(col: Column, ctx: Ctx): Float64Array {
  const n = col.values.length;
  if (col.kind === 'float64' && !col.valid) return col.values as Float64Array;
  const out = new Float64Array(n);
  if (col.kind === 'string') {
    const vals = col.values as string[];
    for (let i = 0; i < n; i++) {
      const t = vals[i].trim();
      if (t === '' || t === 'NaN' || t === 'nan' || t === 'null' || t === 'NA') {
        out[i] = NaN;
        continue;
      }
      const low = t.toLowerCase();
      const v = low === 'inf' || low === '+inf' || low === 'infinity' ? Infinity : low === '-inf' || low === '-infinity' ? -Infinity : Number(t);
      if (Number.isNaN(v)) {
        ctx.sink.add({ severity: 'error', file: ctx.file, row: ctx.rowOffset + i + 1, column: col.name, message: 'not a number', got: describe(col, i) });
      }
      out[i] = v;
    }
    return out;
  }
  if (col.kind === 'bool') {
    ctx.sink.add({ severity: 'error', file: ctx.file, column: col.name, message: 'wrong type', expected: 'a number', got: 'a boolean column' });
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
      if (!Number.isInteger(v) || !Number.isSafeInteger(v)) {
        ctx.sink.add({
          severity: 'error',
          file: ctx.file,
          row: ctx.rowOffset + i + 1,
          column: col.name,
          message: 'ids stored as floating-point numbers cannot be read exactly; store them as text or 64-bit integers',
          got: String(v),
        });
      }
      s = String(v);
    } else s = String(v);
    if (s === '') ctx.sink.add({ severity: 'error', file: ctx.file, row: ctx.rowOffset + i + 1, column: col.name, message: 'empty id' });
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
    out[i] = col.valid && col.valid[i] === 0 ? '' : typeof v === 'string' ? v : String(v);
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
    if (!Number.isInteger(v) || Math.abs(v) > 2147483647)
      ctx.sink.add({ severity: 'error', file: ctx.file, row: ctx.rowOffset + i + 1, column: col.name, message: 'not an integer', got: String(v) });
    out[i] = v | 0;
  }
  return out;
}
