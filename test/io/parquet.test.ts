/**
 * Parquet writer and reader. No independent Parquet reader is installed here (no pyarrow),
 * so files are checked three ways: our streaming reader, hyparquet's own row-object reader
 * (a separate code path: parquetReadObjects), and the file layout itself: "PAR1" magic at
 * both ends, a little-endian footer length before the tail magic (Parquet format spec,
 * "File format"), and the footer's schema, row groups and key-value metadata.
 */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { parquetMetadata, parquetReadObjects } from 'hyparquet';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { PosterityError } from '../../src/lib/core/problems.ts';
import { COLUMNS_KEY, readParquet, readParquetBatches, writeParquet } from '../../src/lib/io/parquet.ts';
import type { Table } from '../../src/lib/io/table.ts';
import { cell, everyKindTable, expectSameTable } from '../helpers/everyKind.ts';

let dir = '';
beforeAll(async () => {
  dir = mkdtempSync(path.join(tmpdir(), 'posterity-pq-'));
  await writeParquet(path.join(dir, 'draws.parquet'), draws(2500), { rowGroupRows: 1000 });
});
afterAll(() => { rmSync(dir, { recursive: true, force: true }); });

/** Samples-like table: one draw per row, ids beyond 2^53, weights with a few nulls. */
function draws(n: number): Table {
  const id = new BigInt64Array(n);
  const w = new Float64Array(n);
  const chain = new Int16Array(n);
  const valid = new Uint8Array(n).fill(1);
  for (let i = 0; i < n; i++) {
    id[i] = 9007199254740993n + BigInt(Math.floor(i / 7));
    w[i] = i % 50 === 3 ? NaN : 1 / (1 + i);
    chain[i] = i % 4;
    if (i % 11 === 0) valid[i] = 0;
  }
  return {
    numRows: n,
    columns: [
      { name: 'id', kind: 'int64', values: id, ucd: 'meta.id' },
      { name: 'weight', kind: 'float64', values: w, description: 'Importance weight' },
      { name: 'chain', kind: 'int16', values: chain, valid },
    ],
  };
}

describe('Parquet: round trip through our reader', () => {
  it('keeps every kind, 2^53 + 1, nulls, NaN-as-null and column metadata', async () => {
    const p = path.join(dir, 'every.parquet');
    const t = everyKindTable();
    await writeParquet(p, t, { rowGroupRows: 4, metadata: { release: 'DR1' } });
    const back = await readParquet(p);
    expectSameTable(back, t);
    expect((back.columns[0]!.values as BigInt64Array)[0]).toBe(9007199254740993n);
    expect(back.meta).toEqual({ release: 'DR1' });
  });

  it('streams row group by row group, and batchRows splits a group', async () => {
    const p = path.join(dir, 'draws.parquet');
    const t = draws(2500);
    const sizes: number[] = [];
    for await (const b of readParquetBatches(p)) sizes.push(b.numRows);
    expect(sizes).toEqual([1000, 1000, 500]);
    const small: number[] = [];
    for await (const b of readParquetBatches(p, { batchRows: 400 })) small.push(b.numRows);
    expect(small).toEqual([400, 400, 200, 400, 400, 200, 400, 100]);
    expectSameTable(await readParquet(p, { batchRows: 333 }), t);
  });

  it('reads only the requested columns, in the requested order', async () => {
    const p = path.join(dir, 'draws.parquet');
    const t = await readParquet(p, { columns: ['weight', 'id'] });
    expect(t.columns.map((c) => c.name)).toEqual(['weight', 'id']);
    await expect(readParquet(p, { columns: ['nope'] })).rejects.toThrow(/column "nope": column not in the Parquet file/);
  });

  it('is byte-deterministic', async () => {
    const a = path.join(dir, 'det-a.parquet');
    const b = path.join(dir, 'det-b.parquet');
    await writeParquet(a, draws(3000), { rowGroupRows: 1000, metadata: { b: '2', a: '1' } });
    await writeParquet(b, draws(3000), { rowGroupRows: 1000, metadata: { a: '1', b: '2' } });
    expect(readFileSync(a).equals(readFileSync(b))).toBe(true);
  });

  it('a truncated or foreign file names the file', async () => {
    const bytes = readFileSync(path.join(dir, 'draws.parquet'));
    const cut = path.join(dir, 'cut.parquet');
    writeFileSync(cut, bytes.subarray(0, Math.floor(bytes.length / 2)));
    const err = await readParquet(cut).catch((e) => e);
    expect(err).toBeInstanceOf(PosterityError);
    expect(String(err)).toMatch(/cut\.parquet: not a Parquet file, or truncated/);
    const csv = path.join(dir, 'objects.parquet');
    writeFileSync(csv, 'id,ra,dec\n1,2,3\n');
    await expect(readParquet(csv)).rejects.toThrow(/objects\.parquet: not a Parquet file/);
    // A broken footer behind intact magic bytes.
    const broken = Buffer.from(bytes);
    broken.fill(0xff, bytes.length - 200, bytes.length - 8);
    const bad = path.join(dir, 'badfooter.parquet');
    writeFileSync(bad, broken);
    await expect(readParquet(bad)).rejects.toThrow(/badfooter\.parquet: /);
  });
});

describe('Parquet: a second reader and the file layout', () => {
  it("hyparquet's parquetReadObjects sees the same values", async () => {
    const p = path.join(dir, 'every2.parquet');
    const t = everyKindTable();
    await writeParquet(p, t, { rowGroupRows: 4 });
    const buf = readFileSync(p);
    const ab = buf.buffer.slice(buf.byteOffset, buf.byteOffset + buf.byteLength);
    const rows = await parquetReadObjects({ file: ab });
    expect(rows).toHaveLength(t.numRows);
    for (const c of t.columns) {
      for (let i = 0; i < t.numRows; i++) {
        const want = cell(c, i);
        let have = rows[i]![c.name];
        if (typeof have === 'bigint') have = have.toString();
        expect(have ?? null, `${c.name}[${i}]`).toEqual(want);
      }
    }
    expect(typeof rows[0]!.id).toBe('bigint');
    expect(rows[0]!.id).toBe(9007199254740993n);
  });

  it('has PAR1 at both ends, a consistent footer length, and the expected footer', () => {
    const p = path.join(dir, 'draws.parquet');
    const buf = readFileSync(p);
    expect(buf.subarray(0, 4).toString('latin1')).toBe('PAR1');
    expect(buf.subarray(buf.length - 4).toString('latin1')).toBe('PAR1');
    const footerLen = buf.readUInt32LE(buf.length - 8);
    expect(footerLen).toBeGreaterThan(0);
    expect(footerLen).toBeLessThan(buf.length - 12);
    const ab = buf.buffer.slice(buf.byteOffset, buf.byteOffset + buf.byteLength);
    const md = parquetMetadata(ab);
    expect(Number(md.num_rows)).toBe(2500);
    expect(md.row_groups.map((g) => Number(g.num_rows))).toEqual([1000, 1000, 500]);
    const leaf = Object.fromEntries(md.schema.slice(1).map((s) => [s.name, s]));
    expect(leaf.id).toMatchObject({ type: 'INT64', repetition_type: 'REQUIRED' });
    expect(leaf.weight).toMatchObject({ type: 'DOUBLE', repetition_type: 'OPTIONAL' });
    expect(leaf.chain).toMatchObject({ type: 'INT32', repetition_type: 'OPTIONAL', converted_type: 'INT_16' });
    const kv = Object.fromEntries((md.key_value_metadata ?? []).map((e) => [e.key, e.value]));
    expect(JSON.parse(kv[COLUMNS_KEY]!)).toEqual([
      { name: 'id', ucd: 'meta.id' },
      { name: 'weight', description: 'Importance weight' },
      { name: 'chain' },
    ]);
    expect(md.created_by).toBe('posterity');
  });
});
