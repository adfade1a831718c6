/**
 * FITS reader against fixtures written by astropy.io.fits (test/fixtures/fits/make_fixtures.py)
 * and the values astropy reads back from them (expected.json): unsigned integers by TZERO,
 * TSCAL/TZERO scaling, TNULL, vectors, bits, characters, gzip, HDU selection, truncation.
 */
import { copyFileSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { PosterityError } from '../../src/lib/core/problems.ts';
import { readFits, readFitsBatches } from '../../src/lib/io/fits/read.ts';
import { column, type Table } from '../../src/lib/io/table.ts';
import { cell } from '../helpers/everyKind.ts';

const FIX = path.join(path.dirname(fileURLToPath(import.meta.url)), '..', 'fixtures', 'fits');
const TABLES = path.join(FIX, 'tables.fits');
const TABLES_GZ = path.join(FIX, 'tables.fits.gz');

interface Expected { values: unknown[]; unit: string | null; tform: string; tzero: number | null; tscal: number | null; tnull: number | null }
const expected = JSON.parse(readFileSync(path.join(FIX, 'expected.json'), 'utf8')) as Record<string, Record<string, Expected>>;

let dir = '';
beforeAll(() => { dir = mkdtempSync(path.join(tmpdir(), 'posterity-fitsr-')); });
afterAll(() => { rmSync(dir, { recursive: true, force: true }); });

/** Our value in the form expected.json uses: integers as decimal text, floats as numbers. */
function norm(t: Table, name: string, i: number): unknown {
  const c = column(t, name)!;
  const v = cell(c, i);
  if (v === null) return null;
  if (c.kind === 'int16' || c.kind === 'int32' || c.kind === 'int64' || c.kind === 'uint8') return String(v);
  return v;
}

function checkFirst(t: Table): void {
  const exp = expected.FIRST!;
  expect(t.numRows).toBe(5);
  for (const [name, e] of Object.entries(exp)) {
    for (let i = 0; i < 5; i++) {
      const want = e.values[i];
      if (Array.isArray(want)) {
        // Split vectors: name_1 .. name_n.
        want.forEach((w, k) => {
          const got = norm(t, `${name}_${k + 1}`, i);
          expect(name === 'bits' ? Number(got) : got, `${name}_${k + 1}[${i}]`).toEqual(w);
        });
        continue;
      }
      const got = norm(t, name, i);
      if (e.tnull !== null && String(want) === String(e.tnull)) expect(got, `${name}[${i}] is null`).toBe(null);
      else if (name === 'i8') expect(Number(got), `${name}[${i}]`).toBe(want);
      else expect(got, `${name}[${i}]`).toEqual(want);
    }
    const c = column(t, Array.isArray(e.values[0]) ? `${name}_1` : name)!;
    expect(c.unit ?? null, `${name} unit`).toBe(e.unit);
  }
}

describe('FITS reader: astropy-written fixtures', () => {
  it('the fixture uses the conventions under test', () => {
    const f = expected.FIRST!;
    expect([f.u16!.tzero, f.u32!.tzero, f.u64!.tzero, f.i8!.tzero]).toEqual([32768, 2 ** 31, 2 ** 63, -128]);
    expect([f.scaled!.tscal, f.scaled!.tzero]).toEqual([0.5, 10]);
    expect([f.withnull!.tnull, f.knull!.tnull]).toEqual([-999, -1]);
    expect([f.vec!.tform, f.bits!.tform, f.label!.tform]).toEqual(['3E', '3X', '6A']);
  });

  it('reads every column as astropy does, with unsigned and scaled values exact', async () => {
    const t = await readFits(TABLES, { vectors: 'split' });
    checkFirst(t);
    expect(column(t, 'u16')!.kind).toBe('int32');
    expect(column(t, 'u32')!.kind).toBe('int64');
    // Unsigned 64-bit values beyond int64 are kept exactly as text.
    expect(column(t, 'u64')!.kind).toBe('string');
    expect(column(t, 'u64')!.values[4]).toBe('18446744073709551615');
    expect(column(t, 'knull')!.kind).toBe('int64');
    expect((column(t, 'knull')!.values as BigInt64Array)[0]).toBe(9007199254740993n);
    expect(column(t, 'scaled')!.kind).toBe('float64');
    expect(column(t, 'u16')!.description).toBe('Unsigned 16-bit counts');
    expect(t.meta).toMatchObject({ EXTNAME: 'FIRST', OBSERVER: 'nobody', NSAMP: 512 });
    expect(Object.keys(t.meta!).some((k) => /^T(TYPE|FORM|ZERO)\d/.test(k))).toBe(false);
  });

  it('reads the gzip-compressed copy identically', async () => {
    const plain = await readFits(TABLES, { vectors: 'split' });
    const gz = await readFits(TABLES_GZ, { vectors: 'split' });
    expect(gz).toEqual(plain);
  });

  it('selects the second BINTABLE by EXTNAME (any case) or by index', async () => {
    for (const hdu of ['SECOND', 'second', 2] as const) {
      const t = await readFits(TABLES_GZ, { hdu });
      expect(t.columns.map((c) => [c.name, c.kind, c.unit])).toEqual([['wavelength', 'float64', 'Angstrom'], ['flux', 'float32', 'uJy']]);
      expect(Array.from(t.columns[0]!.values as Float64Array)).toEqual(expected.SECOND!.wavelength!.values);
      expect(Array.from(t.columns[1]!.values as Float32Array)).toEqual(expected.SECOND!.flux!.values);
    }
  });

  it('streams in batches whose concatenation is the whole table', async () => {
    const whole = await readFits(TABLES, { vectors: 'split' });
    const sizes: number[] = [];
    const rows: unknown[] = [];
    for await (const b of readFitsBatches(TABLES, { vectors: 'split', batchRows: 2 })) {
      sizes.push(b.numRows);
      for (let i = 0; i < b.numRows; i++) rows.push(norm(b, 'u64', i), norm(b, 'withnull', i), norm(b, 'label', i));
    }
    expect(sizes).toEqual([2, 2, 1]);
    const want: unknown[] = [];
    for (let i = 0; i < 5; i++) want.push(norm(whole, 'u64', i), norm(whole, 'withnull', i), norm(whole, 'label', i));
    expect(rows).toEqual(want);
  });

  it('rejects a vector column by default, naming file, HDU and column', async () => {
    const err = await readFits(TABLES, { file: 'objects.fits' }).catch((e) => e);
    expect(err).toBeInstanceOf(PosterityError);
    const p = (err as PosterityError).problems[0]!;
    expect(p.file).toBe('objects.fits');
    expect(p.column).toBe('vec');
    expect(p.message).toMatch(/HDU 1 \(EXTNAME 'FIRST'\).*vector column vec has 3 elements per row.*store one draw per row/);
  });

  it('names what is missing when the HDU is not there or is not a table', async () => {
    await expect(readFits(TABLES, { hdu: 'NOPE' })).rejects.toThrow(/no HDU with EXTNAME 'NOPE'.*HDU 1 \(EXTNAME 'FIRST'\) BINTABLE/);
    await expect(readFits(TABLES, { hdu: 0 })).rejects.toThrow(/HDU 0 \(primary\) is not a binary table/);
  });
});

describe('FITS reader: corrupt and truncated files', () => {
  it('a file cut inside the table data names the file, HDU, byte and row', async () => {
    const bytes = readFileSync(TABLES);
    const p = path.join(dir, 'cut-data.fits');
    // Primary header: 1 block; FIRST header: 2 blocks; its rows are 57 bytes.
    writeFileSync(p, bytes.subarray(0, 3 * 2880 + 100));
    const err = await readFits(p, { vectors: 'split' }).catch((e) => e);
    expect(err).toBeInstanceOf(PosterityError);
    const pr = (err as PosterityError).problems[0]!;
    expect(pr.file).toBe(p);
    expect(pr.row).toBe(2);
    expect(pr.message).toMatch(/truncated: HDU 1 \(EXTNAME 'FIRST'\) should hold 5 rows of 57 bytes.*ends at byte 8740/);
  });

  it('a file cut inside a header, or inside data it skips, is reported too', async () => {
    const bytes = readFileSync(TABLES);
    const p = path.join(dir, 'cut-header.fits');
    writeFileSync(p, bytes.subarray(0, 2880 + 1000));
    await expect(readFits(p)).rejects.toThrow(/cut-header\.fits: truncated: HDU 1 header starting at byte 2880/);
    const q = path.join(dir, 'cut-skip.fits');
    writeFileSync(q, bytes.subarray(0, 3 * 2880 + 100));
    await expect(readFits(q, { hdu: 'SECOND' })).rejects.toThrow(/cut-skip\.fits: truncated: HDU 1 \(EXTNAME 'FIRST'\) data should span bytes 8640 to 8925/);
  });

  it('a truncated gzip file names the file', async () => {
    const gz = readFileSync(TABLES_GZ);
    const p = path.join(dir, 'cut.fits.gz');
    writeFileSync(p, gz.subarray(0, Math.floor(gz.length / 2)));
    const err = await readFits(p, { vectors: 'split' }).catch((e) => e);
    expect(err).toBeInstanceOf(PosterityError);
    expect((err as PosterityError).problems[0]!.file).toBe(p);
    expect(String(err)).toMatch(/gzip stream is corrupt or truncated|truncated/);
  });

  it('a file that is not FITS, and a missing file, are named', async () => {
    const p = path.join(dir, 'not.fits');
    writeFileSync(p, 'id,ra,dec\n1,2,3\n');
    await expect(readFits(p)).rejects.toThrow(/not\.fits: not a FITS file/);
    await expect(readFits(path.join(dir, 'missing.fits'))).rejects.toThrow(/missing\.fits: cannot open FITS file \(ENOENT\)/);
  });

  it('a logical byte other than T, F or 0 is reported with row and column', async () => {
    const p = path.join(dir, 'badlogical.fits');
    copyFileSync(TABLES, p);
    const bytes = readFileSync(p);
    // Column "ok" is at byte 48 of each 57-byte row (sum of the widths before it).
    bytes[3 * 2880 + 57 * 3 + 48] = 0x58;
    writeFileSync(p, bytes);
    const err = await readFits(p, { vectors: 'split' }).catch((e) => e);
    expect(String(err)).toMatch(/badlogical\.fits, row 4, column "ok".*logical byte 0x58/);
  });
});
