/**
 * Benchmark bundles: the demo generator at 512 draws and 8 parameters per object, seeded,
 * cached under `bench/cache/n<N>/` (git-ignored) and reused while the marker file matches.
 * Each size has three views sharing the same table files (hard links):
 *   full/            every table, samples as Arrow IPC (the whole pipeline)
 *   summ-arrow/      objects and samples only (Arrow IPC): what the summaries read
 *   summ-parquet/    objects and samples only, samples as Parquet
 * The summary views leave out photometry, spectra and models because `loadBundle(dir,
 * { samples: false })` still loads those tables whole, which the summaries do not need
 * (the objects table carries n_bands for the chi-square degrees of freedom).
 */
import { existsSync } from 'node:fs';
import { link, mkdir, readFile, rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { ParquetWriter, fileWriter } from 'hyparquet-writer';
import { generateDemoBundle } from '../demo/generate.ts';
import { readTableBatches } from '../../src/lib/io/read.ts';
import type { Column } from '../../src/lib/io/table.ts';

export const BENCH_SEED = 20260611;
export const DRAWS = 512;
export const PARAMS = 8 as const;

export interface BenchBundle {
  n: number;
  full: string;
  arrow: string;
  parquet: string;
}

export function bundlePaths(cache: string, n: number): BenchBundle {
  const base = join(cache, `n${n}`);
  return { n, full: join(base, 'full'), arrow: join(base, 'summ-arrow'), parquet: join(base, 'summ-parquet') };
}

function parquetType(c: Column): { type: 'DOUBLE' | 'FLOAT' | 'BYTE_ARRAY'; converted_type?: 'UTF8' } {
  if (c.kind === 'string') return { type: 'BYTE_ARRAY', converted_type: 'UTF8' };
  return { type: c.kind === 'float32' ? 'FLOAT' : 'DOUBLE' };
}

/** The samples file rewritten as Parquet, one record batch at a time (row groups of 262144 rows, Snappy). */
async function writeSamplesParquet(arrowPath: string, out: string): Promise<void> {
  let writer: ParquetWriter | null = null;
  const tmp = `${out}.tmp`;
  for await (const t of readTableBatches(arrowPath)) {
    if (!writer) {
      const schema = [{ name: 'root', num_children: t.columns.length }, ...t.columns.map((c) => ({ name: c.name, repetition_type: 'REQUIRED' as const, ...parquetType(c) }))];
      writer = new ParquetWriter({ writer: fileWriter(tmp), schema: schema as never, createdBy: 'posterity bench' });
    }
    await writer.write({ columnData: t.columns.map((c) => ({ name: c.name, data: c.values as never })), rowGroupSize: 262144 });
  }
  writer!.finish();
  const { rename } = await import('node:fs/promises');
  await rename(tmp, out);
}

async function view(from: string, to: string, samplesFile: string): Promise<void> {
  await rm(to, { recursive: true, force: true });
  await mkdir(to, { recursive: true });
  const cfg = JSON.parse(await readFile(join(from, 'release.json'), 'utf8'));
  for (const name of Object.keys(cfg.tables)) if (name !== 'objects' && name !== 'samples') delete cfg.tables[name];
  cfg.tables.samples.path = samplesFile;
  await link(join(from, cfg.tables.objects.path), join(to, cfg.tables.objects.path));
  await link(join(from, samplesFile), join(to, samplesFile));
  await writeFile(join(to, 'release.json'), JSON.stringify(cfg, null, 2) + '\n');
}

/** Generate (or reuse) the bundles of `n` objects. */
export async function ensureBundle(cache: string, n: number, log: (s: string) => void): Promise<BenchBundle> {
  const p = bundlePaths(cache, n);
  const marker = join(cache, `n${n}`, 'done.json');
  const spec = JSON.stringify({ n, draws: DRAWS, params: PARAMS, seed: BENCH_SEED, layout: 2 });
  if (existsSync(marker) && (await readFile(marker, 'utf8')) === spec) return p;
  await rm(join(cache, `n${n}`), { recursive: true, force: true });
  log(`generating ${n} objects x ${DRAWS} draws x ${PARAMS} parameters (cached under ${cache})`);
  const t0 = performance.now();
  await generateDemoBundle(p.full, { nObjects: n, drawsRange: [DRAWS, DRAWS], params: PARAMS, seed: BENCH_SEED });
  log(`  generated in ${((performance.now() - t0) / 1000).toFixed(0)} s; writing Parquet`);
  const t1 = performance.now();
  await writeSamplesParquet(join(p.full, 'samples.arrow'), join(p.full, 'samples.parquet'));
  log(`  Parquet written in ${((performance.now() - t1) / 1000).toFixed(0)} s`);
  await view(p.full, p.arrow, 'samples.arrow');
  await view(p.full, p.parquet, 'samples.parquet');
  await writeFile(marker, spec);
  return p;
}
