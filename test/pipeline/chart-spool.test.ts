/**
 * The spool of corner data between summarising and page writing: a few append-only files with
 * an offset index. Objects come back byte for byte in any order, a later set replaces an
 * earlier one, a file goes once every object in it was taken, and everything goes on close.
 */
import { existsSync, readdirSync } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { ChartSpool } from '../../src/lib/pipeline/chart-spool.ts';

const enc = new TextEncoder();
const json = (i: number) => enc.encode(JSON.stringify({ marginals: [{ param: `p${i}`, edges: [i, i + 1] }], contours: [], correlation: null }).padEnd(40 + (i % 7) * 30, ' '));
let dirs: string[] = [];
afterEach(async () => {
  for (const d of dirs) await rm(d, { recursive: true, force: true });
  dirs = [];
});
async function spoolDir() {
  const d = await mkdtemp(join(tmpdir(), 'posterity-spool-test-'));
  dirs.push(d);
  return join(d, 'spool');
}

describe('ChartSpool', () => {
  it('returns every object in catalogue order whatever order they were set in, across several files', async () => {
    const dir = await spoolDir();
    const n = 60;
    const spool = new ChartSpool(dir, n, { fileBytes: 1000, bufferBytes: 256 });
    const order = Array.from({ length: n }, (_, i) => (i * 37) % n);
    for (const i of order) spool.set(i, json(i));
    expect(readdirSync(dir).length).toBeGreaterThan(3);
    for (let i = 0; i < n; i++) {
      const line = spool.bytes(i)!;
      expect(Buffer.from(line).toString()).toBe(Buffer.from(json(i)).toString() + '\n');
      expect(spool.take(i)).toEqual(JSON.parse(Buffer.from(json(i)).toString()));
      expect(spool.has(i)).toBe(false);
    }
    // every file was taken empty (the last one, still being written, stays until close)
    expect(readdirSync(dir).length).toBeLessThanOrEqual(1);
    spool.close();
    expect(existsSync(dir)).toBe(false);
  });

  it('replaces an object set twice, forgets everything on reset, and gives a partial-file source', async () => {
    const spool = new ChartSpool(await spoolDir(), 5);
    spool.set(2, json(2));
    spool.set(2, { marginals: [], contours: [], correlation: [[1]] });
    expect(spool.take(2)).toEqual({ marginals: [], contours: [], correlation: [[1]] });
    expect(spool.take(2)).toBeNull();
    spool.set(1, json(1));
    spool.set(4, json(4));
    const src = spool.source(Int32Array.of(0, 1, 2, 3, 4));
    expect(Array.from(src.index)).toEqual([1, 4]);
    const lines: string[] = [];
    for await (const l of src.lines()) lines.push(Buffer.from(l).toString());
    expect(lines).toEqual([Buffer.from(json(1)).toString() + '\n', Buffer.from(json(4)).toString() + '\n']);
    expect(Array.from(src.lengths)).toEqual(lines.map((l) => Buffer.byteLength(l)));
    spool.reset();
    expect(spool.has(1)).toBe(false);
    spool.set(3, json(3));
    expect(spool.take(3)).toEqual(JSON.parse(Buffer.from(json(3)).toString()));
    spool.close();
  });
});
