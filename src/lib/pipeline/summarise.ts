/**
 * Per-object posterior summaries: every object's draws are gathered, their weights
 * normalised, and each parameter summarised (mean, std, quantiles, HDI), with the
 * effective sample size, diagnostics and flags, the corner-plot densities, and a small
 * equal-weight resample kept for population fits.
 *
 * The work is split by whole objects (`summarise-kernel.ts`) over worker threads
 * (`summarise-pool.ts`), and results are placed by catalogue index, so one worker and many
 * give the same arrays. With the samples in memory (a bundle loaded whole) objects are
 * gathered from the loader's grouping; with `loadBundle(dir, { samples: false })` the samples
 * file is streamed in batches (`summarise-stream.ts`) and never held whole.
 */
import { availableParallelism } from 'node:os';
import type { Bundle } from '../bundle/load.ts';
import type { ReleaseConfig } from '../bundle/schema.ts';
import { ProblemSink } from '../bundle/coerce.ts';
import { PosterityError } from '../core/problems.ts';
import { chi2Sf } from '../core/stats/special.ts';
import { FLAGS } from '../core/flags.ts';
import { kernelContext, STAT_FIELDS, type BatchResult, type ObjectBatch, type ObjectCharts } from './summarise-kernel.ts';
import { SummaryPool } from './summarise-pool.ts';
import { groupedBatches, NotGrouped, sampleLayout, spilledBatches, type SampleLayout } from './summarise-stream.ts';

export { MASS_LEVELS, MULTIMODAL_OPTS, type ObjectCharts } from './summarise-kernel.ts';

export interface SummaryTable {
  n: number;
  k: number;
  /** [param][object] */
  mean: Float64Array[];
  std: Float64Array[];
  p025: Float64Array[];
  p16: Float64Array[];
  p50: Float64Array[];
  p84: Float64Array[];
  p975: Float64Array[];
  hdi68lo: Float64Array[];
  hdi68hi: Float64Array[];
  hdi95lo: Float64Array[];
  hdi95hi: Float64Array[];
  multimodal: Uint8Array[];
  edgeMass: Float64Array[];
  /** Covariance matrices, k*k per object. */
  cov: Float64Array;
  nSamples: Int32Array;
  ess: Float64Array;
  essKind: ('kish' | 'autocorrelation')[];
  chi2: Float64Array;
  dof: Float64Array;
  chi2Pvalue: Float64Array;
  flags: Int32Array;
  summariesOnly: Uint8Array;
}

/** Equal-weight resample of each object's draws, for population fits and bootstraps. */
export interface PopulationDraws {
  m: number;
  /** [param] -> n*m values; object i owns [i*m, (i+1)*m). NaN where the object has no draws. */
  values: Float64Array[];
  /** Interim log prior of each kept draw (NaN when unknown). */
  logPrior: Float64Array;
  hasLogPrior: boolean;
}

/** The per-parameter statistics of `SummaryTable`, in the kernel's `STAT_NAMES` order. */
export const STAT_KEYS = ['mean', 'std', 'p025', 'p16', 'p50', 'p84', 'p975', 'hdi68lo', 'hdi68hi', 'hdi95lo', 'hdi95hi', 'edgeMass'] as const;

/** Degrees of freedom of an object's chi-square: bands minus the configured number (default: the free parameters). */
export function degreesOfFreedom(nBands: number, config: ReleaseConfig): number {
  const sub = config.quality.dofSubtract ?? config.parameters.length;
  return nBands - sub;
}

function allocF(n: number, k: number, fill = NaN): Float64Array[] {
  return Array.from({ length: k }, () => new Float64Array(n).fill(fill));
}

export function allocSummaryTable(n: number, k: number): SummaryTable {
  return {
    n,
    k,
    mean: allocF(n, k),
    std: allocF(n, k),
    p025: allocF(n, k),
    p16: allocF(n, k),
    p50: allocF(n, k),
    p84: allocF(n, k),
    p975: allocF(n, k),
    hdi68lo: allocF(n, k),
    hdi68hi: allocF(n, k),
    hdi95lo: allocF(n, k),
    hdi95hi: allocF(n, k),
    multimodal: Array.from({ length: k }, () => new Uint8Array(n)),
    edgeMass: allocF(n, k),
    cov: new Float64Array(n * k * k).fill(NaN),
    nSamples: new Int32Array(n),
    ess: new Float64Array(n).fill(NaN),
    essKind: new Array(n).fill('kish'),
    chi2: new Float64Array(n).fill(NaN),
    dof: new Float64Array(n).fill(NaN),
    chi2Pvalue: new Float64Array(n).fill(NaN),
    flags: new Int32Array(n),
    summariesOnly: new Uint8Array(n),
  };
}

export function allocPopulationDraws(n: number, k: number, m: number, hasLogPrior: boolean): PopulationDraws {
  return {
    m,
    values: Array.from({ length: k }, () => new Float64Array(n * m).fill(NaN)),
    logPrior: new Float64Array(n * m).fill(NaN),
    hasLogPrior,
  };
}

export interface SummariseOptions {
  popDraws?: number;
  seed: number;
  /**
   * Called once per object with draws, with its catalogue index and corner-plot data: in
   * catalogue order for samples in memory or spilled, in samples-file order when streamed
   * (the same order for any number of workers). When streamed samples turn out not to be
   * grouped by object part-way through, the summaries start again from a spill of the file:
   * `onRestart` is called, then `onCharts` again for every object (a later call for an index
   * supersedes an earlier one).
   */
  onCharts?: (index: number, charts: ObjectCharts) => void | Promise<void>;
  /**
   * The same corner data as its JSON text (UTF-8, `JSON.stringify` of what `onCharts` gets), as
   * the worker threads wrote it: cheaper for a caller that stores it. Called like `onCharts`,
   * and before it when both are given. The bytes are a view, valid during the call.
   */
  onChartsJson?: (index: number, json: Uint8Array) => void | Promise<void>;
  onRestart?: () => void | Promise<void>;
  /** Worker threads (default: one per core; 1 works in this thread). Results do not depend on it. */
  workers?: number;
  /** Only objects for which this is true are summarised (the others keep their initial NaN/0 values). */
  only?: (index: number) => boolean;
  /** Rows per batch handed to a worker (whole objects; default 16384, 131072 for a zero-copy Arrow IPC read). */
  batchRows?: number;
  /** Streaming, unsorted input: largest spill file read back at once (default 256 MB). */
  spillBudgetBytes?: number;
  /** Streaming: how the samples were read. */
  onStream?: (info: StreamInfo) => void;
}

export interface StreamInfo {
  mode: 'in-memory' | 'grouped' | 'spilled';
  /** Why the grouped pass gave up, when it did. */
  restartReason?: string;
  spill?: { partitions: number; bytes: number; rows: number };
}

export interface SummaryResult {
  table: SummaryTable;
  pop: PopulationDraws;
}

/** Chi-square survival probability and the poor-fit flag of object i. */
function fitQuality(bundle: Bundle, t: SummaryTable, i: number, bandsPerObject: Int32Array): void {
  const { config, objects } = bundle;
  const chi2 = objects.chi2 ? objects.chi2[i] : NaN;
  t.chi2[i] = chi2;
  if (Number.isFinite(chi2) && bandsPerObject[i] > 0) {
    const dof = degreesOfFreedom(bandsPerObject[i], config);
    if (dof > 0) {
      t.dof[i] = dof;
      t.chi2Pvalue[i] = chi2Sf(chi2, dof);
      if (t.chi2Pvalue[i] < config.quality.minChi2Pvalue) t.flags[i] |= FLAGS.POOR_FIT;
    }
  }
}

function bandsPerObject(bundle: Bundle): Int32Array {
  const { objects, photometry } = bundle;
  const n = objects.n;
  const out = new Int32Array(n);
  if (objects.nBands) out.set(objects.nBands);
  else if (photometry)
    for (let i = 0; i < n; i++) {
      let c = 0;
      for (let r = photometry.offsets[i]; r < photometry.offsets[i + 1]; r++) {
        const row = photometry.order[r];
        if (!(photometry.upperLimit && photometry.upperLimit[row])) c++;
      }
      out[i] = c;
    }
  return out;
}

/** Summaries supplied in the objects table (objects without draws). */
function summariesOnly(bundle: Bundle, t: SummaryTable, i: number): void {
  const k = t.k;
  t.summariesOnly[i] = 1;
  t.flags[i] |= FLAGS.SUMMARIES_ONLY;
  bundle.config.parameters.forEach((p, j) => {
    const s = bundle.objects.summaries[p.name];
    if (!s) return;
    t.p16[j][i] = s.p16[i];
    t.p50[j][i] = s.p50[i];
    t.p84[j][i] = s.p84[i];
    t.mean[j][i] = s.p50[i];
    t.std[j][i] = (s.p84[i] - s.p16[i]) / 2;
    // Gaussian approximation for the population fits
    const sd = t.std[j][i];
    t.cov[i * k * k + j * k + j] = sd * sd;
  });
  for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) if (a !== b) t.cov[i * k * k + a * k + b] = 0;
}

/** Place a batch's results at their catalogue indices. */
export function applyBatchResult(t: SummaryTable, pop: PopulationDraws, r: BatchResult): void {
  const k = t.k;
  const m = pop.m;
  const cols = STAT_KEYS.map((key) => t[key]);
  for (let o = 0; o < r.index.length; o++) {
    if (!r.valid[o]) continue; // bad rows: reported, not summarised
    const i = r.index[o];
    for (let j = 0; j < k; j++) {
      const at = (o * k + j) * STAT_FIELDS;
      for (let f = 0; f < STAT_FIELDS; f++) cols[f][j][i] = r.stats[at + f];
      t.multimodal[j][i] = r.multimodal[o * k + j];
      pop.values[j].set(r.popValues.subarray((o * k + j) * m, (o * k + j + 1) * m), i * m);
    }
    t.cov.set(r.cov.subarray(o * k * k, (o + 1) * k * k), i * k * k);
    t.ess[i] = r.ess[o];
    t.essKind[i] = r.essKind[o] ? 'autocorrelation' : 'kish';
    t.nSamples[i] = r.nSamples[o];
    t.flags[i] = (t.flags[i] & FLAGS.POOR_FIT) | r.flags[o]; // a restarted pass replaces, never adds
    pop.logPrior.set(r.popLogPrior.subarray(o * m, (o + 1) * m), i * m);
  }
}

/** Batches of whole objects from samples already in memory (the loader's grouping), in catalogue order. */
function* memoryBatches(bundle: Bundle, only: ((i: number) => boolean) | undefined, batchRows: number): Generator<ObjectBatch> {
  const s = bundle.samples!;
  const k = bundle.config.parameters.length;
  const n = bundle.objects.n;
  const src = s.weight ?? s.logWeight!;
  let i = 0;
  while (i < n) {
    const members: number[] = [];
    let rows = 0;
    for (; i < n && rows < batchRows; i++) {
      const len = s.offsets[i + 1] - s.offsets[i];
      if (len === 0 || (only && !only(i))) continue;
      members.push(i);
      rows += len;
    }
    if (!members.length) continue;
    const start = new Int32Array(members.length);
    const end = new Int32Array(members.length);
    let r0 = 0;
    members.forEach((obj, o) => {
      start[o] = r0;
      end[o] = r0 += s.offsets[obj + 1] - s.offsets[obj];
    });
    const params = Array.from({ length: k }, () => new Float64Array(rows));
    const weight = new Float64Array(rows);
    const logPrior = s.logPrior ? new Float64Array(rows) : null;
    const chain = s.chain ? new Int32Array(rows) : null;
    let r = 0;
    for (const obj of members)
      for (let q = s.offsets[obj]; q < s.offsets[obj + 1]; q++, r++) {
        const row = s.order[q];
        for (let j = 0; j < k; j++) params[j][r] = s.params[j][row];
        weight[r] = src[row];
        if (logPrior) logPrior[r] = s.logPrior![row];
        if (chain) chain[r] = s.chain![row];
      }
    yield {
      index: Int32Array.from(members),
      ids: members.map((obj) => bundle.objects.id[obj]),
      parts: [{ params, weight, logPrior, chain }],
      part: new Int32Array(members.length),
      start,
      end,
      firstRow: null,
    };
  }
}

/**
 * Runs batches through the pool and applies the results in submission order (so corner data
 * reaches `onCharts` in catalogue order), keeping at most `maxInFlight` batches outstanding.
 */
async function drive(
  pool: SummaryPool,
  source: AsyncIterable<ObjectBatch> | Iterable<ObjectBatch>,
  apply: (r: BatchResult) => Promise<void>,
  maxInFlight: number,
): Promise<void> {
  const pending: Promise<BatchResult>[] = [];
  try {
    for await (const batch of source) {
      const p = pool.run(batch);
      p.catch(() => {}); // rejections are seen when the promise is awaited in order
      pending.push(p);
      while (pending.length >= maxInFlight) await apply(await pending.shift()!);
    }
    while (pending.length) await apply(await pending.shift()!);
  } finally {
    // let outstanding work settle before the pool is closed
    await Promise.allSettled(pending);
  }
}

/** Summarise every object's posterior (or those `opts.only` selects). */
export async function summariseAll(bundle: Bundle, opts: SummariseOptions): Promise<SummaryResult> {
  const { config, objects, samples } = bundle;
  const n = objects.n;
  const k = config.parameters.length;
  const m = opts.popDraws ?? 64;
  const only = opts.only;
  const streamed = !samples && !!config.tables.samples;
  const layout: SampleLayout | null = streamed ? await sampleLayout(bundle) : null;
  const hasLogPrior = samples ? !!samples.logPrior : !!layout?.logPrior;
  const logWeights = samples ? !samples.weight : !!layout?.logWeights;
  const t = allocSummaryTable(n, k);
  const pop = allocPopulationDraws(n, k, m, hasLogPrior);
  const bands = bandsPerObject(bundle);
  for (let i = 0; i < n; i++) if (!only || only(i)) fitQuality(bundle, t, i, bands);

  const seen = new Uint8Array(n);
  let sink = new ProblemSink();
  if (samples || layout) {
    const workers = Math.max(1, Math.floor(opts.workers ?? availableParallelism()));
    const check = layout ? { file: layout.file, weight: layout.weight, params: layout.params, paramNames: layout.paramNames, logPrior: layout.logPrior } : null;
    const ctx = kernelContext(config, { seed: opts.seed, m, logWeights, charts: !!(opts.onCharts || opts.onChartsJson), check });
    const pool = new SummaryPool(ctx, workers);
    const maxInFlight = 2 * Math.max(1, pool.threads) + 1;
    const decoder = new TextDecoder();
    const apply = async (r: BatchResult) => {
      for (const p of r.problems) sink.add(p);
      applyBatchResult(t, pop, r);
      if (r.chartJson && r.chartEnds)
        for (let o = 0; o < r.index.length; o++) {
          const from = o ? r.chartEnds[o - 1] : 0;
          if (!r.valid[o] || r.chartEnds[o] === from) continue;
          const json = r.chartJson.subarray(from, r.chartEnds[o]);
          if (opts.onChartsJson) await opts.onChartsJson(r.index[o], json);
          if (opts.onCharts) await opts.onCharts(r.index[o], JSON.parse(decoder.decode(json)) as ObjectCharts);
        }
    };
    const batchRows = opts.batchRows ?? 16384;
    try {
      if (samples) {
        opts.onStream?.({ mode: 'in-memory' });
        for (let i = 0; i < n; i++) if (samples.offsets[i + 1] > samples.offsets[i]) seen[i] = 1;
        await drive(pool, memoryBatches(bundle, only, batchRows), apply, maxInFlight);
      } else {
        // each reader its own default block (Arrow IPC: 131072 rows, read as the floor reads them)
        const base = { only, sink, seen, batchRows: opts.batchRows };
        try {
          await drive(pool, groupedBatches(bundle, layout!, base), apply, maxInFlight);
          opts.onStream?.({ mode: 'grouped' });
        } catch (e) {
          if (!(e instanceof NotGrouped)) throw e;
          // not grouped by object: start again from a spill of the file (see summarise-stream.ts)
          seen.fill(0);
          sink = new ProblemSink();
          await opts.onRestart?.();
          let spill: StreamInfo['spill'];
          await drive(
            pool,
            spilledBatches(bundle, layout!, { ...base, sink, budgetBytes: opts.spillBudgetBytes, onSpill: (s) => (spill = s) }),
            apply,
            maxInFlight,
          );
          opts.onStream?.({ mode: 'spilled', restartReason: e.message, spill });
        }
      }
    } finally {
      await pool.close();
    }
  }
  const file = config.tables.objects.path;
  for (let i = 0; i < n; i++) {
    if (seen[i] || (only && !only(i))) continue;
    if (streamed && !config.parameters.every((p) => objects.summaries[p.name]) && objects.index.get(objects.id[i]) === i)
      sink.add({
        severity: 'error',
        file,
        row: (objects.fileRow ? objects.fileRow[i] : i) + 1,
        column: config.tables.objects.columns.id ?? 'id',
        object: objects.id[i],
        message: 'object has no posterior draws',
        expected: `rows with this id in ${config.tables.samples!.path} (or _p16/_p50/_p84 summary columns for every parameter)`,
        got: 'no rows',
      });
    summariesOnly(bundle, t, i);
  }
  const problems = sink.finish();
  if (problems.some((p) => p.severity === 'error')) throw new PosterityError(problems);
  return { table: t, pop };
}
