/**
 * Apache Parquet tables through hyparquet (reader) and hyparquet-writer (writer).
 * Parquet format specification: physical types (BOOLEAN, INT32, INT64, FLOAT, DOUBLE,
 * BYTE_ARRAY), logical types (STRING, INTEGER(bitWidth, signed)), optional fields for nulls,
 * key-value metadata in the footer; the file starts and ends with the magic bytes "PAR1".
 *
 * The reader reads row group by row group from a file handle, so memory is bounded by one
 * row group. Column units, descriptions and UCDs travel in the footer's key-value metadata
 * under `posterity.columns` (JSON), the one place Parquet has for them.
 */
import { open, rename, rm, type FileHandle } from 'node:fs/promises';
import path from 'node:path';
import { parquetMetadataAsync, parquetScan, type AsyncBuffer, type FileMetaData, type SchemaElement } from 'hyparquet';
import { fileWriter, ParquetWriter, parquetWrite } from 'hyparquet-writer';
import { PosterityError, problem, type Problem } from '../core/problems.ts';
import { allocColumn, type Column, type ColumnKind, type ColumnMeta, type Table } from './table.ts';

/** A PosterityError from one problem (severity error). */
function ioError(p: Omit<Problem, 'severity'>): PosterityError {
  return new PosterityError(problem(p));
}

/** Footer key holding per-column unit, description and UCD as JSON. */
export const COLUMNS_KEY = 'posterity.columns';

export interface ReadParquetOptions {
  /** Rows per batch; row groups larger than this are split (default: one batch per row group). */
  batchRows?: number;
  /** Only these columns, in this order. */
  columns?: string[];
  /** Name of the file in error messages (default: the path). */
  file?: string;
}

export interface WriteParquetOptions {
  /** Rows per row group (default 65536). */
  rowGroupRows?: number;
  /**
   * Snappy-compress the pages (default true). Draws of floating-point parameters hardly
   * compress, and compressing them is half the writing time of a large file.
   */
  compress?: boolean;
  /** Min and max of every column chunk (default true); costs as much as the writing itself. */
  statistics?: boolean;
  /** Extra footer key-value metadata, written in key order. */
  metadata?: Record<string, string>;
}

/** An AsyncBuffer reading slices of an open file (positioned reads, nothing cached). */
function fileBuffer(fh: FileHandle, size: number): AsyncBuffer {
  return {
    byteLength: size,
    async slice(start: number, end: number = size): Promise<ArrayBuffer> {
      const n = Math.max(0, Math.min(end, size) - start);
      const buf = new Uint8Array(n);
      let got = 0;
      while (got < n) {
        const { bytesRead } = await fh.read(buf, got, n - got, start + got);
        if (bytesRead === 0) break;
        got += bytesRead;
      }
      return buf.buffer;
    },
  };
}

interface ColumnPlan {
  name: string;
  kind: ColumnKind;
  meta: ColumnMeta;
  /** UINT_64 values are kept exactly as decimal text. */
  unsigned64?: boolean;
}

/** Our kind for a Parquet leaf column, from its physical and logical/converted type. */
function planColumn(el: SchemaElement, meta: ColumnMeta, file: string): ColumnPlan {
  const name = el.name;
  const unsupported = (what: string): never => {
    throw ioError({ message: `Parquet column type ${what} is not supported`, file, column: name, expected: 'BOOLEAN, INT32, INT64, FLOAT, DOUBLE or a UTF-8 BYTE_ARRAY' });
  };
  if (el.num_children) unsupported('group (nested column)');
  if (el.repetition_type === 'REPEATED') unsupported('REPEATED (list)');
  const ct = el.converted_type;
  const lt = el.logical_type;
  const intType = lt && lt.type === 'INTEGER' ? lt : undefined;
  switch (el.type) {
    case 'BOOLEAN': return { name, kind: 'bool', meta };
    case 'INT32': {
      if (ct === 'DATE' || ct === 'TIME_MILLIS' || (lt && lt.type !== 'INTEGER')) unsupported(`INT32 (${lt?.type ?? ct})`);
      if (ct === 'DECIMAL') return { name, kind: 'float64', meta };
      const bits = intType?.bitWidth ?? (ct === 'INT_8' || ct === 'UINT_8' ? 8 : ct === 'INT_16' || ct === 'UINT_16' ? 16 : 32);
      const signed = intType ? intType.isSigned : !(ct === 'UINT_8' || ct === 'UINT_16' || ct === 'UINT_32');
      if (!signed) return { name, kind: bits === 8 ? 'uint8' : bits === 16 ? 'int32' : 'int64', meta };
      return { name, kind: bits <= 16 ? 'int16' : 'int32', meta };
    }
    case 'INT64': {
      if (ct === 'TIMESTAMP_MILLIS' || ct === 'TIMESTAMP_MICROS' || ct === 'TIME_MICROS' || (lt && lt.type !== 'INTEGER' && lt.type !== 'DECIMAL')) unsupported(`INT64 (${lt?.type ?? ct})`);
      if (ct === 'DECIMAL') return { name, kind: 'float64', meta };
      const signed = intType ? intType.isSigned : ct !== 'UINT_64';
      return signed ? { name, kind: 'int64', meta } : { name, kind: 'string', meta, unsigned64: true };
    }
    case 'FLOAT': return { name, kind: 'float32', meta };
    case 'DOUBLE': return { name, kind: 'float64', meta };
    case 'BYTE_ARRAY':
      if (lt && lt.type !== 'STRING' && lt.type !== 'JSON' && lt.type !== 'ENUM') unsupported(`BYTE_ARRAY (${lt.type})`);
      return { name, kind: 'string', meta };
    default:
      return unsupported(String(el.type));
  }
}

function columnMetaFromFooter(md: FileMetaData, file: string): { byName: Map<string, ColumnMeta>; kv: Record<string, string> } {
  const byName = new Map<string, ColumnMeta>();
  const kv: Record<string, string> = {};
  for (const { key, value } of md.key_value_metadata ?? []) {
    if (key !== COLUMNS_KEY) { kv[key] = value ?? ''; continue; }
    try {
      for (const c of JSON.parse(value ?? '[]') as (ColumnMeta & { name: string })[]) {
        const m: ColumnMeta = {};
        if (c.unit) m.unit = c.unit;
        if (c.description) m.description = c.description;
        if (c.ucd) m.ucd = c.ucd;
        byName.set(c.name, m);
      }
    } catch {
      throw ioError({ message: `footer metadata "${COLUMNS_KEY}" is not valid JSON`, file });
    }
  }
  return { byName, kv };
}

/** Fills rows [0, n) of `out` at `at` from a decoded Parquet column; null/undefined are nulls. */
function fill(out: Column, at: number, data: ArrayLike<unknown>, plan: ColumnPlan, file: string, rowBase: number): void {
  const n = data.length;
  for (let i = 0; i < n; i++) {
    const v = data[i];
    const k = at + i;
    if (v === null || v === undefined) {
      if (out.kind === 'float64' || out.kind === 'float32') (out.values as Float64Array)[k] = NaN;
      else { out.valid ??= new Uint8Array(out.values.length).fill(1); out.valid[k] = 0; }
      continue;
    }
    switch (out.kind) {
      case 'int64': (out.values as BigInt64Array)[k] = typeof v === 'bigint' ? v : BigInt(v as number); break;
      case 'string':
        if (plan.unsigned64) (out.values as string[])[k] = BigInt.asUintN(64, BigInt(v as bigint)).toString();
        else if (typeof v === 'string') (out.values as string[])[k] = v;
        else throw ioError({ message: 'value is not text', file, row: rowBase + i + 1, column: out.name, got: typeof v });
        break;
      case 'bool': (out.values as Uint8Array)[k] = v ? 1 : 0; break;
      default:
        if (typeof v !== 'number' && typeof v !== 'bigint') throw ioError({ message: 'value is not a number', file, row: rowBase + i + 1, column: out.name, got: typeof v });
        (out.values as Float64Array)[k] = Number(v);
    }
  }
}

function wrap(e: unknown, file: string, what: string): PosterityError {
  if (e instanceof PosterityError) return e;
  return ioError({ message: `${what}: ${(e as Error).message}`, file });
}

/** Streams a Parquet file as tables, one row group (or `batchRows` slice of it) at a time. */
export async function* readParquetBatches(filePath: string, opts: ReadParquetOptions = {}): AsyncGenerator<Table> {
  const file = opts.file ?? filePath;
  let fh: FileHandle;
  try {
    fh = await open(filePath, 'r');
  } catch (e) {
    throw ioError({ message: `cannot open Parquet file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`, file });
  }
  try {
    const { size } = await fh.stat();
    const magic = new Uint8Array(4);
    const tail = new Uint8Array(4);
    await fh.read(magic, 0, 4, 0);
    if (size >= 8) await fh.read(tail, 0, 4, size - 4);
    const PAR1 = 'PAR1';
    if (size < 12 || String.fromCharCode(...magic) !== PAR1 || String.fromCharCode(...tail) !== PAR1) {
      throw ioError({ message: `not a Parquet file, or truncated: it must start and end with "PAR1" (file is ${size} bytes)`, file });
    }
    const buffer = fileBuffer(fh, size);
    let md: FileMetaData;
    try {
      md = await parquetMetadataAsync(buffer);
    } catch (e) {
      throw wrap(e, file, 'corrupt Parquet footer');
    }
    const { byName, kv } = columnMetaFromFooter(md, file);
    const leaves = md.schema.slice(1);
    const top = new Map<string, SchemaElement>();
    for (let i = 0; i < leaves.length; i++) {
      const el = leaves[i]!;
      top.set(el.name, el);
      if (el.num_children) i += el.num_children; // nested groups are rejected if asked for
    }
    const names = opts.columns ?? [...top.keys()];
    const plans = names.map((n) => {
      const el = top.get(n);
      if (!el) throw ioError({ message: 'column not in the Parquet file', file, column: n, expected: [...top.keys()].join(', ') });
      return planColumn(el, byName.get(n) ?? {}, file);
    });
    const meta: Record<string, string> = kv;
    const scan = await parquetScan({ file: buffer, metadata: md, columns: names }).catch((e) => { throw wrap(e, file, 'cannot read Parquet file'); });
    const batchRows = opts.batchRows;
    let yielded = false;
    for (const range of scan.ranges) {
      const step = batchRows && batchRows > 0 ? batchRows : range.rowEnd - range.rowStart;
      for (let start = range.rowStart; start < range.rowEnd; start += step) {
        const end = Math.min(range.rowEnd, start + step);
        const n = end - start;
        const columns: Column[] = [];
        for (const plan of plans) {
          let data: ArrayLike<unknown>;
          try {
            data = await scan.readColumn({ column: plan.name, rowStart: start, rowEnd: end });
          } catch (e) {
            throw wrap(e, file, `corrupt Parquet data in rows ${start + 1}-${end}, column "${plan.name}"`);
          }
          if (data.length !== n) throw ioError({ message: `column chunk holds ${data.length} values for ${n} rows`, file, column: plan.name, row: start + 1 });
          const col = allocColumn(plan.name, plan.kind, n, plan.meta);
          fill(col, 0, data, plan, file, start);
          columns.push(col);
        }
        yielded = true;
        yield { columns, numRows: n, meta };
      }
    }
    if (!yielded) yield { columns: plans.map((p) => allocColumn(p.name, p.kind, 0, p.meta)), numRows: 0, meta };
  } finally {
    await fh.close();
  }
}

/** Reads a whole Parquet file into one table. */
export async function readParquet(filePath: string, opts: ReadParquetOptions = {}): Promise<Table> {
  const parts: Table[] = [];
  for await (const b of readParquetBatches(filePath, opts)) parts.push(b);
  if (parts.length === 1) return parts[0]!;
  const numRows = parts.reduce((s, p) => s + p.numRows, 0);
  const first = parts[0]!;
  const columns = first.columns.map((c0, j) => {
    const out = allocColumn(c0.name, c0.kind, numRows, { ...(c0.unit && { unit: c0.unit }), ...(c0.description && { description: c0.description }), ...(c0.ucd && { ucd: c0.ucd }) });
    let o = 0;
    for (const p of parts) {
      const c = p.columns[j]!;
      if (Array.isArray(out.values)) for (let i = 0; i < p.numRows; i++) out.values[o + i] = (c.values as string[])[i]!;
      else (out.values as Float64Array).set(c.values as Float64Array, o);
      if (c.valid) { out.valid ??= new Uint8Array(numRows).fill(1); out.valid.set(c.valid, o); }
      o += p.numRows;
    }
    return out;
  });
  return { columns, numRows, meta: first.meta };
}

// ---------------------------------------------------------------------------------------
// Writer

function isNull(c: Column, i: number): boolean {
  if (c.valid && c.valid[i] === 0) return true;
  return (c.kind === 'float64' || c.kind === 'float32') && Number.isNaN((c.values as Float64Array)[i]!);
}

/** Schema element and data for one column; NaN floats are written as nulls like other missing values. */
function columnSource(c: Column, n: number): { schema: SchemaElement; data: unknown[] | ArrayLike<unknown> } {
  let nulls = false;
  for (let i = 0; i < n && !nulls; i++) nulls = isNull(c, i);
  const repetition_type = nulls ? 'OPTIONAL' : 'REQUIRED';
  let schema: SchemaElement;
  switch (c.kind) {
    case 'float64': schema = { name: c.name, type: 'DOUBLE', repetition_type }; break;
    case 'float32': schema = { name: c.name, type: 'FLOAT', repetition_type }; break;
    case 'int64': schema = { name: c.name, type: 'INT64', repetition_type }; break;
    case 'int32': schema = { name: c.name, type: 'INT32', repetition_type }; break;
    case 'int16': schema = { name: c.name, type: 'INT32', repetition_type, converted_type: 'INT_16', logical_type: { type: 'INTEGER', bitWidth: 16, isSigned: true } }; break;
    case 'uint8': schema = { name: c.name, type: 'INT32', repetition_type, converted_type: 'UINT_8', logical_type: { type: 'INTEGER', bitWidth: 8, isSigned: false } }; break;
    case 'bool': schema = { name: c.name, type: 'BOOLEAN', repetition_type }; break;
    case 'string': schema = { name: c.name, type: 'BYTE_ARRAY', repetition_type, converted_type: 'UTF8', logical_type: { type: 'STRING' } }; break;
  }
  const v = c.values;
  if (!nulls) {
    // Required numeric columns go in as typed arrays (no per-value boxing).
    if (c.kind === 'float64' || c.kind === 'float32' || c.kind === 'int64' || c.kind === 'int32') return { schema, data: (v as Float64Array).subarray(0, n) };
    if (c.kind === 'int16' || c.kind === 'uint8') return { schema, data: Int32Array.from((v as Int16Array).subarray(0, n)) };
  }
  const data: unknown[] = new Array(n);
  for (let i = 0; i < n; i++) {
    if (nulls && isNull(c, i)) { data[i] = null; continue; }
    data[i] = c.kind === 'bool' ? v[i] === 1 : v[i];
  }
  return { schema, data };
}

/** Writes `table` as a Parquet file; the same table and options always give the same bytes. */
export async function writeParquet(filePath: string, table: Table, opts: WriteParquetOptions = {}): Promise<void> {
  const file = filePath;
  const n = table.numRows;
  const seen = new Set<string>();
  for (const c of table.columns) {
    if (seen.has(c.name)) throw ioError({ message: 'duplicate column name', file, column: c.name });
    seen.add(c.name);
    if (c.values.length < n) throw ioError({ message: 'column is shorter than the table', file, column: c.name, expected: `${n} values`, got: String(c.values.length) });
  }
  const sources = table.columns.map((c) => columnSource(c, n));
  const schema: SchemaElement[] = [{ name: 'root', num_children: sources.length }, ...sources.map((s) => s.schema)];
  const colMeta = table.columns.map((c) => ({ name: c.name, ...(c.unit && { unit: c.unit }), ...(c.description && { description: c.description }), ...(c.ucd && { ucd: c.ucd }) }));
  const kvMetadata = [
    { key: COLUMNS_KEY, value: JSON.stringify(colMeta) },
    ...Object.keys(opts.metadata ?? {}).sort().map((key) => ({ key, value: opts.metadata![key]! })),
  ];
  const tmp = path.join(path.dirname(filePath), `.posterity-tmp-${process.pid}-${path.basename(filePath)}`);
  try {
    parquetWrite({
      writer: fileWriter(tmp),
      columnData: table.columns.map((c, j) => ({ name: c.name, data: sources[j]!.data as never })),
      // hyparquet-writer bundles its own copy of hyparquet's types; the shapes are the same.
      schema: schema as never,
      rowGroupSize: Math.max(1, opts.rowGroupRows ?? 65536),
      kvMetadata,
      createdBy: 'posterity',
      codec: opts.compress === false ? 'UNCOMPRESSED' : 'SNAPPY',
      statistics: opts.statistics ?? true,
    });
    await rename(tmp, filePath);
  } catch (e) {
    await rm(tmp, { force: true });
    throw wrap(e, file, 'cannot write Parquet file');
  }
}

/**
 * A Parquet file written a batch at a time, for tables too large to hold: every column is
 * REQUIRED (no nulls; NaN floats are written as NaN), rows are buffered until a row group is
 * full, and the file appears under its name only when `finish` succeeds (written to a
 * temporary name first, as `writeParquet` does). `abort` removes the temporary file.
 */
export class ParquetStreamWriter {
  private readonly tmp: string;
  private readonly writer: ParquetWriter;
  private readonly rowGroupRows: number;
  private pending: (unknown[] | Float64Array)[][] = [];
  private pendingRows = 0;
  private done = false;

  constructor(
    private readonly filePath: string,
    private readonly columns: Column[],
    opts: WriteParquetOptions = {},
  ) {
    this.tmp = path.join(path.dirname(filePath), `.posterity-tmp-${process.pid}-${path.basename(filePath)}`);
    const schema: SchemaElement[] = [{ name: 'root', num_children: columns.length }, ...columns.map((c) => columnSource({ ...c, values: (c.kind === 'string' ? [] : new Float64Array(0)) as never }, 0).schema)];
    for (const s of schema.slice(1)) s.repetition_type = 'REQUIRED';
    const colMeta = columns.map((c) => ({ name: c.name, ...(c.unit && { unit: c.unit }), ...(c.description && { description: c.description }), ...(c.ucd && { ucd: c.ucd }) }));
    const kvMetadata = [{ key: COLUMNS_KEY, value: JSON.stringify(colMeta) }, ...Object.keys(opts.metadata ?? {}).sort().map((key) => ({ key, value: opts.metadata![key]! }))];
    this.rowGroupRows = Math.max(1, opts.rowGroupRows ?? 65536);
    this.writer = new ParquetWriter({ writer: fileWriter(this.tmp), schema: schema as never, kvMetadata, createdBy: 'posterity', codec: opts.compress === false ? 'UNCOMPRESSED' : 'SNAPPY', statistics: opts.statistics ?? true });
  }

  /** Append rows: one array per column, in the constructor's order, all of the same length. */
  async write(values: (unknown[] | Float64Array)[]): Promise<void> {
    if (values.length !== this.columns.length) throw ioError({ message: 'wrong number of columns in a batch', file: this.filePath, expected: String(this.columns.length), got: String(values.length) });
    const len = values[0]?.length ?? 0;
    values.forEach((v, j) => {
      if (v.length !== len) throw ioError({ message: 'columns of a batch have different lengths', file: this.filePath, column: this.columns[j].name, expected: String(len), got: String(v.length) });
    });
    this.pending.push(values);
    this.pendingRows += len;
    if (this.pendingRows >= this.rowGroupRows) await this.flush();
  }

  private async flush(): Promise<void> {
    if (!this.pendingRows) return;
    const data = this.columns.map((c, j) => {
      if (c.kind === 'string') return this.pending.flatMap((p) => p[j] as unknown[]);
      const out = c.kind === 'float32' ? new Float32Array(this.pendingRows) : new Float64Array(this.pendingRows);
      let o = 0;
      for (const p of this.pending) {
        out.set(p[j] as Float64Array, o);
        o += p[j].length;
      }
      return out;
    });
    const rows = this.pendingRows;
    this.pending = [];
    this.pendingRows = 0;
    try {
      await this.writer.write({ columnData: this.columns.map((c, j) => ({ name: c.name, data: data[j] as never })), rowGroupSize: rows });
    } catch (e) {
      throw wrap(e, this.filePath, 'cannot write Parquet file');
    }
  }

  async finish(): Promise<void> {
    if (this.done) return;
    await this.flush();
    try {
      await this.writer.finish();
      this.done = true;
      await rename(this.tmp, this.filePath);
    } catch (e) {
      await rm(this.tmp, { force: true });
      throw wrap(e, this.filePath, 'cannot write Parquet file');
    }
  }

  async abort(): Promise<void> {
    this.done = true;
    await rm(this.tmp, { force: true });
  }
}
