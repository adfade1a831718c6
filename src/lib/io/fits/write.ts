/**
 * FITS binary-table writer: an empty primary HDU, then one BINTABLE extension.
 * FITS Standard 4.0: sect. 4.4.1 (primary header), 7.3 (binary table), 7.3.3.1 (nulls:
 * TNULLn for integers, NaN for floats, zero byte for logicals), 4.2.1.2 (long strings).
 *
 * Byte-deterministic: nothing depends on the clock or the machine; the DATE keyword is the
 * release date the caller passes. Rows are encoded in chunks so the data part never needs
 * a second full copy in memory.
 */
import { open, rename, rm } from 'node:fs/promises';
import path from 'node:path';
import { PosterityError, problem, type Problem } from '../../core/problems.ts';
import type { Column, Table } from '../table.ts';
import { BLOCK, commentaryCards, formatCards, headerBytes, isValidKeyword, type HeaderValue } from './header.ts';

/** A PosterityError from one problem (severity error). */
function ioError(p: Omit<Problem, 'severity'>): PosterityError {
  return new PosterityError(problem(p));
}

export interface WriteFitsOptions {
  extname: string;
  /** Release date, `YYYY-MM-DD` or `YYYY-MM-DDThh:mm:ss` (FITS 4.0 sect. 4.4.2.1). */
  date?: string;
  keywords?: Record<string, string | number | boolean>;
  comments?: string[];
  /** Rows encoded per write; only memory use depends on it, never the bytes. */
  chunkRows?: number;
  /**
   * Text outside printable ASCII in string columns. FITS 4.0 sect. 7.3.3.1 allows only ASCII
   * in A fields. 'utf8' (default) keeps such text exactly as UTF-8 bytes, noted in a COMMENT
   * card (strict verifiers report those cells); 'ascii' refuses it with an error naming the cell.
   */
  strings?: 'utf8' | 'ascii';
}

/** How one table column is laid out in the row. */
interface FieldPlan {
  col: Column;
  tform: string;
  width: number;
  tnull?: bigint;
  /** A string field holding bytes outside printable ASCII. */
  utf8?: boolean;
  encode: (view: DataView, bytes: Uint8Array, offset: number, row: number) => void;
}

const utf8 = new TextEncoder();

/** Keywords the writer owns; user keywords may not override them. */
const RESERVED = /^(SIMPLE|BITPIX|NAXIS\d*|EXTEND|XTENSION|PCOUNT|GCOUNT|TFIELDS|EXTNAME|DATE|LONGSTRN|END|CONTINUE|COMMENT|HISTORY|T(TYPE|FORM|UNIT|NULL|SCAL|ZERO|DISP|DIM|COMM|UCD)\d+)$/;

/** Smallest value of the stored type not used by the data, for TNULLn (sect. 7.3.2). */
function freeSentinel(values: ArrayLike<number | bigint>, valid: Uint8Array, min: bigint, max: bigint): bigint | null {
  // Common case first: the most negative value is free, so no set of values is built.
  let minUsed = false;
  for (let i = 0; i < values.length && !minUsed; i++) if (valid[i] !== 0 && BigInt(values[i]!) === min) minUsed = true;
  if (!minUsed) return min;
  const used = new Set<bigint>();
  for (let i = 0; i < values.length; i++) if (valid[i] !== 0) used.add(BigInt(values[i]!));
  for (let v = min; v <= max && v < min + BigInt(used.size + 1); v++) if (!used.has(v)) return v;
  for (let v = max; v >= min && v > max - BigInt(used.size + 1); v--) if (!used.has(v)) return v;
  return null;
}

function hasNulls(col: Column, n: number): boolean {
  if (!col.valid) return false;
  for (let i = 0; i < n; i++) if (col.valid[i] === 0) return true;
  return false;
}

function planField(col: Column, n: number, file: string, strings: 'utf8' | 'ascii' = 'utf8'): FieldPlan {
  const valid = col.valid;
  const isNull = (i: number) => valid !== undefined && valid[i] === 0;
  const nulls = hasNulls(col, n);
  switch (col.kind) {
    case 'float64': {
      const v = col.values as Float64Array;
      return { col, tform: 'D', width: 8, encode: (dv, _b, o, i) => dv.setFloat64(o, isNull(i) ? NaN : v[i]!) };
    }
    case 'float32': {
      const v = col.values as Float32Array;
      return { col, tform: 'E', width: 4, encode: (dv, _b, o, i) => dv.setFloat32(o, isNull(i) ? NaN : v[i]!) };
    }
    case 'int64': {
      const v = col.values as BigInt64Array;
      const tnull = nulls ? freeSentinel(v, valid!, -(2n ** 63n), 2n ** 63n - 1n) ?? undefined : undefined;
      const nv = tnull ?? 0n;
      return { col, tform: 'K', width: 8, tnull, encode: (dv, _b, o, i) => dv.setBigInt64(o, isNull(i) ? nv : v[i]!) };
    }
    case 'int32': {
      const v = col.values as Int32Array;
      const tnull = nulls ? freeSentinel(v, valid!, -(2n ** 31n), 2n ** 31n - 1n) ?? undefined : undefined;
      const nv = Number(tnull ?? 0n);
      return { col, tform: 'J', width: 4, tnull, encode: (dv, _b, o, i) => dv.setInt32(o, isNull(i) ? nv : v[i]!) };
    }
    case 'int16': {
      const v = col.values as Int16Array;
      const tnull = nulls ? freeSentinel(v, valid!, -32768n, 32767n) ?? undefined : undefined;
      if (nulls && tnull === undefined) {
        // Every 16-bit value is used: widen to J so a null value stays free.
        return planField({ ...col, kind: 'int32', values: Int32Array.from(v) }, n, file);
      }
      const nv = Number(tnull ?? 0n);
      return { col, tform: 'I', width: 2, tnull, encode: (dv, _b, o, i) => dv.setInt16(o, isNull(i) ? nv : v[i]!) };
    }
    case 'uint8': {
      const v = col.values as Uint8Array;
      const tnull = nulls ? freeSentinel(v, valid!, 0n, 255n) ?? undefined : undefined;
      if (nulls && tnull === undefined) {
        return planField({ ...col, kind: 'int16', values: Int16Array.from(v) }, n, file);
      }
      const nv = Number(tnull ?? 0n);
      return { col, tform: 'B', width: 1, tnull, encode: (_dv, b, o, i) => { b[o] = isNull(i) ? nv : v[i]!; } };
    }
    case 'bool': {
      const v = col.values as Uint8Array;
      // Sect. 7.3.3.1: 'T' true, 'F' false, a zero byte is a null logical.
      return { col, tform: 'L', width: 1, encode: (_dv, b, o, i) => { b[o] = isNull(i) ? 0 : v[i] ? 0x54 : 0x46; } };
    }
    case 'string': {
      const v = col.values as string[];
      const encoded: Uint8Array[] = new Array(n);
      let width = 1;
      let nonAscii = false;
      for (let i = 0; i < n; i++) {
        const e = utf8.encode(isNull(i) ? '' : v[i] ?? '');
        encoded[i] = e;
        if (e.length > width) width = e.length;
        if (!nonAscii && e.some((b) => b < 0x20 || b > 0x7e)) {
          nonAscii = true;
          if (strings === 'ascii') {
            throw ioError({ message: 'text is not printable ASCII, which FITS character fields require (FITS 4.0 sect. 7.3.3.1)', file, row: i + 1, column: col.name, got: JSON.stringify(v[i]) });
          }
        }
      }
      // Sect. 7.3.3.1: a string shorter than the field ends with a NUL; the rest is filler.
      return {
        col, tform: `${width}A`, width, utf8: nonAscii,
        encode: (_dv, b, o, i) => { const e = encoded[i]!; b.set(e, o); b.fill(0, o + e.length, o + width); },
      };
    }
    default:
      throw ioError({ message: `cannot write a column of kind "${(col as Column).kind}" to FITS`, file, column: col.name });
  }
}

function checkDate(date: string, file: string): void {
  if (!/^\d{4}-\d{2}-\d{2}(T\d{2}:\d{2}:\d{2}(\.\d+)?)?$/.test(date)) {
    throw ioError({ message: 'invalid DATE for the FITS header', file, field: 'date', expected: 'YYYY-MM-DD or YYYY-MM-DDThh:mm:ss (FITS 4.0 sect. 4.4.2.1)', got: JSON.stringify(date) });
  }
}

/** Header cards of the primary HDU: no data, extensions follow (sect. 4.4.1.1). */
function primaryCards(date?: string): string[] {
  const cards: string[] = [];
  const add = (k: string, v: HeaderValue, c?: string) => cards.push(...formatCards(k, v, c).cards);
  add('SIMPLE', true, 'conforms to FITS Standard 4.0');
  add('BITPIX', 8, 'no primary data array');
  add('NAXIS', 0, 'no primary data array');
  add('EXTEND', true, 'extensions follow');
  if (date) add('DATE', date, 'release date');
  return cards;
}

function extensionCards(table: Table, plans: FieldPlan[], rowBytes: number, opts: WriteFitsOptions, file: string): string[] {
  const cards: string[] = [];
  let long = false;
  const add = (k: string, v: HeaderValue, c?: string) => {
    const r = formatCards(k, v, c);
    long ||= r.long;
    cards.push(...r.cards);
  };
  add('XTENSION', 'BINTABLE', 'binary table extension');
  add('BITPIX', 8, 'array data type');
  add('NAXIS', 2, 'number of array dimensions');
  add('NAXIS1', rowBytes, 'bytes per row');
  add('NAXIS2', table.numRows, 'number of rows');
  add('PCOUNT', 0, 'size of special data area');
  add('GCOUNT', 1, 'one data group');
  add('TFIELDS', plans.length, 'number of columns');
  add('EXTNAME', opts.extname, 'name of this table');
  if (opts.date) add('DATE', opts.date, 'release date');
  const anyDesc = plans.some((p) => p.col.description);
  const anyUcd = plans.some((p) => p.col.ucd);
  plans.forEach((p, j) => {
    const n = j + 1;
    add(`TTYPE${n}`, p.col.name, 'column name');
    add(`TFORM${n}`, p.tform);
    if (p.col.unit) add(`TUNIT${n}`, p.col.unit, 'unit (FITS 4.0 sect. 4.3)');
    if (p.tnull !== undefined) add(`TNULL${n}`, p.tnull, 'value marking a null');
    if (p.col.ucd) add(`TUCD${n}`, p.col.ucd, 'IVOA UCD1+');
    if (p.col.description) add(`TCOMM${n}`, p.col.description);
  });
  const notes: string[] = [];
  if (anyDesc) notes.push('TCOMMn holds a free-text description of column n.');
  if (anyUcd) notes.push('TUCDn holds the IVOA UCD1+ content descriptor of column n.');
  if (long) notes.push("Long string values continue over CONTINUE cards: a value ending in '&' goes on in the next card (FITS Standard 4.0, sect. 4.2.1.2).");
  const utf8Cols = plans.flatMap((p, j) => (p.utf8 ? [`${j + 1}`] : []));
  if (utf8Cols.length) notes.push(`Character columns ${utf8Cols.join(', ')} hold UTF-8 text; bytes above 127 are not ASCII.`);
  if (long) add('LONGSTRN', 'OGIP 1.0', 'long string convention may be used');
  for (const [k, v] of Object.entries(opts.keywords ?? {})) {
    if (!isValidKeyword(k) || RESERVED.test(k)) {
      throw ioError({ message: 'keyword cannot be written to the FITS header', file, field: `keywords.${k}`, expected: 'up to 8 of A-Z, 0-9, - and _, not a structural or column keyword', got: JSON.stringify(k) });
    }
    if (typeof v === 'number' && !Number.isFinite(v)) {
      throw ioError({ message: 'FITS header values must be finite', file, field: `keywords.${k}`, got: String(v) });
    }
    add(k, v);
  }
  for (const note of notes) cards.push(...commentaryCards('COMMENT', note));
  for (const c of opts.comments ?? []) cards.push(...commentaryCards('COMMENT', c));
  return cards;
}

function checkColumns(table: Table, file: string): void {
  if (table.columns.length === 0 || table.columns.length > 999) {
    throw ioError({ message: 'a FITS binary table has 1 to 999 columns (TFIELDS, sect. 7.3.1)', file, got: String(table.columns.length) });
  }
  const seen = new Set<string>();
  for (const c of table.columns) {
    const key = c.name.trim().toUpperCase();
    if (key === '') throw ioError({ message: 'column name is empty', file, column: c.name });
    // Sect. 7.3.2: TTYPEn should be unique without regard to case.
    if (seen.has(key)) throw ioError({ message: 'column names must differ in more than case in FITS', file, column: c.name });
    seen.add(key);
    if (c.values.length < table.numRows) {
      throw ioError({ message: 'column is shorter than the table', file, column: c.name, expected: `${table.numRows} values`, got: String(c.values.length) });
    }
  }
}

/** Writes `table` as a FITS file with one BINTABLE extension named `opts.extname`. */
export async function writeFits(filePath: string, table: Table, opts: WriteFitsOptions): Promise<void> {
  const file = filePath;
  checkColumns(table, file);
  if (opts.date !== undefined) checkDate(opts.date, file);
  const n = table.numRows;
  const plans = table.columns.map((c) => planField(c, n, file, opts.strings));
  const rowBytes = plans.reduce((s, p) => s + p.width, 0);
  const offsets: number[] = [];
  plans.reduce((o, p) => (offsets.push(o), o + p.width), 0);

  const head = headerBytes(primaryCards(opts.date));
  const ext = headerBytes(extensionCards(table, plans, rowBytes, opts, file));

  // Write beside the target and rename, so a failure never leaves a half-written file.
  const tmp = path.join(path.dirname(filePath), `.posterity-tmp-${process.pid}-${path.basename(filePath)}`);
  const fh = await open(tmp, 'w');
  try {
    await fh.write(head);
    await fh.write(ext);
    const chunkRows = Math.max(1, opts.chunkRows ?? Math.max(1, Math.floor((4 << 20) / Math.max(1, rowBytes))));
    const buf = new Uint8Array(Math.min(n, chunkRows) * rowBytes);
    const view = new DataView(buf.buffer);
    for (let start = 0; start < n; start += chunkRows) {
      const end = Math.min(n, start + chunkRows);
      let o = 0;
      for (let i = start; i < end; i++) {
        for (let j = 0; j < plans.length; j++) plans[j]!.encode(view, buf, o + offsets[j]!, i);
        o += rowBytes;
      }
      await fh.write(buf, 0, o);
    }
    // Sect. 7.3.5: the data are padded to a whole block with zero bytes.
    const dataBytes = n * rowBytes;
    const padding = (BLOCK - (dataBytes % BLOCK)) % BLOCK;
    if (padding > 0) await fh.write(new Uint8Array(padding));
    await fh.close();
    await rename(tmp, filePath);
  } catch (e) {
    await fh.close().catch(() => {});
    await rm(tmp, { force: true });
    throw e;
  }
}

/**
 * A small table as the bytes of a whole FITS file (the same bytes `writeFits` writes), built in
 * memory: for per-object files, where opening, writing in chunks and renaming would cost more
 * than the encoding. `file` names the table in errors.
 */
export function fitsBytes(table: Table, opts: WriteFitsOptions, file = 'table.fits'): Uint8Array {
  checkColumns(table, file);
  if (opts.date !== undefined) checkDate(opts.date, file);
  const n = table.numRows;
  const plans = table.columns.map((c) => planField(c, n, file, opts.strings));
  const rowBytes = plans.reduce((s, p) => s + p.width, 0);
  const offsets: number[] = [];
  plans.reduce((o, p) => (offsets.push(o), o + p.width), 0);
  const head = headerBytes(primaryCards(opts.date));
  const ext = headerBytes(extensionCards(table, plans, rowBytes, opts, file));
  const dataBytes = n * rowBytes;
  const padded = dataBytes + ((BLOCK - (dataBytes % BLOCK)) % BLOCK);
  const out = new Uint8Array(head.length + ext.length + padded);
  out.set(head, 0);
  out.set(ext, head.length);
  const data = out.subarray(head.length + ext.length);
  const view = new DataView(data.buffer, data.byteOffset, data.byteLength);
  let o = 0;
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < plans.length; j++) plans[j]!.encode(view, data, o + offsets[j]!, i);
    o += rowBytes;
  }
  return out;
}
