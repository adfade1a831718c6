/**
 * Apache Arrow IPC tables (file and stream formats) into and out of the column model.
 * Units, descriptions and UCDs travel as field metadata (`unit`, `description`, `ucd`).
 */
import { createReadStream } from 'node:fs';
import { open, writeFile } from 'node:fs/promises';
import * as arrow from 'apache-arrow';
import type { Column, ColumnKind, Table } from './table.ts';
import { PosterityError } from '../core/problems.ts';

export interface ArrowReadOptions {
  file?: string;
  columns?: string[];
}

function kindOf(type: arrow.DataType, file: string, name: string): ColumnKind {
  switch (type.typeId) {
    case arrow.Type.Float:
      return (type as arrow.Float).precision === arrow.Precision.DOUBLE ? 'float64' : 'float32';
    case arrow.Type.Int: {
      const t = type as arrow.Int;
      if (t.bitWidth === 64) return 'int64';
      if (t.bitWidth === 32 && t.isSigned) return 'int32';
      if (t.bitWidth === 32) return 'int64';
      if (t.bitWidth === 16) return t.isSigned ? 'int16' : 'int32';
      return t.isSigned ? 'int16' : 'uint8';
    }
    case arrow.Type.Bool:
      return 'bool';
    case arrow.Type.Utf8:
    case arrow.Type.LargeUtf8:
    case arrow.Type.Dictionary:
      return 'string';
    default:
      throw new PosterityError({
        severity: 'error',
        file,
        column: name,
        message:
          type.typeId === arrow.Type.List || type.typeId === arrow.Type.FixedSizeList
            ? 'list columns (a vector of draws in one cell) are not supported; store one draw per row'
            : 'unsupported Arrow column type',
        got: String(type),
      });
  }
}

function convertVector(vec: arrow.Vector, field: arrow.Field, file: string): Column {
  const kind = kindOf(field.type, file, field.name);
  const n = vec.length;
  const meta = field.metadata;
  const col: Column = { name: field.name, kind, values: [] as string[] };
  if (meta.get('unit')) col.unit = meta.get('unit');
  if (meta.get('description')) col.description = meta.get('description');
  if (meta.get('ucd')) col.ucd = meta.get('ucd');
  const hasNulls = vec.nullCount > 0;
  let valid: Uint8Array | undefined;
  if (hasNulls) {
    valid = new Uint8Array(n);
    for (let i = 0; i < n; i++) valid[i] = vec.isValid(i) ? 1 : 0;
  }
  switch (kind) {
    case 'float64':
    case 'float32': {
      const out = kind === 'float64' ? new Float64Array(n) : new Float32Array(n);
      const raw = vec.toArray() as Float64Array | Float32Array;
      out.set(raw);
      if (valid) for (let i = 0; i < n; i++) if (!valid[i]) out[i] = NaN;
      col.values = out;
      return col; // NaN carries null for floats
    }
    case 'int64': {
      const out = new BigInt64Array(n);
      const raw = vec.toArray() as BigInt64Array | BigUint64Array | Uint32Array;
      if (raw instanceof BigUint64Array) {
        // unsigned 64-bit ids beyond 2^63 cannot be int64: keep them as exact text
        const s = new Array<string>(n);
        for (let i = 0; i < n; i++) s[i] = raw[i].toString();
        col.kind = 'string';
        col.values = s;
      } else if (raw instanceof BigInt64Array) {
        out.set(raw);
        col.values = out;
      } else {
        for (let i = 0; i < n; i++) out[i] = BigInt(raw[i]);
        col.values = out;
      }
      break;
    }
    case 'int32': {
      const out = new Int32Array(n);
      out.set(vec.toArray() as Int32Array);
      col.values = out;
      break;
    }
    case 'int16': {
      const out = new Int16Array(n);
      out.set(vec.toArray() as Int16Array);
      col.values = out;
      break;
    }
    case 'uint8': {
      const out = new Uint8Array(n);
      out.set(vec.toArray() as Uint8Array);
      col.values = out;
      break;
    }
    case 'bool': {
      const out = new Uint8Array(n);
      for (let i = 0; i < n; i++) out[i] = vec.get(i) ? 1 : 0;
      col.values = out;
      break;
    }
    case 'string': {
      const out = new Array<string>(n);
      for (let i = 0; i < n; i++) {
        const v = vec.get(i);
        out[i] = v == null ? '' : String(v);
      }
      col.values = out;
      break;
    }
  }
  if (valid) col.valid = valid;
  return col;
}

/** Stream an Arrow IPC file or stream as one table per record batch. */
export async function* readArrowBatches(path: string, opts: ArrowReadOptions = {}): AsyncGenerator<Table> {
  const file = opts.file ?? path;
  let handle: import('node:fs/promises').FileHandle | null = null;
  let reader: arrow.RecordBatchReader | arrow.AsyncRecordBatchStreamReader | arrow.AsyncRecordBatchFileReader;
  try {
    // The IPC file format is read by random access through a file handle, one record batch at a
    // time, so memory stays bounded; the stream format is read as a stream.
    const fh = await open(path, 'r');
    const magic = Buffer.alloc(6);
    await fh.read(magic, 0, 6, 0);
    if (magic.toString('latin1') === 'ARROW1') {
      handle = fh;
      reader = await arrow.RecordBatchReader.from(fh as never);
    } else {
      await fh.close();
      reader = await arrow.RecordBatchReader.from(createReadStream(path, { highWaterMark: 1 << 20 }));
    }
    await reader.open();
  } catch (e) {
    throw new PosterityError({ severity: 'error', file, message: `not a readable Arrow IPC file (${(e as Error).message})` });
  }
  let any = false;
  try {
    for await (const batch of reader as AsyncIterable<arrow.RecordBatch>) {
      any = true;
      const columns: Column[] = [];
      batch.schema.fields.forEach((field, j) => {
        if (opts.columns && !opts.columns.includes(field.name)) return;
        columns.push(convertVector(batch.getChildAt(j)!, field, file));
      });
      yield { columns, numRows: batch.numRows };
    }
  } catch (e) {
    if (e instanceof PosterityError) throw e;
    throw new PosterityError({ severity: 'error', file, message: `cannot read the Arrow data (${(e as Error).message}); is the file truncated or corrupt?` });
  }
  finally {
    await handle?.close();
  }
  if (!any) {
    const fields = reader.schema?.fields ?? [];
    yield { numRows: 0, columns: fields.map((f: arrow.Field) => ({ name: f.name, kind: kindOf(f.type, file, f.name), values: [] as string[] })) };
  }
}

function arrowType(kind: ColumnKind): arrow.DataType {
  switch (kind) {
    case 'float64': return new arrow.Float64();
    case 'float32': return new arrow.Float32();
    case 'int64': return new arrow.Int64();
    case 'int32': return new arrow.Int32();
    case 'int16': return new arrow.Int16();
    case 'uint8': return new arrow.Uint8();
    case 'bool': return new arrow.Bool();
    case 'string': return new arrow.Utf8();
  }
}

function toVector(col: Column): arrow.Vector {
  const type = arrowType(col.kind);
  const n = col.values.length;
  if (col.kind === 'string' || col.kind === 'bool' || col.valid) {
    const vals: unknown[] = new Array(n);
    for (let i = 0; i < n; i++) {
      if (col.valid && col.valid[i] === 0) vals[i] = null;
      else vals[i] = col.kind === 'bool' ? col.values[i] === 1 : col.values[i];
    }
    return arrow.vectorFromArray(vals, type);
  }
  return arrow.makeVector(col.values as Float64Array);
}

/** Build an Arrow table (with field metadata) from the column model. */
export function toArrowTable(table: Table): arrow.Table {
  const fields: arrow.Field[] = [];
  const data: arrow.Data[] = [];
  for (const col of table.columns) {
    const meta = new Map<string, string>();
    if (col.unit) meta.set('unit', col.unit);
    if (col.description) meta.set('description', col.description);
    if (col.ucd) meta.set('ucd', col.ucd);
    const vec = toVector(col);
    fields.push(new arrow.Field(col.name, vec.type, !!col.valid || col.kind === 'string' ? true : false, meta));
    data.push(vec.data.length === 1 ? vec.data[0] : arrow.makeVector(vec.toArray()).data[0]);
  }
  const meta = new Map<string, string>();
  for (const [k, v] of Object.entries(table.meta ?? {})) meta.set(k, String(v));
  const schema = new arrow.Schema(fields, meta);
  const struct = arrow.makeData({ type: new arrow.Struct(fields), length: table.numRows, nullCount: 0, children: data });
  return new arrow.Table(schema, [new arrow.RecordBatch(schema, struct)]);
}

/** Write an Arrow IPC file. */
export async function writeArrow(path: string, table: Table): Promise<void> {
  const bytes = arrow.tableToIPC(toArrowTable(table), 'file');
  await writeFile(path, bytes);
}
