/**
 * The zero-copy Arrow IPC reader against the general one (apache-arrow's decoder, arrow.ts):
 * the same values for any block of rows, in files of several record batches, for every column
 * kind it lays views over; and no views (null, so the caller falls back) for what it does not
 * take: the stream format, nulls, dictionary-encoded strings, a truncated file.
 */
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import * as arrow from 'apache-arrow';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { IpcFile, type IpcColumn } from '../../src/lib/io/arrow-ipc.ts';
import { readArrowBatches } from '../../src/lib/io/arrow.ts';
import { uniforms } from '../core/stats/_random.ts';

let dir: string;
const N = 2500;
const ids = Array.from({ length: N }, (_, i) => `gal-${Math.floor(i / 7)}${i % 3 ? '' : '-Ångström'}`);
const f32 = Float32Array.from(uniforms(N, 1, -5, 5));
const f64 = Float64Array.from(uniforms(N, 2, -1e6, 1e6));
const i32 = Int32Array.from({ length: N }, (_, i) => i * 3 - 7);
const i64 = BigInt64Array.from({ length: N }, (_, i) => 9007199254740993n + BigInt(i));

function table(from: number, to: number) {
  return new arrow.Table({
    id: arrow.vectorFromArray(ids.slice(from, to), new arrow.Utf8()),
    x32: arrow.makeVector(f32.slice(from, to)),
    extra: arrow.makeVector(Float64Array.from({ length: to - from }, (_, i) => i)),
    x64: arrow.makeVector(f64.slice(from, to)),
    n32: arrow.makeVector(i32.slice(from, to)),
    n64: arrow.makeVector(i64.slice(from, to)),
  });
}

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'posterity-ipc-'));
  // three record batches of unequal length
  const parts = [table(0, 900), table(900, 1000), table(1000, N)];
  const t = new arrow.Table(parts.flatMap((p) => p.batches));
  await writeFile(join(dir, 'file.arrow'), arrow.tableToIPC(t, 'file'));
  await writeFile(join(dir, 'stream.arrow'), arrow.tableToIPC(t, 'stream'));
  const vec = arrow.vectorFromArray([1.5, null], new arrow.Float64());
  const t2 = new arrow.Table({ id: arrow.vectorFromArray(['a', 'b'], new arrow.Utf8()), v: vec });
  await writeFile(join(dir, 'nulls.arrow'), arrow.tableToIPC(t2, 'file'));
  const dict = arrow.vectorFromArray(['a', 'b', 'a'], new arrow.Dictionary(new arrow.Utf8(), new arrow.Int32()));
  await writeFile(join(dir, 'dict.arrow'), arrow.tableToIPC(new arrow.Table({ id: dict, v: arrow.vectorFromArray([1, 2, 3], new arrow.Float64()) }), 'file'));
  const whole = arrow.tableToIPC(t, 'file');
  await writeFile(join(dir, 'truncated.arrow'), whole.subarray(0, whole.length - 100));
});

afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

const values = (c: IpcColumn): unknown[] => {
  if (c.kind === 'utf8') {
    const d = new TextDecoder();
    return Array.from({ length: c.offsets.length - 1 }, (_, r) => d.decode(c.data.subarray(c.offsets[r] - c.offsets[0], c.offsets[r + 1] - c.offsets[0])));
  }
  return Array.from(c.values as ArrayLike<unknown>);
};

describe('IpcFile', () => {
  it('reads any block of rows of any record batch as the general reader decodes them', async () => {
    const names = ['id', 'x32', 'x64', 'n32', 'n64'];
    const ipc = await IpcFile.open(join(dir, 'file.arrow'), names);
    expect(ipc).not.toBeNull();
    expect(ipc!.batchCount).toBe(3);
    expect(ipc!.rows).toBe(N);
    const general: Record<string, unknown[]> = Object.fromEntries(names.map((n) => [n, []]));
    for await (const t of readArrowBatches(join(dir, 'file.arrow'))) for (const c of t.columns) if (c.name in general) general[c.name].push(...Array.from(c.values as ArrayLike<unknown>));
    const fields = names.map((n) => ipc!.field(n));
    for (let b = 0; b < ipc!.batchCount; b++) {
      const R = ipc!.batchRows(b);
      for (const [a, e] of [[0, R], [3, Math.min(R, 77)], [R - 5, R]]) {
        const block = await ipc!.read(b, a, e, fields);
        const row0 = ipc!.batchFirstRow(b) + a;
        expect(block.firstRow).toBe(row0);
        expect(block.columns.map((c) => c.kind)).toEqual(['utf8', 'float32', 'float64', 'int32', 'int64']);
        block.columns.forEach((c, k) => expect(values(c), names[k]).toEqual(general[names[k]].slice(row0, row0 + e - a)));
        // the views lie over the block's own memory, aligned
        for (const c of block.columns) if (c.kind !== 'utf8') expect(c.values.byteOffset % 8).toBe(0);
      }
    }
    await ipc!.close();
  });

  it('declines what it does not lay views over, so the caller uses the general reader', async () => {
    expect(await IpcFile.open(join(dir, 'stream.arrow'), ['id'])).toBeNull();
    expect(await IpcFile.open(join(dir, 'nulls.arrow'), ['id', 'v'])).toBeNull();
    expect(await IpcFile.open(join(dir, 'dict.arrow'), ['id', 'v'])).toBeNull();
    expect(await IpcFile.open(join(dir, 'truncated.arrow'), ['id'])).toBeNull();
    expect(await IpcFile.open(join(dir, 'file.arrow'), ['id', 'no such column'])).toBeNull();
    // a column it cannot view is fine when it is not wanted
    const ipc = await IpcFile.open(join(dir, 'dict.arrow'), ['v']);
    expect(ipc).not.toBeNull();
    await ipc!.close();
  });
});
