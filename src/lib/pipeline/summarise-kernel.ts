/**
 * The per-object step of the summaries, shared by every way of running them (in this thread,
 * in worker threads, one partition of the catalogue): a batch of whole objects' draws in flat
 * typed arrays goes in, flat typed arrays of results come out. Nothing here depends on which
 * other objects are in the batch or on the order of batches: every random step is seeded by
 * the release seed and the object id.
 */
import { normaliseWeights, kishEss } from '../core/stats/weights.ts';
import { weightedCovariance, correlationFromCovariance, autocorrEss, sortDraws, summariseSorted, type ParamSummary, type SortedDraws } from '../core/stats/summary.ts';
import { histogram, kde, kdeBandwidth, density2d, creditLevels, contourPaths, simplifyPath, sampleMoments, type SampleMoments } from '../core/stats/density.ts';
import { isMultimodal, priorEdgeMass } from '../core/stats/diagnostics.ts';
import { FLAGS } from '../core/flags.ts';
import { makeRng, deriveSeed } from '../core/random.ts';
import type { ReleaseConfig } from '../bundle/schema.ts';
import type { Contour2d, Marginal } from './content.ts';

export interface ObjectCharts {
  marginals: Marginal[];
  contours: Contour2d[];
  correlation: number[][] | null;
}

export const MASS_LEVELS = [0.68, 0.95] as const;

/**
 * Multimodality rule: a weighted Gaussian KDE at Silverman's bandwidth; a secondary peak
 * counts when its basin holds at least `minMass` of the posterior and the valley between
 * it and its neighbour is below half the lower peak's height.
 */
export const MULTIMODAL_OPTS = (minMass: number) => ({ minMass, bandwidthFactor: 1, maxValleyRatio: 0.5 });

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
}

export function kernelContext(config: ReleaseConfig, opts: { seed: number; m: number; logWeights: boolean; charts: boolean }): KernelContext {
  const q = config.quality;
  return {
    names: config.parameters.map((p) => p.name),
    uniformPriors: config.parameters.map((p) => (p.prior?.kind === 'uniform' ? { min: p.prior.min, max: p.prior.max } : null)),
    quality: { minEss: q.minEss, multimodalMinMass: q.multimodalMinMass, priorEdgeWidth: q.priorEdgeWidth, priorEdgeMass: q.priorEdgeMass },
    ...opts,
  };
}

/** Whole objects' draws: object o owns rows [offsets[o], offsets[o+1]) of every array. */
export interface ObjectBatch {
  /** Catalogue index of each object. */
  index: Int32Array;
  ids: string[];
  offsets: Int32Array;
  /** One array per parameter. */
  params: Float64Array[];
  /** Weights, or natural-log weights (see `KernelContext.logWeights`). */
  weight: Float64Array;
  logPrior: Float64Array | null;
  chain: Int32Array | null;
}

/** Per object and parameter, in this order (`STAT_FIELDS` values each). */
export const STAT_NAMES = ['mean', 'std', 'p025', 'p16', 'p50', 'p84', 'p975', 'hdi68lo', 'hdi68hi', 'hdi95lo', 'hdi95hi', 'edgeMass'] as const;
export const STAT_FIELDS = STAT_NAMES.length;

export interface BatchResult {
  index: Int32Array;
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
  charts: ObjectCharts[] | null;
}

/** Buffers of a result (for `postMessage` transfer lists). */
export function resultBuffers(r: BatchResult): ArrayBuffer[] {
  return [r.index, r.stats, r.multimodal, r.cov, r.ess, r.essKind, r.nSamples, r.flags, r.popValues, r.popLogPrior].map((a) => a.buffer as ArrayBuffer);
}

export function batchBuffers(b: ObjectBatch): ArrayBuffer[] {
  const out = [b.index, b.offsets, b.weight, ...b.params].map((a) => a.buffer as ArrayBuffer);
  if (b.logPrior) out.push(b.logPrior.buffer as ArrayBuffer);
  if (b.chain) out.push(b.chain.buffer as ArrayBuffer);
  return out;
}

export function round(v: number, digits = 5): number {
  if (!Number.isFinite(v)) return v;
  return Number(v.toPrecision(digits));
}

// ---- corner-plot data --------------------------------------------------------------------
//
// The corner plot (src/lib/charts/corner.ts) draws each panel 70 to 150 pixels wide over the
// parameter's range plus 6% padding, so one pixel is at least 1/134 of a parameter's range
// (`ranges` below: the extent of the draws, which the histogram spans). What we publish is
// sized to that resolution rather than to double precision:
// - coordinates are rounded to a decimal quantum of at most 1/500 of the range (the largest
//   power of ten not above it), i.e. about three significant digits relative to the plotted
//   range and at most a quarter of a pixel on the widest panel; densities likewise to at most
//   1/500 of the panel's highest density;
// - contour polylines are simplified by Douglas-Peucker with a tolerance of 1/300 of each
//   axis's range (under half a pixel on the widest panel), which drops the many marching-
//   squares points along nearly straight stretches;
// - 50 scatter points per panel instead of 150: the corner plot shows at most `maxPoints`
//   (default 50) of them, every ceil(n / 50)-th, so 150 points drew 50 anyway.
// - the 2-D density is a binned 2-D Gaussian KDE (linear binning on 32 x 32 cells, then a
//   separable Gaussian of the diagonal's 1-D Silverman bandwidth on each axis, at least one and
//   at most six cells): a product-kernel KDE with the bandwidths of the KDE curves drawn on the
//   diagonal, and smooth enough that the contours are not cell-scale noise (the 40 x 40
//   histogram smoothed by one cell used before made ~190 mostly noisy paths per object, ~60
//   now, about one per level and panel). 32 cells (2 to 5 pixels each) resolve a density
//   smoothed over at least a cell, and cost about half of 40 (cells x kernel taps).
// The 1-D KDEs are binned as well (density.ts).
// The JSON schema (`Marginal`, `Contour2d`) is unchanged.

/** Scatter points per 2-D panel: the corner plot's default `maxPoints`. */
export const SCATTER_POINTS = 50;
/** Quantum of published coordinates, as a fraction of the plotted range (at most). */
const COORD_FRACTION = 1 / 500;
/** Douglas-Peucker tolerance of contour paths, as a fraction of each axis's range. */
const CONTOUR_TOLERANCE = 1 / 300;
const CORNER_GRID = 32;
/** Bounds of the 2-D smoothing in cells (our choice): at least the one cell used before, at most 6 (cost grows with it). */
const MAX_SMOOTH_CELLS = 6;
const KDE_POINTS = 64;

/** A rounding function to the largest power of ten at most `span` x COORD_FRACTION (5 significant digits when the span is not usable). */
function rounder(span: number): (v: number) => number {
  if (!(span > 0) || !Number.isFinite(span)) return (v) => round(v);
  const e = Math.floor(Math.log10(span * COORD_FRACTION));
  if (e >= 0) {
    const q = 10 ** e;
    return (v) => (Number.isFinite(v) ? Math.round(v / q) * q : v);
  }
  const p = 10 ** -e;
  // an integer divided by a power of ten is the double nearest to that decimal, so it prints as it
  return (v) => (Number.isFinite(v) ? Math.round(v * p) / p : v);
}

/** Round a path's points and drop repeats that rounding creates (a closed path stays closed). */
function roundPath(path: Array<[number, number]>, rx: (v: number) => number, ry: (v: number) => number): Array<[number, number]> {
  const out: Array<[number, number]> = [];
  let lx = NaN;
  let ly = NaN;
  for (let i = 0; i < path.length; i++) {
    const qx = rx(path[i][0]);
    const qy = ry(path[i][1]);
    if (qx === lx && qy === ly) continue;
    out.push([qx, qy]);
    lx = qx;
    ly = qy;
  }
  return out;
}

/**
 * Corner-plot data: 1-D histograms and KDEs, 2-D contours enclosing 68% and 95% of the mass,
 * at the resolution of the plot (see the notes above). `moments` (per parameter, from
 * `sampleMoments` of the same draws) saves sorting each parameter again.
 */
export function chartsFor(names: string[], xs: Float64Array[], w: Float64Array, seed: number, moments?: SampleMoments[]): ObjectCharts {
  const k = xs.length;
  const marginals: Marginal[] = [];
  const ranges: [number, number][] = [];
  const rounders: ((v: number) => number)[] = [];
  const smooth: number[] = [];
  for (let j = 0; j < k; j++) {
    const m = moments?.[j] ?? sampleMoments(xs[j], w);
    const h = histogram(xs[j], w, { rule: 'fd', moments: m });
    const lo = h.edges[0], hi = h.edges[h.edges.length - 1];
    ranges.push([lo, hi]);
    const rx = rounder(hi - lo);
    rounders.push(rx);
    const grid = new Float64Array(KDE_POINTS);
    for (let g = 0; g < KDE_POINTS; g++) grid[g] = lo + ((hi - lo) * g) / (KDE_POINTS - 1);
    const dens = kde(xs[j], w, grid, { bandwidth: kdeBandwidth(xs[j], w, 'silverman', m) });
    let top = 0;
    for (const v of h.density) if (v > top) top = v;
    for (const v of dens.density) if (v > top) top = v;
    const ry = rounder(top);
    smooth.push(Math.min(MAX_SMOOTH_CELLS, Math.max(1, (dens.bandwidth * CORNER_GRID) / (hi - lo))) || 1);
    marginals.push({
      param: names[j],
      edges: Array.from(h.edges, rx),
      density: Array.from(h.density, ry),
      kdeX: Array.from(grid, rx),
      kdeY: Array.from(dens.density, ry),
      rule: `${h.rule}; KDE bandwidth ${round(dens.bandwidth, 3)} (Silverman)`,
    });
  }
  const contours: Contour2d[] = [];
  // a light scatter of equal-weight points under the contours
  const rng = makeRng(seed);
  const cdf = new Float64Array(w.length);
  let acc = 0;
  for (let i = 0; i < w.length; i++) cdf[i] = acc += w[i];
  const nPts = Math.min(SCATTER_POINTS, w.length);
  const picks = new Int32Array(nPts);
  for (let p = 0; p < nPts; p++) {
    const u = rng.next() * acc;
    let lo = 0, hi = w.length - 1;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (cdf[mid] < u) lo = mid + 1;
      else hi = mid;
    }
    picks[p] = lo;
  }
  for (let a = 0; a < k; a++) {
    const sa = ranges[a][1] - ranges[a][0];
    for (let b = a + 1; b < k; b++) {
      const sb = ranges[b][1] - ranges[b][0];
      const grid = density2d(xs[a], xs[b], w, { nx: CORNER_GRID, ny: CORNER_GRID, xRange: ranges[a], yRange: ranges[b], smooth: [smooth[a], smooth[b]], binning: 'linear' });
      const levels = creditLevels(grid.z, MASS_LEVELS);
      const rx = rounders[a], ry = rounders[b];
      contours.push({
        x: names[a],
        y: names[b],
        levels: MASS_LEVELS.map((mass, li) => ({
          mass,
          paths: contourPaths(grid, levels[li])
            .map((path) => roundPath(simplifyPath(path, CONTOUR_TOLERANCE, sa, sb), rx, ry))
            .filter((path) => path.length > 1),
        })),
        points: Array.from(picks, (i) => [rx(xs[a][i]), ry(xs[b][i])] as [number, number]),
      });
    }
  }
  return { marginals, contours, correlation: null };
}

// Reused across objects: the per-parameter sort shared by the summary and the diagnostics.
let sortWork: SortedDraws = { x: new Float64Array(1024), w: new Float64Array(1024), n: 0, total: 0 };


/** Summarise every object of a batch. Throws `PosterityError` (naming the object) on invalid weights. */
export function summariseBatch(ctx: KernelContext, batch: ObjectBatch): BatchResult {
  const k = ctx.names.length;
  const m = ctx.m;
  const q = ctx.quality;
  const count = batch.index.length;
  const out: BatchResult = {
    index: Int32Array.from(batch.index),
    stats: new Float64Array(count * k * STAT_FIELDS).fill(NaN),
    multimodal: new Uint8Array(count * k),
    cov: new Float64Array(count * k * k),
    ess: new Float64Array(count),
    essKind: new Uint8Array(count),
    nSamples: new Int32Array(count),
    flags: new Int32Array(count),
    popValues: new Float64Array(count * k * m).fill(NaN),
    popLogPrior: new Float64Array(count * m).fill(NaN),
    charts: ctx.charts ? [] : null,
  };
  for (let o = 0; o < count; o++) {
    const a = batch.offsets[o], b = batch.offsets[o + 1];
    const len = b - a;
    const id = batch.ids[o];
    const xs = batch.params.map((p) => p.subarray(a, b));
    const raw = batch.weight.subarray(a, b);
    const w = normaliseWeights(ctx.logWeights ? { logWeights: raw } : { weights: raw }, id);
    let flags = 0;
    out.nSamples[o] = len;
    if (batch.chain) {
      const chain = batch.chain.subarray(a, b);
      let ess = Infinity;
      for (let j = 0; j < k; j++) ess = Math.min(ess, autocorrEss(xs[j], chain));
      out.ess[o] = ess;
      out.essKind[o] = 1;
    } else out.ess[o] = kishEss(w);
    if (out.ess[o] < q.minEss) flags |= FLAGS.LOW_ESS;

    if (sortWork.x.length < len) {
      const size = Math.max(len, sortWork.x.length * 2);
      sortWork = { x: new Float64Array(size), w: new Float64Array(size), n: 0, total: 0 };
    }
    const moments: SampleMoments[] = [];
    for (let j = 0; j < k; j++) {
      const sorted = sortDraws(xs[j], w, sortWork);
      const s: ParamSummary = summariseSorted(sorted);
      const mom = sampleMoments(xs[j], w, sorted);
      moments.push(mom);
      const at = (o * k + j) * STAT_FIELDS;
      const st = out.stats;
      st[at] = s.mean;
      st[at + 1] = s.std;
      st[at + 2] = s.p025;
      st[at + 3] = s.p16;
      st[at + 4] = s.p50;
      st[at + 5] = s.p84;
      st[at + 6] = s.p975;
      st[at + 7] = s.hdi68[0];
      st[at + 8] = s.hdi68[1];
      st[at + 9] = s.hdi95[0];
      st[at + 10] = s.hdi95[1];
      if (isMultimodal(xs[j], w, { ...MULTIMODAL_OPTS(q.multimodalMinMass), moments: mom })) {
        out.multimodal[o * k + j] = 1;
        flags |= FLAGS.MULTIMODAL;
      }
      const prior = ctx.uniformPriors[j];
      if (prior) {
        const em = priorEdgeMass(xs[j], w, prior, q.priorEdgeWidth);
        st[at + 11] = em;
        if (em > q.priorEdgeMass) flags |= FLAGS.PRIOR_EDGE;
      }
    }
    const cov = weightedCovariance(xs, w);
    out.cov.set(cov, o * k * k);
    out.flags[o] = flags;

    // equal-weight resample (systematic resampling, seeded per object)
    const rng = makeRng(deriveSeed(ctx.seed, 'pop', id));
    const u0 = rng.next() / m;
    let acc = 0;
    let r = 0;
    for (let d = 0; d < m; d++) {
      const u = u0 + d / m;
      while (r < len - 1 && acc + w[r] < u) acc += w[r++];
      for (let j = 0; j < k; j++) out.popValues[(o * k + j) * m + d] = xs[j][r];
      if (batch.logPrior) out.popLogPrior[o * m + d] = batch.logPrior[a + r];
    }

    if (out.charts) {
      const charts = chartsFor(ctx.names, xs, w, deriveSeed(ctx.seed, 'corner', id), moments);
      const corr = correlationFromCovariance(cov, k);
      charts.correlation = Array.from({ length: k }, (_, r1) => Array.from(corr.subarray(r1 * k, r1 * k + k), (v) => round(v, 3)));
      out.charts.push(charts);
    }
  }
  return out;
}
