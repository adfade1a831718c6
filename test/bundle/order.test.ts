/**
 * Objects come out of loadBundle sorted by id (UTF-16 code units, stable), so the
 * catalogue, pages and downloads are in id order whatever the row order of objects.csv;
 * samples, photometry, spectra and models are grouped in that order.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { copyFileSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import type { Bundle } from '../../src/lib/bundle/load.ts';
import { readTable } from '../../src/lib/io/read.ts';
import { createHash } from 'node:crypto';
import { load } from './_problems.ts';

let tmp: string;
let a: Bundle;
let b: Bundle;
let rowsA: string[];

/** A seeded shuffle (mulberry32), so the test is the same every run. */
function shuffled<T>(xs: T[], seed: number): T[] {
  let s = seed >>> 0;
  const rnd = () => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = s;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  const out = xs.slice();
  for (let i = out.length - 1; i > 0; i--) {
    const j = Math.floor(rnd() * (i + 1));
    [out[i], out[j]] = [out[j], out[i]];
  }
  return out;
}

beforeAll(async () => {
  tmp = mkdtempSync(join(tmpdir(), 'posterity-order-'));
  const src = join(tmp, 'a');
  await generateDemoBundle(src, { nObjects: 60, seed: 7 });
  const dst = join(tmp, 'b');
  mkdirSync(dst);
  for (const f of readdirSync(src)) copyFileSync(join(src, f), join(dst, f));
  const [head, ...rows] = readFileSync(join(src, 'objects.csv'), 'utf8').trimEnd().split('\n');
  rowsA = rows;
  const mixed = shuffled(rows, 12345);
  expect(mixed).not.toEqual(rows);
  writeFileSync(join(dst, 'objects.csv'), [head, ...mixed].join('\n') + '\n');
  [a, b] = [await load(src), await load(dst)];
}, 120_000);
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

/** Everything of a Bundle that is content (not where it came from), as one SHA-256 per field. */
function content(x: Bundle): Record<string, string> {
  const { dir: _d, files: _f, objects, ...rest } = x;
  const { fileRow: _r, ...obj } = objects;
  const out: Record<string, string> = {};
  const walk = (v: unknown, path: string): void => {
    if (ArrayBuffer.isView(v)) {
      const h = createHash('sha256').update(v.constructor.name).update(new Uint8Array(v.buffer, v.byteOffset, v.byteLength));
      out[path] = h.digest('hex');
    } else if (v instanceof Map) walk(Object.fromEntries([...v.entries()].sort()), path);
    else if (Array.isArray(v) && v.every((e) => typeof e !== 'object' || e === null)) out[path] = createHash('sha256').update(JSON.stringify(v)).digest('hex');
    else if (v && typeof v === 'object') for (const [k, e] of Object.entries(v)) walk(e, `${path}.${k}`);
    else out[path] = JSON.stringify(v) ?? 'undefined';
  };
  walk({ ...rest, objects: obj }, '');
  return out;
}

describe('object order', () => {
  it('objects are sorted by id, by code units', () => {
    const ids = a.objects.id;
    for (let i = 1; i < ids.length; i++) expect(ids[i - 1] < ids[i]).toBe(true);
    expect([...a.objects.index.entries()].every(([id, k]) => ids[k] === id)).toBe(true);
  });

  it('fileRow maps each object back to its row of objects.csv', () => {
    const { id, fileRow } = b.objects;
    const ids = readFileSync(join(tmp, 'b', 'objects.csv'), 'utf8').trimEnd().split('\n').slice(1).map((l) => l.split(',')[0]);
    id.forEach((s, k) => expect(ids[fileRow![k]]).toBe(s));
    expect(rowsA.length).toBe(a.objects.n);
  });

  it('shuffling the rows of objects.csv gives the same Bundle content', () => {
    const ca = content(a);
    expect(Object.keys(ca).length).toBeGreaterThan(40);
    expect(content(b)).toStrictEqual(ca);
    // only the checksum of objects.csv differs in the provenance
    const diff = a.files.filter((f, i) => f.sha256 !== b.files[i].sha256).map((f) => f.path);
    expect(diff).toEqual(['objects.csv']);
  });

  it('per-object tables are grouped in the sorted order, file order within an object', async () => {
    const dir = join(tmp, 'b');
    const cfg = JSON.parse(readFileSync(join(dir, 'release.json'), 'utf8'));
    for (const name of ['samples', 'photometry', 'spectra', 'models'] as const) {
      const g = b[name]!;
      const ref = cfg.tables[name];
      const t = await readTable(join(dir, ref.path));
      const ids = t.columns.find((c) => c.name === (ref.columns?.id ?? 'id'))!.values as string[];
      expect(g.offsets[b.objects.n], name).toBe(t.numRows);
      let wrongObject = 0, outOfOrder = 0;
      for (let k = 0; k < b.objects.n; k++)
        for (let r = g.offsets[k]; r < g.offsets[k + 1]; r++) {
          if (ids[g.order[r]] !== b.objects.id[k]) wrongObject++;
          if (r > g.offsets[k] && g.order[r] <= g.order[r - 1]) outOfOrder++;
        }
      expect({ name, wrongObject, outOfOrder }).toEqual({ name, wrongObject: 0, outOfOrder: 0 });
    }
  });
});
