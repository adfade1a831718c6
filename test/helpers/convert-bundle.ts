/**
 * Converts a bundle to other table formats, the way a team with typed files would hold it:
 * objects, photometry, bands, spectra and models as FITS binary tables, samples as Parquet.
 * Each table is read with `readTable`; text columns from CSV get the type their values have
 * (true/false as logical, whole numbers as integers, other numbers as float64), except the
 * columns that hold names (ids, band names, instruments, frames), which stay text. Columns
 * from a typed format (Arrow) keep their type. release.json is rewritten with the new paths.
 */
import { mkdir, readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { readTable } from '../../src/lib/io/read.ts';
import { writeFits } from '../../src/lib/io/fits/index.ts';
import { writeParquet } from '../../src/lib/io/parquet.ts';
import type { Column, Table } from '../../src/lib/io/table.ts';

/** Our columns that are names, never numbers, whatever their text looks like. */
const TEXT_COLUMNS = new Set(['id', 'band', 'instrument', 'frame', 'label']);

const INT = /^[+-]?(0|[1-9][0-9]*)$/;

function typeColumn(c: Column, keepText: boolean): Column {
  if (c.kind !== 'string' || keepText) return c;
  const vals = c.values as string[];
  const present = vals.filter((v) => v.trim() !== '');
  if (present.length === 0) return c;
  const lower = present.map((v) => v.trim().toLowerCase());
  const n = vals.length;
  if (lower.every((v) => v === 'true' || v === 'false')) {
    const values = new Uint8Array(n);
    const valid = new Uint8Array(n);
    vals.forEach((v, i) => {
      const t = v.trim().toLowerCase();
      values[i] = t === 'true' ? 1 : 0;
      valid[i] = t === '' ? 0 : 1;
    });
    return { ...c, kind: 'bool', values, ...(valid.includes(0) ? { valid } : {}) };
  }
  const num = (t: string) => {
    const l = t.trim().toLowerCase();
    return l === 'inf' ? Infinity : l === '-inf' ? -Infinity : l === 'nan' ? NaN : Number(t);
  };
  if (!present.every((v) => !Number.isNaN(num(v)) || v.trim().toLowerCase() === 'nan')) return c;
  if (present.every((v) => INT.test(v.trim()) && Math.abs(Number(v)) < 2 ** 31)) {
    const values = new Int32Array(n);
    const valid = new Uint8Array(n);
    vals.forEach((v, i) => {
      valid[i] = v.trim() === '' ? 0 : 1;
      if (valid[i]) values[i] = Number(v);
    });
    return { ...c, kind: 'int32', values, ...(valid.includes(0) ? { valid } : {}) };
  }
  return { ...c, kind: 'float64', values: Float64Array.from(vals, (v) => (v.trim() === '' ? NaN : num(v))) };
}

function typeTable(t: Table, columnMap: Record<string, string>): Table {
  const text = new Set([...TEXT_COLUMNS].map((ours) => columnMap[ours] ?? ours));
  return { ...t, columns: t.columns.map((c) => typeColumn(c, text.has(c.name))) };
}

/** Writes a copy of the bundle in `src` to `dst` in FITS (samples: Parquet). */
export async function convertBundle(src: string, dst: string, opts: { releaseDate?: string } = {}): Promise<void> {
  await mkdir(dst, { recursive: true });
  const cfg = JSON.parse(await readFile(join(src, 'release.json'), 'utf8'));
  const date: string = opts.releaseDate ?? cfg.releaseDate;
  for (const [name, ref] of Object.entries(cfg.tables as Record<string, { path: string; hdu?: number | string; columns?: Record<string, string> }>)) {
    const table = typeTable(await readTable(join(src, ref.path), { hdu: ref.hdu }), ref.columns ?? {});
    if (name === 'samples') {
      ref.path = 'samples.parquet';
      await writeParquet(join(dst, ref.path), table);
    } else {
      ref.path = `${name}.fits`;
      delete ref.hdu;
      await writeFits(join(dst, ref.path), table, { extname: name.toUpperCase(), date });
    }
  }
  await writeFile(join(dst, 'release.json'), JSON.stringify(cfg, null, 2) + '\n');
}
