/**
 * The one in-memory column model every reader produces and every writer takes.
 *
 * A table is a list of named, typed columns of equal length. Missing values:
 * floats hold NaN; other kinds carry a validity mask (`valid[i] === 0` means null).
 * Object ids and other 64-bit integer identifiers are `string` columns, never
 * JavaScript numbers, so 2^53 + 1 survives every round trip.
 */

export type ColumnKind = 'float64' | 'float32' | 'int64' | 'int32' | 'int16' | 'uint8' | 'bool' | 'string';

export type ColumnValues =
  | Float64Array
  | Float32Array
  | BigInt64Array
  | Int32Array
  | Int16Array
  | Uint8Array
  | string[];

export interface ColumnMeta {
  unit?: string;
  description?: string;
  ucd?: string;
}

export interface Column extends ColumnMeta {
  name: string;
  kind: ColumnKind;
  /** float64/float32: Float64Array/Float32Array; int64: BigInt64Array; int32: Int32Array;
   * int16: Int16Array; uint8 and bool: Uint8Array (bool as 0/1); string: string[]. */
  values: ColumnValues;
  /** Optional validity mask, 1 = present, 0 = null. Absent means all present (floats use NaN). */
  valid?: Uint8Array;
}

export interface Table {
  columns: Column[];
  numRows: number;
  /** Free-form table-level metadata (e.g. FITS keywords, VOTable PARAMs). */
  meta?: Record<string, string | number | boolean>;
}

export function column(table: Table, name: string): Column | undefined {
  return table.columns.find((c) => c.name === name);
}

export function isNumericKind(kind: ColumnKind): boolean {
  return kind !== 'string' && kind !== 'bool';
}

/** Value of a column at row i as a float (NaN for null or non-numeric text). */
export function numberAt(col: Column, i: number): number {
  if (col.valid && col.valid[i] === 0) return NaN;
  const v = col.values[i];
  if (typeof v === 'number') return v;
  if (typeof v === 'bigint') return Number(v);
  if (typeof v === 'string') {
    const t = v.trim();
    return t === '' ? NaN : Number(t);
  }
  return NaN;
}

/** Value of a column at row i as a string ('' for null); int64 printed exactly. */
export function stringAt(col: Column, i: number): string {
  if (col.valid && col.valid[i] === 0) return '';
  const v = col.values[i];
  if (typeof v === 'string') return v;
  if (typeof v === 'bigint') return v.toString();
  if (typeof v === 'number') return Number.isNaN(v) ? '' : String(v);
  return '';
}

/** Allocate an empty column of a kind. */
export function allocColumn(name: string, kind: ColumnKind, n: number, meta: ColumnMeta = {}): Column {
  let values: ColumnValues;
  switch (kind) {
    case 'float64': values = new Float64Array(n); break;
    case 'float32': values = new Float32Array(n); break;
    case 'int64': values = new BigInt64Array(n); break;
    case 'int32': values = new Int32Array(n); break;
    case 'int16': values = new Int16Array(n); break;
    case 'uint8':
    case 'bool': values = new Uint8Array(n); break;
    case 'string': values = new Array<string>(n).fill(''); break;
  }
  return { name, kind, values, ...meta };
}

/** A batch is a table holding a slice of rows; readers stream these. */
export type Batch = Table;

/** Where a batch sits in its file, so errors can name the absolute row (1-based data row). */
export interface BatchInfo {
  /** 0-based index of the batch's first row within the file's data rows. */
  rowOffset: number;
}
