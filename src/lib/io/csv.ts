/**
 * CSV tables (RFC 4180): a header row, comma-separated fields, double-quoted fields
 * that may hold commas, quotes ("") and newlines. `.csv.gz` is gunzipped on the fly.
 * Every field is read as text; the bundle layer types columns by what it expects,
 * so an error can name the row and column. Empty fields and `NaN` are missing values.
 */
import { createReadStream, createWriteStream } from 'node:fs';
import { createGunzip, createGzip } from 'node:zlib';
import { once } from 'node:events';
import type { Column, Table } from './table.ts';
import { PosterityError } from '../core/problems.ts';

export interface CsvReadOptions {
  batchRows?: number;
  /** Name used in error messages (the path relative to the bundle). */
  file?: string;
}

/** Stream a CSV file as batches of string columns. */
export async function* readCsvBatches(path: string, opts: CsvReadOptions = {}): AsyncGenerator<Table> {
  const file = opts.file ?? path;
  const batchRows = opts.batchRows ?? 65536;
  const source = createReadStream(path);
  const stream = path.endsWith('.gz') ? source.pipe(createGunzip()) : source;
  source.on('error', (e) => stream.destroy(e));

  let header: string[] | null = null;
  let cols: string[][] = [];
  let rows = 0;
  let lineNo = 0; // physical record number, 1 = header
  let field = '';
  let record: string[] = [];
  let inQuotes = false;
  let quoteJustClosed = false;
  let sawAny = false;

  const flushBatch = (): Table => {
    const table: Table = {
      numRows: rows,
      columns: header!.map((name, j): Column => ({ name, kind: 'string', values: cols[j] })),
    };
    cols = header!.map(() => []);
    rows = 0;
    return table;
  };

  const endRecord = (): Table | null => {
    record.push(field);
    field = '';
    lineNo++;
    const rec = record;
    record = [];
    if (header === null) {
      header = rec.map((h) => h.trim());
      if (header.length === 1 && header[0] === '') {
        throw new PosterityError({ severity: 'error', file, row: 0, message: 'the header row is empty' });
      }
      cols = header.map(() => []);
      return null;
    }
    if (rec.length === 1 && rec[0] === '') return null; // blank line
    if (rec.length !== header.length) {
      throw new PosterityError({
        severity: 'error',
        file,
        row: lineNo - 1,
        message: 'wrong number of fields',
        expected: `${header.length} (as in the header)`,
        got: String(rec.length),
      });
    }
    for (let j = 0; j < rec.length; j++) cols[j].push(rec[j]);
    rows++;
    return rows >= batchRows ? flushBatch() : null;
  };

  try {
    for await (const chunk of stream) {
      const text: string = typeof chunk === 'string' ? chunk : chunk.toString('utf8');
      sawAny = sawAny || text.length > 0;
      let start = 0;
      for (let i = 0; i < text.length; i++) {
        const ch = text.charCodeAt(i);
        if (inQuotes) {
          if (ch === 34) {
            field += text.slice(start, i);
            if (text.charCodeAt(i + 1) === 34) {
              field += '"';
              i++;
            } else if (i + 1 === text.length) {
              // a quote at the chunk end: decide on the next chunk
              quoteJustClosed = true;
              inQuotes = false;
            } else {
              inQuotes = false;
            }
            start = i + 1;
          }
          continue;
        }
        if (quoteJustClosed) {
          quoteJustClosed = false;
          if (ch === 34 && i === 0) {
            field += '"';
            inQuotes = true;
            start = 1;
            continue;
          }
        }
        if (ch === 44) {
          record.push(field + text.slice(start, i));
          field = '';
          start = i + 1;
        } else if (ch === 10 || ch === 13) {
          field += text.slice(start, i);
          if (ch === 13 && text.charCodeAt(i + 1) === 10) i++;
          start = i + 1;
          const out = endRecord();
          if (out) yield out;
        } else if (ch === 34 && start === i && field === '') {
          inQuotes = true;
          start = i + 1;
        }
      }
      field += text.slice(start);
    }
  } catch (e) {
    if (e instanceof PosterityError) throw e;
    throw new PosterityError({
      severity: 'error',
      file,
      message: `cannot read the file (${(e as Error).message}); is it truncated or corrupt?`,
    });
  }
  if (inQuotes) {
    throw new PosterityError({ severity: 'error', file, row: Math.max(lineNo, 1), message: 'a quoted field is not closed before the end of the file (truncated file?)' });
  }
  if (field !== '' || record.length > 0) {
    const out = endRecord();
    if (out) yield out;
  }
  if (!sawAny || header === null) {
    throw new PosterityError({ severity: 'error', file, message: 'the file is empty (no header row)' });
  }
  if (rows > 0 || lineNo === 1) yield flushBatch();
}

function quoteField(s: string): string {
  return /[",\r\n]/.test(s) || /^\s|\s$/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/** Shortest decimal text that reads back to the same double (ECMAScript Number#toString). */
function formatNumber(v: number): string {
  return Number.isFinite(v) ? String(v) : Number.isNaN(v) ? '' : v > 0 ? 'inf' : '-inf';
}

/** Text of one cell; nulls and NaN become empty fields. */
export function cellText(col: Column, i: number): string {
  if (col.valid && col.valid[i] === 0) return '';
  const v = col.values[i];
  if (col.kind === 'string') return quoteField(v as string);
  if (col.kind === 'bool') return v ? 'true' : 'false';
  if (typeof v === 'bigint') return v.toString();
  if (col.kind === 'float32') return Number.isNaN(v as number) ? '' : String(Math.fround(v as number));
  return formatNumber(v as number);
}

/** Write a table as CSV (gzip when the path ends in .gz); deterministic bytes. */
export async function writeCsv(path: string, table: Table): Promise<void> {
  const out = createWriteStream(path);
  const gz = path.endsWith('.gz') ? createGzip({ level: 6 }) : null;
  const sink = gz ?? out;
  if (gz) gz.pipe(out);
  const write = async (s: string) => {
    if (!sink.write(s)) await once(sink, 'drain');
  };
  await write(table.columns.map((c) => quoteField(c.name)).join(',') + '\n');
  let buf = '';
  for (let i = 0; i < table.numRows; i++) {
    let line = '';
    for (let j = 0; j < table.columns.length; j++) {
      if (j) line += ',';
      line += cellText(table.columns[j], i);
    }
    buf += line + '\n';
    if (buf.length > 1 << 20) {
      await write(buf);
      buf = '';
    }
  }
  await write(buf);
  sink.end();
  await once(out, 'finish');
}
