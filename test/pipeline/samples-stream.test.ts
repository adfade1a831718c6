/**
 * Above `site.objectPageLimit` the pipeline never holds the samples table: the samples download
 * and the mock calibration come from one streamed pass (`samples-pass.ts`). The same bundle built
 * both ways must give the same calibration numbers and the same draws (the streamed Parquet file
 * lists objects in file order, which for this bundle is catalogue order), and the streamed pass
 * must handle input whose objects are not contiguous (the spill route).
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { runPipeline } from '../../src/lib/pipeline/run.ts';
import { loadBundle } from '../../src/lib/bundle/load.ts';
import { readParquet } from '../../src/lib/io/parquet.ts';
import { readTable } from '../../src/lib/io/read.ts';
import { writeArrow } from '../../src/lib/io/arrow.ts';
import { calibrationFromSamples, streamSampleProducts } from '../../src/lib/pipeline/samples-pass.ts';

const ROOT = join(PROJECT_ROOT, 'test-output', 'samples-stream');
const N = 40;

function setLimit(bundle: string, limit: number): void {
  const cfg = JSON.parse(readFileSync(join(bundle, 'release.json'), 'utf8'));
  cfg.site = { ...(cfg.site ?? {}), objectPageLimit: limit };
  writeFileSync(join(bundle, 'release.json'), JSON.stringify(cfg, null, 2));
}

describe('samples streamed above the object-page limit', () => {
  const loaded = join(ROOT, 'loaded');
  const streamed = join(ROOT, 'streamed');
  beforeAll(async () => {
    rmSync(ROOT, { recursive: true, force: true });
    mkdirSync(ROOT, { recursive: true });
    await generateDemoBundle(join(loaded, 'bundle'), { nObjects: N, drawsRange: [48, 96], seed: 11 });
    await generateDemoBundle(join(streamed, 'bundle'), { nObjects: N, drawsRange: [48, 96], seed: 11 });
    setLimit(join(streamed, 'bundle'), 10);
    for (const d of [loaded, streamed]) await runPipeline(join(d, 'bundle'), { contentDir: join(d, 'content'), downloadsDir: join(d, 'downloads') });
  }, 300_000);

  it('gives the same calibration as the samples held in memory', () => {
    const q = (d: string) => JSON.parse(readFileSync(join(d, 'content', 'quality.json'), 'utf8')).calibration;
    const a = q(loaded), b = q(streamed);
    expect(a.length).toBeGreaterThan(0);
    expect(b).toEqual(a);
  });

  it('writes every draw, weights normalised per object, the same rows as the in-memory route', async () => {
    const a = await readParquet(join(loaded, 'downloads', 'samples.parquet'));
    const b = await readParquet(join(streamed, 'downloads', 'samples.parquet'));
    expect(b.numRows).toBe(a.numRows);
    expect(b.columns.map((c) => c.name)).toEqual(a.columns.map((c) => c.name));
    const rows = (t: typeof a) => Array.from({ length: t.numRows }, (_, r) => t.columns.map((c) => String(c.values[r])).join(',')).sort();
    expect(rows(b)).toEqual(rows(a));
    const id = b.columns[0].values as string[];
    const w = b.columns[1].values as Float64Array;
    const sums = new Map<string, number>();
    for (let r = 0; r < b.numRows; r++) sums.set(id[r], (sums.get(id[r]) ?? 0) + w[r]);
    expect(sums.size).toBe(N);
    for (const s of sums.values()) expect(s).toBeCloseTo(1, 12);
    const site = JSON.parse(readFileSync(join(streamed, 'content', 'site.json'), 'utf8'));
    expect(site.counts.draws).toBe(b.numRows);
    expect(site.objectPages.mode).toBe('viewer');
  });

  it('streams input whose objects are not contiguous (spill route) to the same calibration', async () => {
    const dir = join(ROOT, 'shuffled');
    await generateDemoBundle(dir, { nObjects: N, drawsRange: [48, 96], seed: 11 });
    const cfg = JSON.parse(readFileSync(join(dir, 'release.json'), 'utf8'));
    const path = join(dir, cfg.tables.samples.path);
    const t = await readTable(path);
    expect(path.endsWith('.arrow')).toBe(true);
    // interleave the first and the last rows, so no object's rows stay contiguous
    const n = t.numRows;
    const order = Array.from({ length: n }, (_, r) => (r % 2 === 0 ? r / 2 : n - 1 - (r - 1) / 2));
    const pick = (v: ArrayLike<unknown>) => (Array.isArray(v) ? order.map((r) => v[r]) : new (v.constructor as Float64ArrayConstructor)(order.map((r) => Number(v[r]))));
    await writeArrow(path, { numRows: n, columns: t.columns.map((c) => ({ ...c, values: pick(c.values) as never })) });
    const inMemory = calibrationFromSamples(await loadBundle(dir));
    const s = await streamSampleProducts(await loadBundle(dir, { samples: false }), { parquetPath: null, calibration: true });
    expect(s.rows).toBe(n);
    expect([...s.calibration.keys()]).toEqual([...inMemory.keys()]);
    for (const [k, v] of inMemory) {
      expect(s.calibration.get(k)!.coverage).toEqual(v.coverage);
      expect(Array.from(s.calibration.get(k)!.pit)).toEqual(Array.from(v.pit));
    }
  });
});
