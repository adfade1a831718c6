/**
 * The per-object step of the summaries, shared by every way of running them (in this thread,
 * in worker threads, one partition of the catalogue): a batch of whole objects' draws in flat
 * typed arrays goes in, flat typed arrays of results come out. Nothing here depends on which
 * other objects are in the batch or on the order of batches: every random step is seeded by
 * the release seed and the object id.
 */
import { normaliseWeights, kishEss } from '../core/stats/weights.ts';
import { summarise, weightedCovariance, correlationFromCovariance, autocorrEss, type ParamSummary } from '../core/stats/summary.ts';
import { histogram, kde, density2d, creditLevels, contourPaths } from '../core/stats/density.ts';
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

/** Corner-plot data: 1-D histograms and KDEs, 2-D contours enclosing 68% and 95% of the mass. */
export function chartsFor(names: string[], xs: Float64Array[], w: Float64Array, seed: number): ObjectCharts {
  const k = xs.length;
  const marginals: Marginal[] = [];
  const ranges: [number, number][] = [];
  for (let j = 0; j < k; j++) {
    const h = histogram(xs[j], w, { rule: 'fd' });
    const lo = h.edges[0], hi = h.edges[h.edges.length - 1];
    ranges.push([lo, hi]);
    const grid = new Float64Array(64);
    for (let g = 0; g < 64; g++) grid[g] = lo + ((hi - lo) * g) / 63;
    const dens = kde(xs[j], w, grid, { bandwidth: 'silverman' });
    marginals.push({
      param: names[j],
      edges: Array.from(h.edges, (v) => round(v)),
      density: Array.from(h.density, (v) => round(v, 4)),
      kdeX: Array.from(grid, (v) => round(v)),
      kdeY: Array.from(dens.density, (v) => round(v, 4)),
      rule: `${h.rule}; KDE bandwidth ${round(dens.bandwidth, 3)} (Silverman)`,
    });
  }
  const contours: Contour2d[] = [];
  // a light scatter of equal-weight points under the contours
  const rng = makeRng(seed);
  const cdf = new Float64Array(w.length);
  let acc = 0;
  for (let i = 0; i < w.length; i++) cdf[i] = acc += w[i];
  const nPts = Math.min(150, w.length);
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
    for (let b = a + 1; b < k; b++) {
      const grid = density2d(xs[a], xs[b], w, { nx: 40, ny: 40, xRange: ranges[a], yRange: ranges[b], smooth: 1 });
      const levels = creditLevels(grid.z, MASS_LEVELS);
      contours.push({
        x: names[a],
        y: names[b],
        levels: MASS_LEVELS.map((mass, li) => ({
          mass,
          paths: contourPaths(grid, levels[li]).map((path) => path.map(([px, py]) => [round(px, 4), round(py, 4)] as [number, number])),
        })),
        points: Array.from(picks, (i) => [round(xs[a][i], 4), round(xs[b][i], 4)] as [number, number]),
      });
    }
  }
  return { marginals, contours, correlation: null };
}

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

    for (let j = 0; j < k; j++) {
      const s: ParamSummary = summarise(xs[j], w);
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
      if (isMultimodal(xs[j], w, MULTIMODAL_OPTS(q.multimodalMinMass))) {
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
      const charts = chartsFor(ctx.names, xs, w, deriveSeed(ctx.seed, 'corner', id));
      const corr = correlationFromCovariance(cov, k);
      charts.correlation = Array.from({ length: k }, (_, r1) => Array.from(corr.subarray(r1 * k, r1 * k + k), (v) => round(v, 3)));
      out.charts.push(charts);
    }
  }
  return out;
}
