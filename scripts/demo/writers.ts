/**
 * Chunked table writers, so the large demo tables (samples, models) never sit in memory whole.
 * Both produce the same bytes as writing the concatenated table in one go would, up to the
 * Arrow record-batch boundaries (one batch per chunk).
 */
import { closeSync, openSync, writeSync } from 'node:fs';
import * as arrow from 'apache-arrow';
import { toArrowTable } from '../../src/lib/io/arrow.ts';
import { cellText } from '../../src/lib/io/csv.ts';
import type { Table } from '../../src/lib/io/table.ts';

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
    for (const batch of toArrowTable(table).batches) this.writer.write(batch);
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
