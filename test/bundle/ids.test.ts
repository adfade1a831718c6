/**
 * 64-bit integer object ids keep every digit in every table format: 2^53 + 1 and 2^53
 * (9007199254740993, 9007199254740992) are one apart, which a float64 cannot tell.
 * The objects table is written at test time with the io writers as an int64 column
 * (CSV text, Arrow Int64, Parquet INT64, FITS K); the samples stay the fixture's CSV.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { copyFileSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { writeCsv } from '../../src/lib/io/csv.ts';
import { writeArrow } from '../../src/lib/io/arrow.ts';
import { writeParquet } from '../../src/lib/io/parquet.ts';
import { writeFits } from '../../src/lib/io/fits/index.ts';
import { readTable } from '../../src/lib/io/read.ts';
import type { Table } from '../../src/lib/io/table.ts';
import { BAD, expectProblem, load, problemsOf } from './_problems.ts';

const FIXTURE = join(BAD, 'int64-ids');
const BIG = [9007199254740993n, 9007199254740992n]; // 2^53 + 1, 2^53 (file order)

let tmp: string;
beforeAll(() => {
  tmp = mkdtempSync(join(tmpdir(), 'posterity-ids-'));
});
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

function objectsTable(ids: BigInt64Array | Float64Array, kind: 'int64' | 'float64'): Table {
  return {
    numRows: 2,
    columns: [
      { name: 'id', kind, values: ids },
      { name: 'ra', kind: 'float64', values: Float64Array.of(10.5, 11.0) },
      { name: 'dec', kind: 'float64', values: Float64Array.of(-5.25, 2.0) },
      { name: 'zphot', kind: 'float64', values: Float64Array.of(0.5, 1.2) },
    ],
  };
}

/** A copy of the fixture whose objects table is `file`, written by `write`. */
async function bundleWith(name: string, file: string, write: (path: string) => Promise<void>): Promise<string> {
  const dir = join(tmp, name);
  rmSync(dir, { recursive: true, force: true });
  mkdirSync(dir, { recursive: true });
  copyFileSync(join(FIXTURE, 'samples.csv'), join(dir, 'samples.csv'));
  const cfg = JSON.parse(readFileSync(join(FIXTURE, 'release.json'), 'utf8'));
  cfg.tables.objects.path = file;
  writeFileSync(join(dir, 'release.json'), JSON.stringify(cfg, null, 2));
  await write(join(dir, file));
  return dir;
}

async function expectExactIds(dir: string): Promise<void> {
  const b = await load(dir);
  // sorted by id (code units): ...992 before ...993
  expect(b.objects.id).toEqual(['9007199254740992', '9007199254740993']);
  expect(b.objects.fileRow && Array.from(b.objects.fileRow)).toEqual([1, 0]);
  expect(Array.from(b.objects.ra)).toEqual([11.0, 10.5]);
  // each object gets its own draws (samples.csv rows 2 and 4 belong to 2^53 + 1)
  const s = b.samples!;
  const drawsOf = (k: number) => Array.from(s.order.subarray(s.offsets[k], s.offsets[k + 1]), (r) => s.params[0][r]);
  expect(drawsOf(0)).toEqual([9.5, 9.6]);
  expect(drawsOf(1)).toEqual([10.1, 10.2]);
}

describe('64-bit integer ids keep full precision', () => {
  it('in the hand-written CSV fixture', async () => {
    await expectExactIds(FIXTURE);
  });

  const ints = BigInt64Array.from(BIG);
  const formats: [string, string, (p: string) => Promise<void>][] = [
    ['CSV (written from an int64 column)', 'objects.csv', (p) => writeCsv(p, objectsTable(ints, 'int64'))],
    ['Arrow (Int64 column)', 'objects.arrow', (p) => writeArrow(p, objectsTable(ints, 'int64'))],
    ['Parquet (INT64 column)', 'objects.parquet', (p) => writeParquet(p, objectsTable(ints, 'int64'))],
    ['FITS (K column)', 'objects.fits', (p) => writeFits(p, objectsTable(ints, 'int64'), { extname: 'OBJECTS', date: '2026-01-15' })],
  ];
  for (const [label, file, write] of formats)
    it(`through ${label}`, async () => {
      const dir = await bundleWith(file.replace('.', '-'), file, write);
      // the column really is a 64-bit integer column in the file
      const t = await readTable(join(dir, file));
      expect(t.columns[0].kind).toBe(file.endsWith('.csv') ? 'string' : 'int64');
      if (file.endsWith('.fits')) expect(readFileSync(join(dir, file)).subarray(2880, 5760).toString('latin1')).toMatch(/TFORM1  = 'K /);
      await expectExactIds(dir);
    });

  it('ids in a float64 column are refused, naming the column, since 2^53 + 1 cannot be held', async () => {
    const dir = await bundleWith('arrow-float', 'objects.arrow', (p) => writeArrow(p, objectsTable(Float64Array.of(9007199254740993, 9007199254740992), 'float64')));
    const ps = await problemsOf(dir);
    expectProblem(ps, { file: 'objects.arrow', row: 1, column: 'id', message: /floating-point/ });
  });
});
