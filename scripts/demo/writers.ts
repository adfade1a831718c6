/**
 * Chunked table writers, so the large demo tables (samples, models) never sit in memory whole.
 * Both produce the same bytes as writing the concatenated table in one go would, up to the
 * Arrow record-batch boundaries (one batch per chunk).
 */
import { closeSync, openSync, writeSync } from 'node:fs';
import * as arrow from 'apache-arrow';
import { toArrowTable } from '../../src/lib/io/arrow.ts';
import { cellText } from '../../src/lib/io/csv.ts';
import type { Column, Table } from '../../src/lib/io/table.ts';

/** An Arrow byte sink that writes straight to a file descriptor (no in-memory queue). */
class FileSink extends arrow.AsyncByteQueue {
  constructor(private readonly fd: number) {
    super();
  }
  override write(value: ArrayBufferView | ArrayBuffer | string): void {
    const bytes = typeof value === 'string' ? Buffer.from(value) : value instanceof ArrayBuffer ? new Uint8Array(value) : new Uint8Array(value.buffer, value.byteOffset, value.byteLength);
    let off = 0;
    while (off < bytes.byteLength) off += writeSync(this.fd, bytes, off, bytes.byteLength - off);
  }
}

const encoder = new TextEncoder();

/**
 * Utf8 data built directly: consecutive equal strings (an object's id over its draws) are
 * encoded once and copied, which is many times faster than building the vector value by value.
 */
function utf8Data(values: string[]): arrow.Data<arrow.Utf8> {
  const n = values.length;
  const offsets = new Int32Array(n + 1);
  let bytes = new Uint8Array(Math.max(64, n * 12));
  let pos = 0;
  let prev: string | null = null;
  let enc = new Uint8Array(0);
  for (let i = 0; i < n; i++) {
    const v = values[i];
    if (v !== prev) {
      enc = encoder.encode(v);
      prev = v;
    }
    if (pos + enc.length > bytes.length) {
      const grown = new Uint8Array(Math.max(bytes.length * 2, pos + enc.length));
      grown.set(bytes.subarray(0, pos));
      bytes = grown;
    }
    bytes.set(enc, pos);
    pos += enc.length;
    offsets[i + 1] = pos;
  }
  return arrow.makeData({ type: new arrow.Utf8(), length: n, nullCount: 0, valueOffsets: offsets, data: bytes.subarray(0, pos) });
}

function numericType(kind: Column['kind']): arrow.DataType | null {
  switch (kind) {
    case 'float64': return new arrow.Float64();
    case 'float32': return new arrow.Float32();
    case 'int64': return new arrow.Int64();
    case 'int32': return new arrow.Int32();
    case 'int16': return new arrow.Int16();
    case 'uint8': return new arrow.Uint8();
    default: return null;
  }
}

/** One record batch from the column model, with the field metadata `writeArrow` uses (unit, description, ucd). */
function toRecordBatch(table: Table): arrow.RecordBatch {
  const fields: arrow.Field[] = [];
  const children: arrow.Data[] = [];
  for (const col of table.columns) {
    const meta = new Map<string, string>();
    if (col.unit) meta.set('unit', col.unit);
    if (col.description) meta.set('description', col.description);
    if (col.ucd) meta.set('ucd', col.ucd);
    const type = numericType(col.kind);
    let data: arrow.Data;
    if (col.kind === 'string' && !col.valid) {
      data = utf8Data(col.values as string[]);
    } else if (type && !col.valid) {
      data = arrow.makeData({ type, length: table.numRows, nullCount: 0, data: col.values as Float64Array } as never);
    } else {
      // rare kinds (bool, masked columns): the io layer's conversion
      data = toArrowTable({ numRows: table.numRows, columns: [col] }).batches[0].data.children[0];
    }
    fields.push(new arrow.Field(col.name, data.type, col.kind === 'string' || !!col.valid, meta));
    children.push(data);
  }
  const schema = new arrow.Schema(fields);
  const struct = arrow.makeData({ type: new arrow.Struct(fields), length: table.numRows, nullCount: 0, children });
  return new arrow.RecordBatch(schema, struct);
}

/** Arrow IPC file written one record batch per `write`. */
export class ArrowChunkWriter {
  private readonly fd: number;
  private readonly writer: arrow.RecordBatchFileWriter;
  private readonly sink: FileSink;
  private rows = 0;
  constructor(path: string) {
    this.fd = openSync(path, 'w');
    this.sink = new FileSink(this.fd);
    this.writer = new arrow.RecordBatchFileWriter({ autoDestroy: false });
    this.writer.reset(this.sink);
  }
  write(table: Table): void {
    if (table.numRows === 0) return;
    this.writer.write(toRecordBatch(table));
    this.rows += table.numRows;
  }
  /** Finish the file (footer); returns the number of rows written. */
  close(): number {
    this.writer.finish();
    closeSync(this.fd);
    return this.rows;
  }
}

/** CSV written in chunks with the same cell formatting as `writeCsv`. */
export class CsvChunkWriter {
  private readonly fd: number;
  private header: string | null = null;
  private rows = 0;
  constructor(path: string) {
    this.fd = openSync(path, 'w');
  }
  write(table: Table): void {
    const names = table.columns.map((c) => c.name).join(',');
    if (this.header === null) {
      this.header = names;
      writeSync(this.fd, names + '\n');
    } else if (names !== this.header) {
      throw new Error(`demo: CSV chunk columns changed (${names} after ${this.header})`);
    }
    let buf = '';
    for (let i = 0; i < table.numRows; i++) {
      let line = '';
      for (let j = 0; j < table.columns.length; j++) {
        if (j) line += ',';
        line += cellText(table.columns[j], i);
      }
      buf += line + '\n';
      if (buf.length > 1 << 20) {
        writeSync(this.fd, buf);
        buf = '';
      }
    }
    if (buf) writeSync(this.fd, buf);
    this.rows += table.numRows;
  }
  close(): number {
    closeSync(this.fd);
    return this.rows;
  }
}
