/**
 * The per-object step of the summaries, shared by every way of running them (in this thread,
 * in worker threads, one partition of the catalogue): a batch of whole objects' draws in typed
 * arrays goes in (views over the samples file's own float32 or float64 columns when read from
 * Arrow IPC), flat typed arrays of results come out, with each object's corner data as JSON
 * text. Nothing here depends on which other objects are in the batch or on the order of
 * batches: every random step is seeded by the release seed and the object id.
 *
 * Per object, in as few passes over the draws as the definitions allow, with the draws held in
 * the SIMD memory (simd.ts) so that every WebAssembly loop works on them in place: the weights
 * are normalised once; the means, the covariance matrix and from its diagonal the standard
 * deviations (in the draws' own order) come from one set of weighted cross products
 * (`weightedCovariance`); each parameter is sorted once (`sortDrawsAt`), and one call on that
 * sort gives the published mean and standard deviation (sums in sorted order, as published
 * before), all percentiles and the quartiles in one walk, both HDIs and the Kish ESS the
 * histogram and KDE rules use (`summarySortedAt`); the mode test's KDE is binned and convolved
 * in WebAssembly (`kdeUniform`). The results are the bits of the scalar definitions.
 */
import { normaliseWeightsInto, kishEss } from '../core/stats/weights.ts';
import { correlationFromCovariance, autocorrEss, weightedCovariance, sortDraws, quantilesSorted, hdiSorted, meanStdSorted, SUMMARY_PROBS, type SortedDraws } from '../core/stats/summary.ts';
import { kdeScratchSlots, type SampleMoments } from '../core/stats/density.ts';
import { alloc, memory, release, reserve, sortDrawsAt, summarySortedAt } from '../core/stats/simd.ts';
import { CORNER_SCRATCH_SLOTS } from './summarise-charts.ts';
import { isMultimodal, priorEdgeMass } from '../core/stats/diagnostics.ts';
import { FLAGS } from '../core/flags.ts';
import type { Problem } from '../core/problems.ts';
import { makeRng, deriveSeed } from '../core/random.ts';
import type { ReleaseConfig } from '../bundle/schema.ts';
import { cornerData, writeChartsJson, round } from './summarise-charts.ts';
import { JsonWriter } from './json-writer.ts';

export { chartsFor, MASS_LEVELS, SCATTER_POINTS, round, type ObjectCharts } from './summarise-charts.ts';

/**
 * Multimodality rule: a weighted Gaussian KDE at Silverman's bandwidth; a secondary peak
 * counts when its basin holds at least `minMass` of the posterior and the valley between
 * it and its neighbour is below half the lower peak's height.
 */
export const MULTIMODAL_OPTS = (minMass: number) => ({ minMass, bandwidthFactor: 1, maxValleyRatio: 0.5 });

/** The samples file's column names, for the row checks' messages. */
export interface RowCheckNames {
  file: string;
  weight: string;
  params: string[];
  /** Our parameter names. */
  paramNames: string[];
  logPrior: string | null;
}

/** What the per-object step needs from the release (plain data, so it can cross to a worker). */
export interface KernelContext {
  names: string[];
  /** Uniform interim prior bounds per parameter (null when the prior is not uniform). */
  uniformPriors: ({ min: number; max: number } | null)[];
  quality: { minEss: number; multimodalMinMass: number; priorEdgeWidth: number; priorEdgeMass: number };
  seed: number;
  /** Equal-weight draws kept per object. */
  m: number;
  /** `weight` holds natural-log weights. */
  logWeights: boolean;
  /** Compute the corner-plot data. */
  charts: boolean;
  /** Column names for the row checks of batches that ask for them (`ObjectBatch.firstRow`). */
  check?: RowCheckNames | null;
}

export function kernelContext(config: ReleaseConfig, opts: { seed: number; m: number; logWeights: boolean; charts: boolean; check?: RowCheckNames | null }): KernelContext {
  const q = config.quality;
  return {
    names: config.parameters.map((p) => p.name),
    uniformPriors: config.parameters.map((p) => (p.prior?.kind === 'uniform' ? { min: p.prior.min, max: p.prior.max } : null)),
    quality: { minEss: q.minEss, multimodalMinMass: q.multimodalMinMass, priorEdgeWidth: q.priorEdgeWidth, priorEdgeMass: q.priorEdgeMass },
    ...opts,
  };
}

type Floats = Float64Array | Float32Array;

/** Columns of draws: one array per parameter, the weights (or log weights), the log prior and chain. */
export interface ColumnSet {
  params: Floats[];
  weight: Floats;
  logPrior: Floats | null;
  chain: Int32Array | null;
}

/**
 * Whole objects' draws: object o owns rows [start[o], end[o]) of the columns `parts[part[o]]`
 * (several objects share a part; a part may be a view over a block of the samples file, with
 * rows of other objects between).
 */
export interface ObjectBatch {
  /** Catalogue index of each object. */
  index: Int32Array;
  ids: string[];
  parts: ColumnSet[];
  part: Int32Array;
  start: Int32Array;
  end: Int32Array;
  /**
   * With it, the kernel checks every row as the loader does (weights, finite values, log prior,
   * an object whose every weight is zero), reporting each bad row by file row: the row of
   * object o's first draw is firstRow[o] (1-based). Objects with bad rows are not summarised.
   */
  firstRow: Float64Array | null;
}

/** Per object and parameter, in this order (`STAT_FIELDS` values each). */
export const STAT_NAMES = ['mean', 'std', 'p025', 'p16', 'p50', 'p84', 'p975', 'hdi68lo', 'hdi68hi', 'hdi95lo', 'hdi95hi', 'edgeMass'] as const;
export const STAT_FIELDS = STAT_NAMES.length;

export interface BatchResult {
  index: Int32Array;
  /** 1 when the object was summarised (0: bad rows, reported in `problems`). */
  valid: Uint8Array;
  /** [object][param][STAT_NAMES] */
  stats: Float64Array;
  /** [object][param] */
  multimodal: Uint8Array;
  /** [object] k*k */
  cov: Float64Array;
  ess: Float64Array;
  /** 0 Kish, 1 autocorrelation. */
  essKind: Uint8Array;
  nSamples: Int32Array;
  /** Flags from the draws alone (the chi-square flag is set by the caller). */
  flags: Int32Array;
  /** [object][param][m] */
  popValues: Float64Array;
  /** [object][m]; NaN without a log prior. */
  popLogPrior: Float64Array;
  /** Corner data as JSON text, object o at bytes [chartEnds[o - 1] (0 for o = 0), chartEnds[o]); empty when not summarised. */
  chartJson: Uint8Array | null;
  chartEnds: Int32Array | null;
  /** Bad rows found by the row checks, in file order. */
  problems: Problem[];
}

/** Buffers of a result (for `postMessage` transfer lists). */
export function resultBuffers(r: BatchResult): ArrayBuffer[] {
  const arrays = [r.index, r.valid, r.stats, r.multimodal, r.cov, r.ess, r.essKind, r.nSamples, r.flags, r.popValues, r.popLogPrior];
  if (r.chartJson) arrays.push(r.chartJson);
  if (r.chartEnds) arrays.push(r.chartEnds);
  return [...new Set(arrays.map((a) => a.buffer as ArrayBuffer))];
}

/** Buffers of a batch (for `postMessage` transfer lists); views sharing a buffer give it once. */
export function batchBuffers(b: ObjectBatch): ArrayBuffer[] {
  const arrays: ArrayBufferView[] = [b.index, b.part, b.start, b.end];
  if (b.firstRow) arrays.push(b.firstRow);
  for (const p of b.parts) {
    arrays.push(p.weight, ...p.params);
    if (p.logPrior) arrays.push(p.logPrior);
    if (p.chain) arrays.push(p.chain);
  }
  return [...new Set(arrays.map((a) => a.buffer as ArrayBuffer))];
}

// ---- the row checks (the loader's messages) ----------------------------------------------

/**
 * Checks rows [a, b) of `cs` as the loader checks them (weights, finite parameter values, log
 * prior), with the same messages; `row0` is the 1-based file row of row a. Returns false when
 * any row is bad.
 */
export function checkRows(cs: ColumnSet, a: number, b: number, names: RowCheckNames, logWeights: boolean, row0: number, report: (p: Problem) => void): boolean {
  let ok = true;
  const bad = (column: string, r: number, message: string, expected: string, v: number) => {
    ok = false;
    report({ severity: 'error', file: names.file, row: row0 + r - a, column, message, expected, got: String(v) });
  };
  const wt = cs.weight;
  for (let r = a; r < b; r++) {
    const x = wt[r];
    if (logWeights) {
      if (Number.isNaN(x)) bad(names.weight, r, 'log_weight is missing or NaN', 'a finite number, or -inf for a zero weight', x);
      else if (x === Infinity) bad(names.weight, r, 'log_weight is +infinity', 'a finite number, or -inf for a zero weight', x);
    } else if (!(Number.isFinite(x) && x >= 0))
      bad(names.weight, r, Number.isNaN(x) ? 'weight is missing or NaN' : !Number.isFinite(x) ? 'weight is infinite' : 'weight is negative', 'a finite weight >= 0', x);
  }
  for (let j = 0; j < cs.params.length; j++) {
    const x = cs.params[j];
    for (let r = a; r < b; r++)
      if (!Number.isFinite(x[r])) bad(names.params[j], r, Number.isNaN(x[r]) ? `value of ${names.paramNames[j]} is missing or NaN` : `value of ${names.paramNames[j]} is infinite`, 'a finite number', x[r]);
  }
  const lp = cs.logPrior;
  if (lp && names.logPrior)
    for (let r = a; r < b; r++) {
      const x = lp[r];
      if (Number.isNaN(x) || x === Infinity) bad(names.logPrior, r, Number.isNaN(x) ? 'log_prior is missing or NaN' : 'log_prior is +infinity', 'a finite log density (or -inf)', x);
    }
  return ok;
}

/** Whether any of rows [a, b) has a positive weight. */
export function anyPositiveWeight(w: Floats, a: number, b: number, logWeights: boolean): boolean {
  for (let r = a; r < b; r++) if (logWeights ? w[r] > -Infinity : w[r] > 0) return true;
  return false;
}

/** The problem of an object every draw of which has zero weight. */
export function zeroWeightProblem(names: Pick<RowCheckNames, 'file' | 'weight'>, logWeights: boolean, row: number, id: string, draws: number): Problem {
  return {
    severity: 'error',
    file: names.file,
    row,
    object: id,
    column: names.weight,
    message: 'every draw of this object has zero weight',
    expected: 'at least one draw with a weight > 0',
    got: `${draws} draws of weight ${logWeights ? '0 (log_weight -inf)' : '0'}`,
  };
}

// ---- the kernel ----------------------------------------------------------------------------

// Reused across objects and batches (one thread each).
let sortWork: SortedDraws = { x: new Float64Array(1024), w: new Float64Array(1024), n: 0, total: 0 };
const walk = new Float64Array(SUMMARY_PROBS.length);
const meanStd = new Float64Array(2);
const chartWriter = new JsonWriter();
const K = SUMMARY_PROBS.length;
/** Slots of `summarySortedAt`'s output: mean, std, the K quantiles, two HDIs, the Kish ESS. */
const SUMMARY_SLOTS = 2 + K + 4 + 1;
/** Highest-density interval levels of the catalogue. */
const HDI_LEVELS = [0.68, 0.95] as const;
/** Sorted draws of fewer than this take the scalar sort (as `sortDraws` does). */
const RADIX_MIN = 64;

/**
 * Mean, std, percentiles and HDIs of one parameter, its density moments (the standard deviation
 * `sigma` from the covariance) written to `st` at `at` and returned, from the draws at slots x
 * and w of `memory()` (n of them) and the same as views.
 */
function paramSummary(x: number, w: number, n: number, xv: Float64Array, wv: Float64Array, sigma: number, probs: number, st: Float64Array, at: number): SampleMoments {
  const S = alloc(2 * n + SUMMARY_SLOTS);
  const s = sortDrawsAt(x, w, n, S, S + n);
  if (s && s.n >= RADIX_MIN) {
    const out = S + 2 * n;
    summarySortedAt(S, S + n, s.n, s.total, probs, K, HDI_LEVELS[0] * s.total * (1 - 1e-12), HDI_LEVELS[1] * s.total * (1 - 1e-12), out);
    const m = memory();
    st[at] = m[out];
    st[at + 1] = m[out + 1];
    st[at + 2] = m[out + 2];
    st[at + 3] = m[out + 3];
    st[at + 4] = m[out + 5];
    st[at + 5] = m[out + 7];
    st[at + 6] = m[out + 8];
    for (let q = 0; q < 4; q++) st[at + 7 + q] = m[out + 2 + K + q];
    const mom = { lo: m[S], hi: m[S + s.n - 1], sigma, iqr: m[out + 6] - m[out + 4], neff: m[out + 2 + K + 4], total: s.total };
    release(S);
    return mom;
  }
  release(S);
  // the scalar route (no WebAssembly, or few draws): the same definitions
  if (sortWork.x.length < n) sortWork = { x: new Float64Array(Math.max(n, 2 * sortWork.x.length)), w: new Float64Array(Math.max(n, 2 * sortWork.x.length)), n: 0, total: 0 };
  const sorted = sortDraws(xv, wv, sortWork);
  meanStdSorted(sorted, meanStd);
  quantilesSorted(sorted, SUMMARY_PROBS, walk);
  st[at] = meanStd[0];
  st[at + 1] = meanStd[1];
  st[at + 2] = walk[0];
  st[at + 3] = walk[1];
  st[at + 4] = walk[3];
  st[at + 5] = walk[5];
  st[at + 6] = walk[6];
  const h68 = hdiSorted(sorted, HDI_LEVELS[0]);
  const h95 = hdiSorted(sorted, HDI_LEVELS[1]);
  st[at + 7] = h68[0];
  st[at + 8] = h68[1];
  st[at + 9] = h95[0];
  st[at + 10] = h95[1];
  return {
    lo: sorted.n ? sorted.x[0] : NaN,
    hi: sorted.n ? sorted.x[sorted.n - 1] : NaN,
    sigma,
    iqr: walk[4] - walk[2],
    neff: kishEss(sorted.w.subarray(0, sorted.n)),
    total: sorted.total,
  };
}

/** Summarise every object of a batch. Throws `PosterityError` (naming the object) on invalid weights of unchecked rows. */
export function summariseBatch(ctx: KernelContext, batch: ObjectBatch): BatchResult {
  const k = ctx.names.length;
  const m = ctx.m;
  const q = ctx.quality;
  const count = batch.index.length;
  const out: BatchResult = {
    index: Int32Array.from(batch.index),
    valid: new Uint8Array(count),
    stats: new Float64Array(count * k * STAT_FIELDS).fill(NaN),
    multimodal: new Uint8Array(count * k),
    cov: new Float64Array(count * k * k),
    ess: new Float64Array(count),
    essKind: new Uint8Array(count),
    nSamples: new Int32Array(count),
    flags: new Int32Array(count),
    popValues: new Float64Array(count * k * m).fill(NaN),
    popLogPrior: new Float64Array(count * m).fill(NaN),
    chartJson: null,
    chartEnds: ctx.charts ? new Int32Array(count) : null,
    problems: [],
  };
  const report = (p: Problem) => out.problems.push(p);
  const mode = MULTIMODAL_OPTS(q.multimodalMinMass);
  chartWriter.reset();
  const kk = k + (k & 1);
  const base = alloc(K);
  memory().set(SUMMARY_PROBS, base);
  for (let o = 0; o < count; o++) {
    const cs = batch.parts[batch.part[o]];
    const a = batch.start[o], b = batch.end[o];
    const n = b - a;
    const id = batch.ids[o];
    if (batch.firstRow && ctx.check) {
      const row0 = batch.firstRow[o];
      if (!checkRows(cs, a, b, ctx.check, ctx.logWeights, row0, report)) {
        if (out.chartEnds) out.chartEnds[o] = chartWriter.length;
        continue;
      }
      if (!anyPositiveWeight(cs.weight, a, b, ctx.logWeights)) {
        report(zeroWeightProblem(ctx.check, ctx.logWeights, row0, id, n));
        if (out.chartEnds) out.chartEnds[o] = chartWriter.length;
        continue;
      }
    }
    // The object's weights and parameters as float64 in the SIMD memory (slots D: w, then the
    // k parameters), with room reserved first for everything the steps below allocate, so the
    // views made now stay valid.
    // (the steps allocate one after another, each freeing its slots: the largest one counts)
    reserve((k + 1) * n + Math.max(k * n + n * kk + k * kk, 6 * n + SUMMARY_SLOTS + 3, kdeScratchSlots(256), ctx.charts ? CORNER_SCRATCH_SLOTS(n, k) : 0));
    const D = alloc((k + 1) * n);
    const mem = memory();
    const w = mem.subarray(D, D + n);
    normaliseWeightsInto(cs.weight.subarray(a, b), ctx.logWeights, w, id);
    const xs: Float64Array[] = [];
    for (let j = 0; j < k; j++) {
      const x = mem.subarray(D + (j + 1) * n, D + (j + 2) * n);
      x.set(cs.params[j].subarray(a, b));
      xs.push(x);
    }
    let flags = 0;
    out.nSamples[o] = n;
    out.valid[o] = 1;
    if (cs.chain) {
      const chain = cs.chain.subarray(a, b);
      let ess = Infinity;
      for (let j = 0; j < k; j++) ess = Math.min(ess, autocorrEss(xs[j], chain));
      out.ess[o] = ess;
      out.essKind[o] = 1;
    } else out.ess[o] = kishEss(w);
    if (out.ess[o] < q.minEss) flags |= FLAGS.LOW_ESS;

    // covariance (and from its diagonal the standard deviations the density rules use)
    const cov = weightedCovariance(xs, w);
    out.cov.set(cov, o * k * k);

    const moments: SampleMoments[] = [];
    for (let j = 0; j < k; j++) {
      const at = (o * k + j) * STAT_FIELDS;
      const mom = paramSummary(D + (j + 1) * n, D, n, xs[j], w, Math.sqrt(cov[j * k + j]), base, out.stats, at);
      moments.push(mom);
      if (isMultimodal(xs[j], w, { ...mode, moments: mom })) {
        out.multimodal[o * k + j] = 1;
        flags |= FLAGS.MULTIMODAL;
      }
      const prior = ctx.uniformPriors[j];
      if (prior) {
        const em = priorEdgeMass(xs[j], w, prior, q.priorEdgeWidth);
        out.stats[at + 11] = em;
        if (em > q.priorEdgeMass) flags |= FLAGS.PRIOR_EDGE;
      }
    }
    out.flags[o] = flags;

    // equal-weight resample (systematic resampling, seeded per object)
    const rng = makeRng(deriveSeed(ctx.seed, 'pop', id));
    const u0 = rng.next() / m;
    let acc = 0;
    let r = 0;
    const lp = cs.logPrior;
    for (let d = 0; d < m; d++) {
      const u = u0 + d / m;
      while (r < n - 1 && acc + w[r] < u) acc += w[r++];
      for (let j = 0; j < k; j++) out.popValues[(o * k + j) * m + d] = xs[j][r];
      if (lp) out.popLogPrior[o * m + d] = lp[a + r];
    }

    if (out.chartEnds) {
      const corner = cornerData(ctx.names, xs, w, deriveSeed(ctx.seed, 'corner', id), moments);
      const corr = correlationFromCovariance(cov, k);
      const correlation = Array.from({ length: k }, (_, r1) => Array.from(corr.subarray(r1 * k, r1 * k + k), (v) => round(v, 3)));
      writeChartsJson(chartWriter, corner, correlation);
      out.chartEnds[o] = chartWriter.length;
    }
    release(D);
  }
  release(base);
  if (out.chartEnds) out.chartJson = chartWriter.take();
  return out;
}
