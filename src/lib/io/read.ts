/**
 * One entry point for every table format of the bundle: the format is chosen by the
 * file's extension, and every reader streams batches in the one column model.
 */
import type { Table } from './table.ts';
import { PosterityError } from '../core/problems.ts';
import { readCsvBatches } from './csv.ts';
import { readArrowBatches } from './arrow.ts';

export type TableFormat = 'csv' | 'arrow' | 'parquet' | 'fits';

export interface ReadOptions {
  /** Name for error messages (relative to the bundle). */
  file?: string;
  /** FITS only: HDU index or EXTNAME. */
  hdu?: number | string;
  batchRows?: number;
  /** Restrict to these columns where the format allows it. */
  columns?: string[];
}

export function formatOf(path: string): TableFormat | null {
  const p = path.toLowerCase();
  if (p.endsWith('.csv') || p.endsWith('.csv.gz')) return 'csv';
  if (p.endsWith('.arrow') || p.endsWith('.arrows') || p.endsWith('.feather') || p.endsWith('.ipc')) return 'arrow';
  if (p.endsWith('.parquet') || p.endsWith('.pq')) return 'parquet';
  if (p.endsWith('.fits') || p.endsWith('.fits.gz') || p.endsWith('.fit') || p.endsWith('.fts')) return 'fits';
  return null;
}

export async function* readTableBatches(path: string, opts: ReadOptions = {}): AsyncGenerator<Table> {
  const file = opts.file ?? path;
  const format = formatOf(path);
  switch (format) {
    case 'csv':
      yield* readCsvBatches(path, { file, batchRows: opts.batchRows });
      return;
    case 'arrow':
      yield* readArrowBatches(path, { file, columns: opts.columns });
      return;
    case 'parquet': {
      const { readParquetBatches } = await import('./parquet.ts');
      yield* readParquetBatches(path, { file, batchRows: opts.batchRows, columns: opts.columns });
      return;
    }
    case 'fits': {
      const { readFitsBatches } = await import('./fits/index.ts');
      yield* readFitsBatches(path, { file, hdu: opts.hdu, batchRows: opts.batchRows });
      return;
    }
    default:
      throw new PosterityError({
        severity: 'error',
        file,
        message: 'unknown table format',
        expected: '.csv, .csv.gz, .arrow, .parquet, .fits or .fits.gz',
        got: path.split('/').pop(),
      });
  }
}

/** Read a whole table (small tables: objects, bands, photometry). */
export async function readTable(path: string, opts: ReadOptions = {}): Promise<Table> {
  const batches: Table[] = [];
  for await (const b of readTableBatches(path, opts)) batches.push(b);
  return concatTables(batches);
}

export function concatTables(batches: Table[]): Table {
  if (batches.length === 1) return batches[0];
  if (batches.length === 0) return { columns: [], numRows: 0 };
  const numRows = batches.reduce((s, b) => s + b.numRows, 0);
  const first = batches[0];
  const columns = first.columns.map((c, j) => {
    const parts = batches.map((b) => b.columns[j]);
    let values: any;
    if (c.kind === 'string') values = parts.flatMap((p) => p.values as string[]);
    else {
      const Ctor = (c.values as any).constructor;
      values = new Ctor(numRows);
      let o = 0;
      for (const p of parts) {
        values.set(p.values, o);
        o += p.values.length;
      }
    }
    let valid: Uint8Array | undefined;
    if (parts.some((p) => p.valid)) {
      valid = new Uint8Array(numRows).fill(1);
      let o = 0;
      for (const p of parts) {
        if (p.valid) valid.set(p.valid, o);
        o += p.values.length;
      }
    }
    return { ...c, values, ...(valid ? { valid } : {}) };
  });
  return { columns, numRows, meta: first.meta };
}
