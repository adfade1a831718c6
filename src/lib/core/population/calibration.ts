/**
 * Calibration of posteriors on mock catalogues, where each object's true value is known:
 * coverage of central credible intervals, the probability integral transform (PIT), and point
 * estimate bias, NMAD scatter and outlier fraction.
 */
import { PosterityError, problem } from '../problems.ts';
import { chi2Sf } from '../stats/special.ts';
import { quantileSorted, sortDraws, weightedQuantiles, type SortedDraws } from '../stats/summary.ts';
import { checkDrawSet, type DrawSet } from './draws.ts';

/**
 * Each object's posterior, as weighted draws (flat layout of `DrawSet`) or as a quantile
 * function `quantile(object, p)` (e.g. from a Gaussian or from published percentiles).
 */
export type PosteriorInput = DrawSet | { quantile: (object: number, p: number) => number };

/** Default levels: 0.1 to 0.9 in steps of 0.1 plus the 1 and 2 sigma Gaussian levels. */
export const COVERAGE_LEVELS: readonly number[] = [0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.6827, 0.7, 0.8, 0.9, 0.9545];

/** Gaussian 1-sigma central probability, 2 Phi(1) - 1 = 0.6827 (to four places). */
export const LEVEL_1SIGMA = 0.6827;

export interface CoverageResult {
  level: number;
  /** Fraction of objects whose true value lies in their central `level` credible interval. */
  fraction: number;
  /** Objects with a finite true value and a usable posterior. */
  n: number;
  /** Binomial standard error of the fraction under perfect calibration, sqrt(L (1 - L) / n). */
  binomialSe: number;
}

function fail(message: string, expected: string, got: string): never {
  throw new PosterityError(problem({ message, expected, got }));
}

function isDrawSet(p: PosteriorInput): p is DrawSet {
  return (p as DrawSet).offsets !== undefined;
}

function checkInput(trueVals: Float64Array, post: PosteriorInput): void {
  if (isDrawSet(post)) checkDrawSet(post, 'posterior draws', trueVals.length);
}

/** Calls `fn(i, sorted)` with each object's draws sorted by value (one reused workspace). */
function forEachSorted(d: DrawSet, fn: (i: number, s: SortedDraws) => void): void {
  let ws: SortedDraws | undefined;
  const n = d.offsets.length - 1;
  for (let i = 0; i < n; i++) {
    const a = d.offsets[i];
    const b = d.offsets[i + 1];
    ws = sortDraws(d.values.subarray(a, b), d.weights.subarray(a, b), ws);
    fn(i, ws);
  }
}

/**
 * Coverage of central credible intervals: for each level L, the fraction of objects with
 * Q_i((1 - L)/2) <= truth_i <= Q_i((1 + L)/2), where Q_i is the object's posterior quantile
 * function (for draws, the weighted midpoint rule of `quantileSorted`). For calibrated
 * posteriors the fraction is L within its binomial error (e.g. Dawid 1984, JRSS A 147, 278;
 * Gneiting et al. 2007, JRSS B 69, 243). Objects with a NaN truth or no usable draw are skipped.
 */
export function coverage(
  trueVals: Float64Array,
  posterior: PosteriorInput,
  levels: readonly number[] = COVERAGE_LEVELS,
): CoverageResult[] {
  checkInput(trueVals, posterior);
  for (const L of levels) if (!(L > 0 && L < 1)) fail('invalid credible level', 'a number in (0, 1)', String(L));
  const hits = new Float64Array(levels.length);
  let n = 0;
  const tally = (t: number, q: (p: number) => number) => {
    n++;
    for (let k = 0; k < levels.length; k++) {
      const L = levels[k];
      if (t >= q((1 - L) / 2) && t <= q((1 + L) / 2)) hits[k]++;
    }
  };
  if (isDrawSet(posterior)) {
    forEachSorted(posterior, (i, s) => {
      const t = trueVals[i];
      if (Number.isNaN(t) || s.n === 0) return;
      tally(t, (p) => quantileSorted(s, p));
    });
  } else {
    for (let i = 0; i < trueVals.length; i++) {
      const t = trueVals[i];
      if (Number.isNaN(t)) continue;
      tally(t, (p) => posterior.quantile(i, p));
    }
  }
  return levels.map((level, k) => ({
    level,
    fraction: n > 0 ? hits[k] / n : NaN,
    n,
    binomialSe: n > 0 ? Math.sqrt((level * (1 - level)) / n) : NaN,
  }));
}

/**
 * Posterior CDF of sorted weighted draws at x, the inverse of `quantileSorted`'s rule: draw i
 * sits at p_i = (C_i - w_i / 2) / W and the CDF interpolates linearly between neighbouring
 * (x_i, p_i); it is 0 below the smallest draw and 1 above the largest. At a run of equal
 * values (or exactly on a single draw at the ends) the midpoint of the jump is returned.
 */
export function cdfSorted(s: SortedDraws, x: number): number {
  const n = s.n;
  if (n === 0 || Number.isNaN(x)) return NaN;
  const { x: v, w } = s;
  if (x < v[0]) return 0;
  if (x > v[n - 1]) return 1;
  let c = 0; // cumulative weight before draw i
  let posPrev = NaN;
  for (let i = 0; i < n; i++) {
    if (v[i] === x) {
      // run of draws equal to x: midpoint of the weight they carry
      let j = i;
      let runW = 0;
      while (j < n && v[j] === x) runW += w[j++];
      return (c + runW / 2) / s.total;
    }
    const pos = c + w[i] / 2;
    if (v[i] > x) {
      const f = (x - v[i - 1]) / (v[i] - v[i - 1]);
      return (posPrev + f * (pos - posPrev)) / s.total;
    }
    posPrev = pos;
    c += w[i];
  }
  return 1;
}

/**
 * Probability integral transform of each object: u_i = F_i(truth_i), the object's posterior
 * CDF at its true value (Dawid 1984; Gneiting et al. 2007). For draws F_i is `cdfSorted`; for a
 * quantile function, u solves Q_i(u) = truth by bisection to 1e-10. Uniform on [0, 1] when the
 * posteriors are calibrated. NaN for a NaN truth or an object without usable draws.
 */
export function pit(trueVals: Float64Array, posterior: PosteriorInput): Float64Array {
  checkInput(trueVals, posterior);
  const out = new Float64Array(trueVals.length).fill(NaN);
  if (isDrawSet(posterior)) {
    forEachSorted(posterior, (i, s) => {
      out[i] = cdfSorted(s, trueVals[i]);
    });
    return out;
  }
  for (let i = 0; i < trueVals.length; i++) {
    const t = trueVals[i];
    if (Number.isNaN(t)) continue;
    let lo = 0;
    let hi = 1;
    for (let it = 0; it < 60 && hi - lo > 1e-10; it++) {
      const mid = 0.5 * (lo + hi);
      if (posterior.quantile(i, mid) < t) lo = mid;
      else hi = mid;
    }
    out[i] = 0.5 * (lo + hi);
  }
  return out;
}

export interface PitHistogram {
  /** nBins + 1 edges from 0 to 1. */
  edges: Float64Array;
  counts: Float64Array;
  /** counts / (n * binWidth): 1 everywhere for a flat histogram. */
  density: Float64Array;
  n: number;
  /** Pearson chi-square against the flat expectation n / nBins, nBins - 1 degrees of freedom. */
  chi2: number;
  dof: number;
  /** Survival probability of `chi2` (chance of a worse chi-square if the PIT is uniform). */
  pValue: number;
}

/**
 * Histogram of PIT values in `nBins` equal bins of [0, 1] (u = 1 falls in the last bin; NaN
 * skipped), with Pearson's chi-square test of uniformity (Pearson 1900): chi2 = sum (O - E)^2 / E,
 * E = n / nBins, p-value from the chi-square survival function with nBins - 1 degrees of freedom.
 */
export function pitHistogram(pitValues: Float64Array, nBins = 20): PitHistogram {
  if (!(Number.isInteger(nBins) && nBins >= 2)) fail('invalid number of PIT bins', 'an integer >= 2', String(nBins));
  const counts = new Float64Array(nBins);
  let n = 0;
  for (let i = 0; i < pitValues.length; i++) {
    const u = pitValues[i];
    if (!(u >= 0 && u <= 1)) continue;
    counts[Math.min(nBins - 1, Math.floor(u * nBins))]++;
    n++;
  }
  const edges = new Float64Array(nBins + 1);
  for (let k = 0; k <= nBins; k++) edges[k] = k / nBins;
  const e = n / nBins;
  const density = new Float64Array(nBins);
  let chi2 = 0;
  for (let k = 0; k < nBins; k++) {
    density[k] = n > 0 ? counts[k] / e : NaN;
    chi2 += ((counts[k] - e) * (counts[k] - e)) / e;
  }
  const dof = nBins - 1;
  return { edges, counts, density, n, chi2: n > 0 ? chi2 : NaN, dof, pValue: n > 0 ? chi2Sf(chi2, dof) : NaN };
}

function finite(d: Float64Array): Float64Array {
  let m = 0;
  for (let i = 0; i < d.length; i++) if (!Number.isNaN(d[i])) m++;
  if (m === d.length) return d;
  const out = new Float64Array(m);
  for (let i = 0, j = 0; i < d.length; i++) if (!Number.isNaN(d[i])) out[j++] = d[i];
  return out;
}

function median(d: Float64Array): number {
  return weightedQuantiles(d, new Float64Array(d.length).fill(1), [0.5])[0];
}

/** Residuals estimate - truth, element by element. */
export function residuals(estimate: Float64Array, truth: Float64Array): Float64Array {
  if (estimate.length !== truth.length) fail('estimates and true values differ in length', String(truth.length), String(estimate.length));
  const d = new Float64Array(truth.length);
  for (let i = 0; i < d.length; i++) d[i] = estimate[i] - truth[i];
  return d;
}

/** Redshift residuals normalised by 1 + z: (z_est - z_true) / (1 + z_true) (common practice). */
export function redshiftResiduals(zEstimate: Float64Array, zTrue: Float64Array): Float64Array {
  const d = residuals(zEstimate, zTrue);
  for (let i = 0; i < d.length; i++) d[i] /= 1 + zTrue[i];
  return d;
}

/** Bias: median of the residuals d = estimate - truth (NaN skipped; Hazen's rule for the median). */
export function bias(d: Float64Array): number {
  const x = finite(d);
  return x.length ? median(x) : NaN;
}

/**
 * Normalised median absolute deviation, NMAD = 1.4826 median(|d - median(d)|) (Hoaglin,
 * Mosteller & Tukey 1983, Understanding Robust and Exploratory Data Analysis; 1.4826 is
 * 1 / Phi^-1(3/4), so NMAD estimates sigma for Gaussian d; its use for SED-fit residuals is
 * common practice). NaN skipped.
 */
export function nmad(d: Float64Array): number {
  const x = finite(d);
  if (x.length === 0) return NaN;
  const m = median(x);
  const a = new Float64Array(x.length);
  for (let i = 0; i < x.length; i++) a[i] = Math.abs(x[i] - m);
  return NMAD_FACTOR * median(a);
}

/** 1 / Phi^-1(3/4) rounded as commonly quoted. */
export const NMAD_FACTOR = 1.4826;

/** Catastrophic-outlier threshold on |dz| / (1 + z) for redshifts (common practice). */
export const REDSHIFT_OUTLIER_THRESHOLD = 0.15;

/**
 * Fraction of residuals with |d| > threshold (NaN skipped). For redshifts pass
 * `redshiftResiduals` and `REDSHIFT_OUTLIER_THRESHOLD` (0.15, common practice); for other
 * parameters a stated threshold, e.g. a fixed number of dex or 3 * nmad(d).
 */
export function outlierFraction(d: Float64Array, threshold: number): number {
  if (!(threshold >= 0)) fail('invalid outlier threshold', 'a number >= 0', String(threshold));
  let n = 0;
  let out = 0;
  for (let i = 0; i < d.length; i++) {
    const x = d[i];
    if (Number.isNaN(x)) continue;
    n++;
    if (Math.abs(x) > threshold) out++;
  }
  return n > 0 ? out / n : NaN;
}

/**
 * True when the 68.27% coverage is inconsistent with calibration at 3 binomial standard errors:
 * |fraction - p| > 3 sqrt(p (1 - p) / n), p = 0.6827. False when n = 0.
 */
export function calibrationFlag(coverage68: number, n: number): boolean {
  if (!(n > 0)) return false;
  const p = LEVEL_1SIGMA;
  return Math.abs(coverage68 - p) > 3 * Math.sqrt((p * (1 - p)) / n);
}
