/**
 * Weighted posterior summaries: mean, standard deviation, quantiles, highest-density interval,
 * covariance and correlation. Weights need not be normalised; zero weights carry no mass.
 */
import { PosterityError, problem } from '../problems.ts';
import { alloc, covarianceTerms, crossProducts, memory, offsetOf, place, release, sortDrawsAt, summarySortedAt } from './simd.ts';

export { autocorrEss } from './autocorr.ts';

/** One parameter's posterior summary as published in the catalogue. */
export interface ParamSummary {
  mean: number;
  std: number;
  p025: number;
  p16: number;
  p50: number;
  p84: number;
  p975: number;
  hdi68: [number, number];
  hdi95: [number, number];
}

/** Draws sorted by value with their weights; only the first `n` entries are meaningful. */
export interface SortedDraws {
  x: Float64Array;
  w: Float64Array;
  n: number;
  /** Sum of the retained weights. */
  total: number;
}

/** Weighted mean sum(w x) / sum(w). */
export function weightedMean(x: Float64Array, w: Float64Array): number {
  let sw = 0;
  let swx = 0;
  for (let i = 0; i < x.length; i++) {
    const wi = w[i];
    if (wi === 0) continue;
    sw += wi;
    swx += wi * x[i];
  }
  return swx / sw;
}

/**
 * Weighted standard deviation normalised by the sum of weights (the population-style weighted
 * variance sum w (x - mean)^2 / sum w, no small-sample correction), computed in two passes.
 */
export function weightedStd(x: Float64Array, w: Float64Array): number {
  const m = weightedMean(x, w);
  let sw = 0;
  let ss = 0;
  for (let i = 0; i < x.length; i++) {
    const wi = w[i];
    if (wi === 0) continue;
    const d = x[i] - m;
    sw += wi;
    ss += wi * d * d;
  }
  return Math.sqrt(ss / sw);
}

// ---- sorting draws by value, carrying weights (no per-call allocation with a workspace) ----

function insertionSort(k: Float64Array, v: Float64Array, lo: number, hi: number): void {
  for (let i = lo + 1; i <= hi; i++) {
    const kk = k[i];
    const vv = v[i];
    let j = i - 1;
    while (j >= lo && k[j] > kk) {
      k[j + 1] = k[j];
      v[j + 1] = v[j];
      j--;
    }
    k[j + 1] = kk;
    v[j + 1] = vv;
  }
}

/** In-place sort of keys `k[0..n)` ascending, permuting `v` alongside (quicksort, median of three). */
export function sortPairs(k: Float64Array, v: Float64Array, n: number): void {
  const stack: number[] = [];
  let lo = 0;
  let hi = n - 1;
  for (;;) {
    while (hi - lo > 16) {
      const mid = (lo + hi) >>> 1;
      // median of three into k[mid]
      if (k[mid] < k[lo]) swap(k, v, mid, lo);
      if (k[hi] < k[lo]) swap(k, v, hi, lo);
      if (k[hi] < k[mid]) swap(k, v, hi, mid);
      const pivot = k[mid];
      let i = lo;
      let j = hi;
      while (i <= j) {
        while (k[i] < pivot) i++;
        while (k[j] > pivot) j--;
        if (i <= j) {
          swap(k, v, i, j);
          i++;
          j--;
        }
      }
      // recurse into the smaller part via the stack to bound its depth
      if (j - lo < hi - i) {
        if (i < hi) stack.push(i, hi);
        hi = j;
      } else {
        if (lo < j) stack.push(lo, j);
        lo = i;
      }
    }
    insertionSort(k, v, lo, hi);
    if (stack.length === 0) return;
    hi = stack.pop() as number;
    lo = stack.pop() as number;
  }
}

function swap(k: Float64Array, v: Float64Array, a: number, b: number): void {
  const t = k[a];
  k[a] = k[b];
  k[b] = t;
  const u = v[a];
  v[a] = v[b];
  v[b] = u;
}

// ---- radix argsort for the common case of hundreds of draws (no mispredicted branches) ----

interface RadixWork {
  hi: Uint32Array;
  lo: Uint32Array;
  idx: Uint32Array;
  hi2: Uint32Array;
  lo2: Uint32Array;
  idx2: Uint32Array;
  keys: Float64Array;
  words: Uint32Array;
  vals: Float64Array;
  hist: Uint32Array;
}

const LITTLE_ENDIAN = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1;
const HI = LITTLE_ENDIAN ? 1 : 0;
const LO = 1 - HI;
let radix: RadixWork | null = null;

function radixWork(n: number): RadixWork {
  if (radix && radix.idx.length >= n) return radix;
  const size = Math.max(n, (radix?.idx.length ?? 0) * 2);
  const keys = new Float64Array(size);
  radix = {
    hi: new Uint32Array(size),
    lo: new Uint32Array(size),
    idx: new Uint32Array(size),
    hi2: new Uint32Array(size),
    lo2: new Uint32Array(size),
    idx2: new Uint32Array(size),
    keys,
    words: new Uint32Array(keys.buffer),
    vals: new Float64Array(size),
    hist: new Uint32Array(1024),
  };
  return radix;
}

/**
 * Sorts k[0..n) by the order-preserving 64-bit pattern of each value (-0 before +0), ties in
 * their original order, permuting v alongside (a comparison sort of indices; for the draws whose
 * high words tie too often for `radixSortPairs`' insertion pass).
 */
function stableSortPairs(k: Float64Array, v: Float64Array, n: number): void {
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => {
    const x = k[a], y = k[b];
    if (x !== y) return x < y ? -1 : 1;
    const nx = Object.is(x, -0), ny = Object.is(y, -0); // -0 before +0
    return nx !== ny ? (nx ? -1 : 1) : a - b;
  });
  const ks = Float64Array.from(order, (i) => k[i]);
  const vs = Float64Array.from(order, (i) => v[i]);
  k.set(ks);
  v.set(vs);
}

/**
 * Sorts k[0..n) ascending, permuting v alongside: LSD radix sort (8-bit digits) on the high
 * 32 bits of the order-preserving bit pattern of each double, skipping constant digits, then an
 * insertion pass on the full 64 bits that settles draws sharing their high word (or, when many
 * do, `stableSortPairs`). The order is that of the 64-bit pattern (-0 before +0), ties in
 * their original order.
 */
function radixSortPairs(k: Float64Array, v: Float64Array, n: number): void {
  const wk = radixWork(n);
  let { hi, lo, idx, hi2, lo2, idx2 } = wk;
  const { keys, words, vals, hist } = wk;
  keys.set(k.subarray(0, n));
  vals.set(v.subarray(0, n));
  hist.fill(0);
  for (let i = 0; i < n; i++) {
    let h = words[2 * i + HI];
    let l = words[2 * i + LO];
    // flip so unsigned order equals numeric order: negatives invert all bits, positives the sign
    if (h & 0x80000000) {
      h = ~h >>> 0;
      l = ~l >>> 0;
    } else {
      h = (h | 0x80000000) >>> 0;
    }
    hi[i] = h;
    lo[i] = l;
    idx[i] = i;
    hist[h & 255]++;
    hist[256 + ((h >>> 8) & 255)]++;
    hist[512 + ((h >>> 16) & 255)]++;
    hist[768 + (h >>> 24)]++;
  }
  for (let d = 0; d < 4; d++) {
    const base = d * 256;
    const shift = d * 8;
    if (hist[base + ((hi[0] >>> shift) & 255)] === n) continue;
    let sum = 0;
    for (let b = 0; b < 256; b++) {
      const c = hist[base + b];
      hist[base + b] = sum;
      sum += c;
    }
    for (let i = 0; i < n; i++) {
      const p = hist[base + ((hi[i] >>> shift) & 255)]++;
      hi2[p] = hi[i];
      lo2[p] = lo[i];
      idx2[p] = idx[i];
    }
    let t = hi;
    hi = hi2;
    hi2 = t;
    t = lo;
    lo = lo2;
    lo2 = t;
    t = idx;
    idx = idx2;
    idx2 = t;
  }
  // Many draws sharing a high word (a posterior narrower than ~1e-6 of its value) would make
  // the insertion pass quadratic; past a budget of moves, fall back to quicksort.
  let budget = 16 * n;
  for (let i = 1; i < n; i++) {
    const h = hi[i];
    const l = lo[i];
    const id = idx[i];
    let j = i - 1;
    while (j >= 0 && (hi[j] > h || (hi[j] === h && lo[j] > l))) {
      hi[j + 1] = hi[j];
      lo[j + 1] = lo[j];
      idx[j + 1] = idx[j];
      j--;
      if (--budget < 0) {
        stableSortPairs(k, v, n);
        return;
      }
    }
    hi[j + 1] = h;
    lo[j + 1] = l;
    idx[j + 1] = id;
  }
  for (let i = 0; i < n; i++) {
    const id = idx[i];
    k[i] = keys[id];
    v[i] = vals[id];
  }
}

/**
 * Copies draws with positive weight and non-NaN value into `out` (grown as needed) and sorts
 * them by value. Draws with NaN values are ignored; the caller validates values upstream.
 */
export function sortDraws(x: Float64Array, w: Float64Array, out?: SortedDraws): SortedDraws {
  const n0 = x.length;
  const dst: SortedDraws =
    out && out.x.length >= n0 ? out : { x: new Float64Array(n0), w: new Float64Array(n0), n: 0, total: 0 };
  if (n0 >= 64) {
    // the same order as radixSortPairs below, in WebAssembly (kernels.wat)
    const base = alloc(0);
    const px = place(x);
    const pw = place(w);
    const out = alloc(2 * n0);
    const s = sortDrawsAt(px, pw, n0, out, out + n0);
    if (s && s.n >= 64) {
      const m = memory();
      dst.x.set(m.subarray(out, out + s.n));
      dst.w.set(m.subarray(out + n0, out + n0 + s.n));
      dst.n = s.n;
      dst.total = s.total;
      release(base);
      return dst;
    }
    release(base);
  }
  let n = 0;
  let total = 0;
  for (let i = 0; i < n0; i++) {
    const wi = w[i];
    const xi = x[i];
    if (!(wi > 0) || Number.isNaN(xi)) continue;
    dst.x[n] = xi;
    dst.w[n] = wi;
    total += wi;
    n++;
  }
  if (n >= 64) radixSortPairs(dst.x, dst.w, n);
  else sortPairs(dst.x, dst.w, n);
  dst.n = n;
  dst.total = total;
  return dst;
}

/**
 * Quantile of sorted weighted draws. Rule: draw i sits at CDF position
 * p_i = (C_i - w_i / 2) / W, with C_i the cumulative weight up to and including it and W the
 * total (midpoint plotting positions); Q(p) interpolates linearly between neighbouring p_i and
 * is clamped to the smallest and largest draw outside [p_1, p_n]. With equal weights
 * p_i = (i - 0.5) / n, Hazen's rule (Hyndman & Fan 1996, definition 5).
 */
export function quantileSorted(s: SortedDraws, prob: number): number {
  const n = s.n;
  if (n === 0 || Number.isNaN(prob)) return NaN;
  const { x, w } = s;
  const target = prob * s.total;
  // walk the cumulative midpoints: pos_i = C_{i-1} + w_i / 2 (in weight units)
  let cPrev = 0;
  let posPrev = 0.5 * w[0];
  if (target <= posPrev) return x[0];
  cPrev = w[0];
  for (let i = 1; i < n; i++) {
    const pos = cPrev + 0.5 * w[i];
    if (target <= pos) {
      const f = (target - posPrev) / (pos - posPrev);
      return x[i - 1] + f * (x[i] - x[i - 1]);
    }
    posPrev = pos;
    cPrev += w[i];
  }
  return x[n - 1];
}

/**
 * `quantileSorted` at several probabilities in one walk over the draws: `probs` must be
 * ascending; out[at + k] is exactly `quantileSorted(s, probs[k])` (the same operations in the
 * same order), so one pass serves the published percentiles and the quartiles together.
 */
export function quantilesSorted(s: SortedDraws, probs: ArrayLike<number>, out: Float64Array, at = 0): void {
  const n = s.n;
  const K = probs.length;
  if (n === 0) {
    for (let q = 0; q < K; q++) out[at + q] = NaN;
    return;
  }
  const { x, w } = s;
  const total = s.total;
  let q = 0;
  let posPrev = 0.5 * w[0];
  while (q < K && probs[q] * total <= posPrev) out[at + q++] = x[0];
  let cPrev = w[0];
  for (let i = 1; i < n && q < K; i++) {
    const pos = cPrev + 0.5 * w[i];
    while (q < K) {
      const target = probs[q] * total;
      if (!(target <= pos)) break;
      const f = (target - posPrev) / (pos - posPrev);
      out[at + q++] = x[i - 1] + f * (x[i] - x[i - 1]);
    }
    posPrev = pos;
    cPrev += w[i];
  }
  // NaN probabilities (never <= anything) give NaN, as in quantileSorted; the rest the largest draw
  for (; q < K; q++) out[at + q] = Number.isNaN(probs[q]) ? NaN : x[n - 1];
}

/**
 * Shortest interval [x_i, x_j] of sorted draws whose summed weight is at least `level` of the
 * total (Chen & Shao 1999 sample-based HPD interval, with weights). For a multimodal posterior
 * this is the shortest single interval, which may span a gap between modes.
 */
export function hdiSorted(s: SortedDraws, level: number): [number, number] {
  const n = s.n;
  if (n === 0) return [NaN, NaN];
  const { x, w } = s;
  if (level >= 1) return [x[0], x[n - 1]];
  const need = level * s.total * (1 - 1e-12);
  let bestLo = x[0];
  let bestHi = x[n - 1];
  let bestWidth = Infinity;
  let j = 0;
  let mass = 0; // weight of draws i..j-1
  for (let i = 0; i < n; i++) {
    while (j < n && mass < need) {
      mass += w[j];
      j++;
    }
    if (mass < need) break;
    const width = x[j - 1] - x[i];
    if (width < bestWidth) {
      bestWidth = width;
      bestLo = x[i];
      bestHi = x[j - 1];
    }
    mass -= w[i];
  }
  return [bestLo, bestHi];
}

function checkLevel(level: number): void {
  if (!(level > 0 && level <= 1)) {
    throw new PosterityError(problem({ message: 'invalid credible level', expected: 'a number in (0, 1]', got: String(level) }));
  }
}

/** Weighted quantiles at `probs` by the midpoint rule of `quantileSorted` (Hazen's with equal weights). */
export function weightedQuantiles(x: Float64Array, w: Float64Array, probs: readonly number[]): Float64Array {
  const s = sortDraws(x, w);
  const out = new Float64Array(probs.length);
  for (let k = 0; k < probs.length; k++) out[k] = quantileSorted(s, probs[k]);
  return out;
}

/** Highest-density interval at `level` (see `hdiSorted`); may span a gap for multimodal posteriors. */
export function hdi(x: Float64Array, w: Float64Array, level: number): [number, number] {
  checkLevel(level);
  return hdiSorted(sortDraws(x, w), level);
}

/**
 * Weighted covariance matrix (row-major k x k) of the columns `cols`, normalised by the sum of
 * weights like `weightedStd`: C_ab = sum w (x_a - m_a)(x_b - m_b) / sum w.
 */
export function weightedCovariance(cols: readonly Float64Array[], w: Float64Array): Float64Array {
  const k = cols.length;
  const n = w.length;
  const kk = k + (k & 1);
  const cov = new Float64Array(k * k);
  if (k === 0) return cov;
  // the means, then the cross products in the draws' order (kernels.wat, or its scalar loops)
  const base = alloc(0);
  const pw = place(w);
  // the columns as one block of slots: where they already are, when they lie so in the SIMD memory
  const first = offsetOf(cols[0]);
  let px = first;
  for (let a = 0; a < k && px >= 0; a++) if (cols[a].length !== n || offsetOf(cols[a]) !== first + a * n) px = -1;
  if (px < 0) {
    px = alloc(k * n);
    for (let a = 0; a < k; a++) memory().set(cols[a].subarray(0, n), px + a * n);
  }
  const t = alloc(k * n + n * kk + k * kk);
  const u = t + k * n;
  const p = u + n * kk;
  const sw = covarianceTerms(pw, px, n, k, t, u);
  crossProducts(t, u, n, k, p);
  const m = memory();
  for (let a = 0; a < k; a++) for (let b = a; b < k; b++) cov[a * k + b] = cov[b * k + a] = m[p + a * kk + b] / sw;
  release(base);
  return cov;
}

/**
 * Correlation matrix r_ab = C_ab / sqrt(C_aa C_bb) from a row-major k x k covariance.
 * Entries involving a parameter with zero variance are NaN.
 */
export function correlationFromCovariance(cov: Float64Array, k: number): Float64Array {
  const r = new Float64Array(k * k);
  for (let a = 0; a < k; a++) {
    for (let b = 0; b < k; b++) {
      const d = Math.sqrt(cov[a * k + a] * cov[b * k + b]);
      r[a * k + b] = d > 0 ? (a === b ? 1 : Math.max(-1, Math.min(1, cov[a * k + b] / d))) : NaN;
    }
  }
  return r;
}

// Reused across calls: summarise runs once per object and parameter.
let workspace: SortedDraws = { x: new Float64Array(1024), w: new Float64Array(1024), n: 0, total: 0 };

/**
 * Mean and standard deviation (normalised by the sum of weights), the 2.5, 16, 50, 84 and
 * 97.5 percentiles (midpoint rule of `quantileSorted`) and the 68% and 95% highest-density
 * intervals of one parameter. Sorts once into a reused workspace.
 */
export function summarise(x: Float64Array, w: Float64Array): ParamSummary {
  if (workspace.x.length < x.length) {
    const size = Math.max(x.length, workspace.x.length * 2);
    workspace = { x: new Float64Array(size), w: new Float64Array(size), n: 0, total: 0 };
  }
  return summariseSorted(sortDraws(x, w, workspace));
}

/** Probabilities of the published percentiles and the quartiles, ascending (one `quantilesSorted` walk). */
export const SUMMARY_PROBS = Object.freeze([0.025, 0.16, 0.25, 0.5, 0.75, 0.84, 0.975]);
const walk = new Float64Array(SUMMARY_PROBS.length);

/**
 * Mean and standard deviation of sorted draws (sums in sorted order, normalised by the total
 * weight), written to out[at], out[at + 1].
 */
export function meanStdSorted(s: SortedDraws, out: Float64Array, at = 0): void {
  const n = s.n;
  const sx = s.x;
  const sw = s.w;
  let swx = 0;
  for (let i = 0; i < n; i++) swx += sw[i] * sx[i];
  const mean = swx / s.total;
  let ss = 0;
  for (let i = 0; i < n; i++) {
    const d = sx[i] - mean;
    ss += sw[i] * d * d;
  }
  out[at] = mean;
  out[at + 1] = Math.sqrt(ss / s.total);
}

/** `summarise` of draws already sorted by `sortDraws` (so that one sort can serve several uses). */
export function summariseSorted(s: SortedDraws): ParamSummary {
  if (s.n >= 1) {
    // one WebAssembly call (kernels.wat), the same operations as the scalar route below
    const base = alloc(0);
    const px = place(s.x.subarray(0, s.n));
    const pw = place(s.w.subarray(0, s.n));
    const probs = alloc(SUMMARY_PROBS.length + 2 + SUMMARY_PROBS.length + 5);
    const out = probs + SUMMARY_PROBS.length;
    memory().set(SUMMARY_PROBS, probs);
    const K = SUMMARY_PROBS.length;
    if (summarySortedAt(px, pw, s.n, s.total, probs, K, 0.68 * s.total * (1 - 1e-12), 0.95 * s.total * (1 - 1e-12), out)) {
      const m = memory();
      const r: ParamSummary = {
        mean: m[out],
        std: m[out + 1],
        p025: m[out + 2],
        p16: m[out + 3],
        p50: m[out + 5],
        p84: m[out + 7],
        p975: m[out + 8],
        hdi68: [m[out + 2 + K], m[out + 3 + K]],
        hdi95: [m[out + 4 + K], m[out + 5 + K]],
      };
      release(base);
      return r;
    }
    release(base);
  }
  const ms = new Float64Array(2);
  meanStdSorted(s, ms);
  quantilesSorted(s, SUMMARY_PROBS, walk);
  return {
    mean: ms[0],
    std: ms[1],
    p025: walk[0],
    p16: walk[1],
    p50: walk[3],
    p84: walk[5],
    p975: walk[6],
    hdi68: hdiSorted(s, 0.68),
    hdi95: hdiSorted(s, 0.95),
  };
}
