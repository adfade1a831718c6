/**
 * Binned running medians of y against x, with bootstrap uncertainties that resample both the
 * objects and each object's posterior draws.
 */
import { PosterityError, problem } from '../problems.ts';
import { deriveSeed, makeRng } from '../random.ts';
import { weightedQuantiles } from '../stats/summary.ts';
import { validateDraws, type ObjectDraws } from './draws.ts';

export interface RunningMedian {
  /** Bin centres (mid-points of the edges). */
  centres: Float64Array;
  /** Median of y in each bin. */
  median: Float64Array;
  /** 16th and 84th percentiles of y in each bin (the spread of the population, not an error). */
  p16: Float64Array;
  p84: Float64Array;
  /** 16th and 84th percentiles of the bootstrap medians (uncertainty of the median). */
  medianLo: Float64Array;
  medianHi: Float64Array;
  /** Objects per bin: for draws, the expected count sum_i P(x_i in bin). */
  n: Float64Array;
}

export interface RunningOptions {
  /** Increasing bin edges; bin j is [edges[j], edges[j+1]). */
  edges: Float64Array;
  nBoot: number;
  seed: number;
  /**
   * `runningMedian` only: per draw, 0 for a draw outside the sample (e.g. one whose own
   * redshift is outside the relation's redshift bin). Such a draw keeps its share of the
   * object's weight but is never binned, so the object counts with the weight of its other
   * draws, and a bootstrap replicate that picks it for the object leaves the object out.
   */
  drawMask?: Uint8Array;
}

function checkEdges(edges: Float64Array, nBoot: number): number {
  const m = edges.length - 1;
  if (m < 1) throw new PosterityError(problem({ message: 'running median needs at least two bin edges', got: String(edges.length) }));
  for (let j = 0; j < m; j++) {
    if (!(edges[j + 1] > edges[j])) {
      throw new PosterityError(problem({ message: 'running median bin edges must increase', expected: 'edges[j+1] > edges[j]', got: `${edges[j]}, ${edges[j + 1]} at ${j}` }));
    }
  }
  if (!(Number.isInteger(nBoot) && nBoot >= 0)) throw new PosterityError(problem({ message: 'invalid number of bootstrap replicates', expected: 'an integer >= 0', got: String(nBoot) }));
  return m;
}

/** Bin index of x for increasing edges, or -1 outside [edges[0], edges[m]). */
function binOf(edges: Float64Array, x: number): number {
  const m = edges.length - 1;
  if (!(x >= edges[0] && x < edges[m])) return -1;
  let lo = 0;
  let hi = m;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (x >= edges[mid]) lo = mid;
    else hi = mid;
  }
  return lo;
}

function empty(m: number, edges: Float64Array): RunningMedian {
  const centres = new Float64Array(m);
  for (let j = 0; j < m; j++) centres[j] = 0.5 * (edges[j] + edges[j + 1]);
  const nan = () => new Float64Array(m).fill(NaN);
  return { centres, median: nan(), p16: nan(), p84: nan(), medianLo: nan(), medianHi: nan(), n: new Float64Array(m) };
}

/** Median of the first `k` values (sorted in place). */
function medianOf(v: Float64Array, k: number): number {
  if (k === 0) return NaN;
  const s = v.subarray(0, k).sort();
  return k % 2 ? s[(k - 1) >> 1] : 0.5 * (s[k / 2 - 1] + s[k / 2]);
}

function bootstrapBands(out: RunningMedian, medians: Float64Array[], m: number): void {
  for (let j = 0; j < m; j++) {
    const vals = medians[j].filter((v) => !Number.isNaN(v));
    if (vals.length === 0) continue;
    const q = weightedQuantiles(vals, new Float64Array(vals.length).fill(1), [0.16, 0.84]);
    out.medianLo[j] = q[0];
    out.medianHi[j] = q[1];
  }
}

/** Median and 16-84% spread of y in each bin (weights per value, or equal weights when null). */
function fillSpread(out: RunningMedian, ys: number[][], ws: number[][] | null): void {
  for (let b = 0; b < ys.length; b++) {
    if (ys[b].length === 0) continue;
    const w = ws ? Float64Array.from(ws[b]) : new Float64Array(ys[b].length).fill(1);
    const q = weightedQuantiles(Float64Array.from(ys[b]), w, [0.16, 0.5, 0.84]);
    out.p16[b] = q[0];
    out.median[b] = q[1];
    out.p84[b] = q[2];
  }
}

/**
 * Running median from posterior draws. In each x bin the median and 16/84% points of y are
 * weighted quantiles over all draws whose x falls in the bin, each object's weights normalised
 * to sum to one (the posterior-averaged distribution; quantile rule of `weightedQuantiles`).
 * Each bootstrap replicate (Efron 1979, Ann. Stat. 7, 1) resamples the objects with
 * replacement and takes one draw per resampled object, chosen in proportion to its weight,
 * so the median's uncertainty includes both sampling and measurement noise; medianLo/Hi are
 * the 16/84% points of the replicate medians (percentile interval). With `opts.drawMask` only
 * the draws it keeps are binned, both for the central values and in the replicates.
 */
export function runningMedian(d: ObjectDraws, opts: RunningOptions): RunningMedian {
  const n = validateDraws(d, 'running median');
  const m = checkEdges(opts.edges, opts.nBoot);
  const out = empty(m, opts.edges);
  const { edges } = opts;
  const mask = opts.drawMask;
  if (mask && mask.length !== d.x.length) {
    throw new PosterityError(problem({ message: 'running median: drawMask must have one entry per draw', column: 'drawMask', expected: String(d.x.length), got: String(mask.length) }));
  }
  // central values from all draws
  const byBinY: number[][] = Array.from({ length: m }, () => []);
  const byBinW: number[][] = Array.from({ length: m }, () => []);
  for (let i = 0; i < n; i++) {
    let sw = 0;
    for (let j = d.offsets[i]; j < d.offsets[i + 1]; j++) sw += d.w[j];
    for (let j = d.offsets[i]; j < d.offsets[i + 1]; j++) {
      const b = mask && !mask[j] ? -1 : binOf(edges, d.x[j]);
      if (b < 0 || !(d.w[j] > 0)) continue;
      byBinY[b].push(d.y[j]);
      byBinW[b].push(d.w[j] / sw);
      out.n[b] += d.w[j] / sw;
    }
  }
  fillSpread(out, byBinY, byBinW);
  if (opts.nBoot === 0) return out;
  const rng = makeRng(deriveSeed(opts.seed, 'running-median'));
  const medians = Array.from({ length: m }, () => new Float64Array(opts.nBoot));
  const buf = Array.from({ length: m }, () => new Float64Array(n));
  const counts = new Int32Array(m);
  for (let r = 0; r < opts.nBoot; r++) {
    counts.fill(0);
    for (let k = 0; k < n; k++) {
      const i = rng.int(n);
      const lo = d.offsets[i];
      const j = lo + rng.weightedIndex(d.w.subarray(lo, d.offsets[i + 1]));
      const b = mask && !mask[j] ? -1 : binOf(edges, d.x[j]);
      if (b >= 0) buf[b][counts[b]++] = d.y[j];
    }
    for (let b = 0; b < m; b++) medians[b][r] = medianOf(buf[b], counts[b]);
  }
  bootstrapBands(out, medians, m);
  return out;
}

/**
 * Running median of point estimates (e.g. posterior medians): in each x bin the median and
 * 16/84% points of y (rule of `weightedQuantiles` with equal weights), with bootstrap
 * percentile intervals of the median from resampling the objects (Efron 1979).
 */
export function runningMedianPoints(x: Float64Array, y: Float64Array, opts: RunningOptions): RunningMedian {
  const n = x.length;
  if (y.length !== n) throw new PosterityError(problem({ message: 'running median: x and y must have the same length', expected: String(n), got: String(y.length) }));
  const m = checkEdges(opts.edges, opts.nBoot);
  const out = empty(m, opts.edges);
  const bins = new Int32Array(n);
  const byBin: number[][] = Array.from({ length: m }, () => []);
  for (let i = 0; i < n; i++) {
    bins[i] = Number.isFinite(y[i]) ? binOf(opts.edges, x[i]) : -1;
    if (bins[i] >= 0) {
      byBin[bins[i]].push(y[i]);
      out.n[bins[i]]++;
    }
  }
  fillSpread(out, byBin, null);
  if (opts.nBoot === 0) return out;
  const rng = makeRng(deriveSeed(opts.seed, 'running-median-points'));
  const medians = Array.from({ length: m }, () => new Float64Array(opts.nBoot));
  const buf = Array.from({ length: m }, () => new Float64Array(n));
  const counts = new Int32Array(m);
  for (let r = 0; r < opts.nBoot; r++) {
    counts.fill(0);
    for (let k = 0; k < n; k++) {
      const i = rng.int(n);
      if (bins[i] >= 0) buf[bins[i]][counts[bins[i]]++] = y[i];
    }
    for (let b = 0; b < m; b++) medians[b][r] = medianOf(buf[b], counts[b]);
  }
  bootstrapBands(out, medians, m);
  return out;
}
