/**
 * Summaries kept between builds of the same output, so that a rebuild after editing
 * `release.json` text (title, description, relations, site settings, ...) does not summarise
 * every posterior again. The cache is one whole-catalogue partial file (`partials.ts` format)
 * with its key beside it. The key is a SHA-256 over everything the summaries depend on: the
 * tool version, the checksums of the objects, samples and photometry tables, and the whole of
 * `release.json` except the fields listed in `NOT_SUMMARY_INPUTS`, which the summaries never
 * read. Anything else that changes (a parameter, a quality threshold, the seed, a column map)
 * changes the key, so a stale summary is never reused; a change to one object's draws changes
 * the samples checksum and every object is summarised again (the figures of unchanged objects
 * are still reused, by their own cache).
 */
import { createHash } from 'node:crypto';
import { existsSync } from 'node:fs';
import { mkdir, readFile, rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { Bundle } from '../bundle/load.ts';
import type { ChartsSource } from './partials.ts';
import { writePartial } from './partials.ts';
import type { PopulationDraws, SummaryTable } from './summarise.ts';
import { mergePartials, summaryMeta, type MergedSummary } from './summarise-partition.ts';

/** Top-level `release.json` fields the summaries do not read (display, population and site settings). */
export const NOT_SUMMARY_INPUTS = [
  'title', 'version', 'releaseDate', 'description', 'citation', 'licence', 'doi', 'changelog', 'survey',
  'cosmology', 'model', 'relations', 'populations', 'site',
] as const;

const SUMMARY_TABLES = new Set(['objects', 'samples', 'photometry']);

/** The cache key of a bundle's summaries (see the module comment). */
export function summaryKey(bundle: Bundle, tool: { name: string; version: string }): string {
  const config: Record<string, unknown> = { ...(bundle.config as unknown as Record<string, unknown>) };
  for (const k of NOT_SUMMARY_INPUTS) delete config[k];
  const inputs = bundle.files.filter((f) => SUMMARY_TABLES.has(f.table)).map((f) => ({ table: f.table, path: f.path, sha256: f.sha256 }));
  return createHash('sha256').update(JSON.stringify({ tool, inputs, config })).digest('hex');
}

const FILE = 'summaries.partial';
const KEY = 'key.txt';

/** The cached summaries when their key matches, else null (a damaged cache counts as a miss). */
export async function readCachedSummary(dir: string, key: string): Promise<MergedSummary | null> {
  try {
    if (!existsSync(join(dir, FILE)) || (await readFile(join(dir, KEY), 'utf8')).trim() !== key) return null;
    return await mergePartials([join(dir, FILE)]);
  } catch {
    return null;
  }
}

/**
 * Store a bundle's summaries under `dir` with their key. Corner data comes from `charts` (the
 * pipeline's spool, `ChartSpool.source`), or none.
 */
export async function writeCachedSummary(
  dir: string,
  key: string,
  bundle: Bundle,
  table: SummaryTable,
  pop: PopulationDraws,
  charts: ChartsSource | null,
): Promise<void> {
  await mkdir(dir, { recursive: true });
  await rm(join(dir, KEY), { force: true });
  const members = Int32Array.from({ length: table.n }, (_, i) => i);
  await writePartial(join(dir, FILE), summaryMeta(bundle), table, pop, members, charts && charts.index.length ? charts : null);
  await writeFile(join(dir, KEY), key + '\n');
}
