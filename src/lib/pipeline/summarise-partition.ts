/**
 * Map and merge: `summarisePartition` summarises the objects of one partition of the
 * catalogue (the FNV-1a 32-bit hash of the UTF-8 id, modulo the number of parts) and writes a
 * partial file (`partials.ts`); `mergePartials` combines the partials of every part into
 * exactly the result one pass over the whole catalogue gives. Partials record the bundle's
 * checksums and the tool version, and are refused when they do not belong together.
 */
import { mkdir, mkdtemp } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { loadBundle, type Bundle } from '../bundle/load.ts';
import { PosterityError, type Problem } from '../core/problems.ts';
import { allocPopulationDraws, allocSummaryTable, summariseAll, type PopulationDraws, type SummaryTable } from './summarise.ts';
import type { ObjectCharts } from './summarise-kernel.ts';
import { readPartial, scatterPartial, writePartial, type ChartsSource, type PartialHeader, type PartialMeta } from './partials.ts';
import { TOOL } from './run.ts';
import { ChartSpool } from './chart-spool.ts';

export const PARTITION_RULE = 'fnv1a32(utf8(id)) mod of';

const encoder = new TextEncoder();

/** FNV-1a, 32 bits, over the UTF-8 bytes of a string (Fowler, Noll & Vo; offset basis 2166136261, prime 16777619). */
export function fnv1a32(text: string): number {
  const bytes = encoder.encode(text);
  let h = 0x811c9dc5;
  for (let i = 0; i < bytes.length; i++) {
    h ^= bytes[i];
    h = Math.imul(h, 0x01000193);
  }
  return h >>> 0;
}

/** The part (0 .. of-1) an object id belongs to. */
export function partitionOf(id: string, of: number): number {
  return fnv1a32(id) % of;
}

function partialMeta(bundle: Bundle, part: number, of: number): PartialMeta {
  const cfg = bundle.files.find((f) => f.table === 'release.json');
  return {
    tool: { name: TOOL.name, version: TOOL.version },
    bundle: { configSha256: cfg?.sha256 ?? '', inputs: bundle.files.map((f) => ({ table: f.table, path: f.path, bytes: f.bytes, sha256: f.sha256 })) },
    partition: { part, of, rule: PARTITION_RULE },
    params: bundle.config.parameters.map((p) => p.name),
  };
}

export interface PartitionOptions {
  part: number;
  of: number;
  /** Folder of the partial file (default `<bundle>/.posterity/partials`). */
  outDir?: string;
  /** Include the corner-plot data (default true). */
  charts?: boolean;
  workers?: number;
}

export interface PartitionResult {
  file: string;
  /** Objects of this part. */
  objects: number;
  header: PartialHeader;
}

/** Summarise the objects of one part of the catalogue and write its partial file. */
export async function summarisePartition(bundleDir: string, opts: PartitionOptions): Promise<PartitionResult> {
  const { part, of } = opts;
  if (!(Number.isInteger(of) && of >= 1 && Number.isInteger(part) && part >= 0 && part < of))
    throw new PosterityError({ severity: 'error', field: 'part', message: 'invalid partition', expected: 'integers 0 <= part < of', got: `part ${part} of ${of}` });
  const bundle = await loadBundle(bundleDir, { samples: false });
  const n = bundle.objects.n;
  const member = new Uint8Array(n);
  for (let i = 0; i < n; i++) member[i] = partitionOf(bundle.objects.id[i], of) === part ? 1 : 0;
  const members = Int32Array.from({ length: n }, (_, i) => i).filter((i) => member[i] === 1);
  // corner data waits in a spool (any order in, catalogue order out): memory holds three numbers per object, not the charts
  const spool = opts.charts === false ? null : new ChartSpool(await mkdtemp(join(tmpdir(), 'posterity-charts-')), n);
  try {
    const { table, pop } = await summariseAll(bundle, {
      seed: bundle.config.seed,
      only: (i) => member[i] === 1,
      workers: opts.workers,
      ...(spool ? { onChartsJson: (i: number, json: Uint8Array) => spool.set(i, json), onRestart: () => spool.reset() } : {}),
    });
    const outDir = opts.outDir ?? join(bundleDir, '.posterity', 'partials');
    await mkdir(outDir, { recursive: true });
    const file = join(outDir, `summary-part-${part}-of-${of}.partial`);
    const header = await writePartial(file, partialMeta(bundle, part, of), table, pop, members, spool ? spool.source(members) : null);
    return { file, objects: members.length, header };
  } finally {
    spool?.close();
  }
}

export interface MergedSummary {
  table: SummaryTable;
  pop: PopulationDraws;
  /** Corner data per object (null for objects without draws); null when the partials carry none. */
  charts: (ObjectCharts | null)[] | null;
  meta: PartialMeta;
}

/** Combine the partials of every part into the whole catalogue's summaries; refuses partials that do not belong together. */
export async function mergePartials(files: string[]): Promise<MergedSummary> {
  if (files.length === 0) throw new PosterityError({ severity: 'error', message: 'no partial summaries to merge', expected: 'one file per part' });
  const parts = [];
  for (const f of files) parts.push(await readPartial(f));
  const first = parts[0];
  const h0 = first.header;
  const problems: Problem[] = [];
  const sameBundle = (h: PartialHeader) => JSON.stringify(h.bundle) === JSON.stringify(h0.bundle);
  const byPart = new Map<number, string>();
  for (const p of parts) {
    const h = p.header;
    if (h.tool.name !== TOOL.name || h.tool.version !== TOOL.version)
      problems.push({ severity: 'error', file: p.file, message: 'partial summary written by another version of the tool; summarise this part again', expected: `${TOOL.name} ${TOOL.version}`, got: `${h.tool.name} ${h.tool.version}` });
    if (!sameBundle(h)) {
      const diff = h.bundle.configSha256 !== h0.bundle.configSha256 ? 'release.json' : (h.bundle.inputs.find((x, i) => JSON.stringify(x) !== JSON.stringify(h0.bundle.inputs[i]))?.path ?? 'the list of input files');
      problems.push({ severity: 'error', file: p.file, message: `partial summary of a different bundle than ${first.file} (${diff} differs)`, expected: `checksums of ${first.file}`, got: 'other checksums' });
    }
    if (h.partition.of !== h0.partition.of || h.partition.rule !== h0.partition.rule)
      problems.push({ severity: 'error', file: p.file, message: `partial summary of a different partitioning than ${first.file}`, expected: `parts of ${h0.partition.of} by ${h0.partition.rule}`, got: `part ${h.partition.part} of ${h.partition.of} by ${h.partition.rule}` });
    if (h.n !== h0.n || h.k !== h0.k || h.m !== h0.m || h.hasLogPrior !== h0.hasLogPrior || JSON.stringify(h.params) !== JSON.stringify(h0.params) || h.charts !== h0.charts)
      problems.push({ severity: 'error', file: p.file, message: `partial summary with a different shape than ${first.file}`, expected: `${h0.n} objects, ${h0.k} parameters, ${h0.m} draws, charts ${h0.charts}`, got: `${h.n} objects, ${h.k} parameters, ${h.m} draws, charts ${h.charts}` });
    const dup = byPart.get(h.partition.part);
    if (dup !== undefined) problems.push({ severity: 'error', file: p.file, message: `part ${h.partition.part} of ${h.partition.of} is given twice (also ${dup})`, expected: 'each part once' });
    else byPart.set(h.partition.part, p.file);
  }
  const of = h0.partition.of;
  const missing = Array.from({ length: of }, (_, i) => i).filter((i) => !byPart.has(i));
  if (missing.length && problems.length === 0)
    problems.push({ severity: 'error', message: `missing part${missing.length > 1 ? 's' : ''} ${missing.join(', ')} of ${of}`, expected: `the partial summaries of parts 0 to ${of - 1}`, got: `parts ${[...byPart.keys()].sort((a, b) => a - b).join(', ')}` });
  if (problems.length) throw new PosterityError(problems);

  const n = h0.n;
  const table = allocSummaryTable(n, h0.k);
  const pop = allocPopulationDraws(n, h0.k, h0.m, h0.hasLogPrior);
  const owner = new Int32Array(n).fill(-1);
  const charts: (ObjectCharts | null)[] | null = h0.charts ? new Array(n).fill(null) : null;
  const decoder = new TextDecoder();
  for (const [pi, p] of parts.entries()) {
    const members = p.arrays.get('members') as Int32Array;
    for (const i of members) {
      if (!(i >= 0 && i < n) || owner[i] >= 0)
        throw new PosterityError({ severity: 'error', file: p.file, message: owner[i] >= 0 ? `object ${i + 1} is in two partials (also ${parts[owner[i]].file})` : 'object index out of range', expected: `indices 0 to ${n - 1}, each in one partial` });
      owner[i] = pi;
    }
    scatterPartial(p, table, pop);
    if (charts && p.charts) {
      const index = p.arrays.get('chartsIndex') as Int32Array;
      const offsets = p.arrays.get('chartsOffsets') as Float64Array;
      for (let c = 0; c < index.length; c++) charts[index[c]] = JSON.parse(decoder.decode(p.charts.subarray(offsets[c], offsets[c + 1])));
    }
  }
  const uncovered = owner.findIndex((o) => o < 0);
  if (uncovered >= 0) throw new PosterityError({ severity: 'error', message: `object ${uncovered + 1} of ${n} is in none of the partials`, expected: 'every object in one partial' });
  return { table, pop, charts, meta: { tool: h0.tool, bundle: h0.bundle, params: h0.params, partition: { part: 0, of: 1, rule: h0.partition.rule } } };
}

/** Corner data held in memory, as a `ChartsSource` in catalogue order. */
export function chartsSource(charts: (ObjectCharts | null)[]): ChartsSource {
  const have: number[] = [];
  const lines: Uint8Array[] = [];
  charts.forEach((c, i) => {
    if (!c) return;
    have.push(i);
    lines.push(encoder.encode(JSON.stringify(c) + '\n'));
  });
  return {
    index: Int32Array.from(have),
    lengths: Float64Array.from(lines, (l) => l.length),
    lines: async function* () {
      yield* lines;
    },
  };
}

/** Write a merged (or any whole-catalogue) summary in the partial format, as part 0 of 1. */
export async function writeMerged(file: string, merged: MergedSummary): Promise<PartialHeader> {
  const n = merged.table.n;
  const members = Int32Array.from({ length: n }, (_, i) => i);
  return writePartial(file, merged.meta, merged.table, merged.pop, members, merged.charts ? chartsSource(merged.charts) : null);
}

/** The partial-file metadata of a bundle (for writing a whole-catalogue summary with `writeMerged`). */
export function summaryMeta(bundle: Bundle): PartialMeta {
  return partialMeta(bundle, 0, 1);
}
