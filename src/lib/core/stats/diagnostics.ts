/**
 * Per-object posterior diagnostics: modes, multimodality and pile-up at prior bounds, with the
 * default thresholds that set the quality flags.
 */
import { kdeBandwidth, kdeUniform, sampleMoments, type SampleMoments } from './density.ts';

/** Default quality thresholds; a release may override each in `release.json`. */
export const DEFAULT_THRESHOLDS = Object.freeze({
  /** Kish or autocorrelation ESS below this sets LOW_ESS (our choice; a few tens is common practice as the least for stable percentiles). */
  minEss: 50,
  /** chi-square p-value below this sets POOR_FIT (our choice; 0.1% is a common practice significance level). */
  minChi2Pvalue: 0.001,
  /** Width of the band at each prior bound, as a fraction of the prior range (our choice). */
  priorEdgeWidth: 0.02,
  /** Posterior mass inside that band above which PRIOR_EDGE is set (our choice). */
  priorEdgeMass: 0.2,
  /** Least posterior mass of a secondary mode for MULTIMODAL (our choice). */
  multimodalMinMass: 0.1,
});

/**
 * Number of local maxima of a gridded density: a point (or run of equal points, a plateau)
 * higher than both neighbours; an end point counts when higher than its only neighbour.
 * With `minProminence` (a fraction of the global maximum), a peak counts only if the density
 * drops by at least that much below it on both sides before rising to a higher peak (ends count
 * as drops to zero; of two equal peaks with a shallow valley, only the right one counts).
 */
export function countModes(density: Float64Array, opts: { minProminence?: number } = {}): number {
  const peaks = findPeaks(density);
  if (!opts.minProminence) return peaks.length;
  let max = 0;
  for (const v of density) if (v > max) max = v;
  const need = opts.minProminence * max;
  let count = 0;
  for (const p of peaks) {
    const h = density[p];
    if (h - sideMinimum(density, p, -1) >= need && h - sideMinimum(density, p, 1) >= need) count++;
  }
  return Math.max(count, peaks.length ? 1 : 0);
}

function sideMinimum(d: Float64Array, p: number, step: number): number {
  const h = d[p];
  let min = h;
  for (let i = p + step; i >= 0 && i < d.length; i += step) {
    // an equal peak stops the walk to the right only, so of two equal peaks one keeps its prominence
    if (d[i] > h || (step > 0 && d[i] === h && i > p + 1 && min < h)) return min;
    if (d[i] < min) min = d[i];
  }
  return 0;
}

/** Indices of local maxima (first index of a plateau), as in `countModes`. */
function findPeaks(d: Float64Array): number[] {
  const n = d.length;
  const peaks: number[] = [];
  let i = 0;
  while (i < n) {
    let j = i;
    while (j + 1 < n && d[j + 1] === d[i]) j++;
    const leftLower = i === 0 || d[i - 1] < d[i];
    const rightLower = j === n - 1 || d[j + 1] < d[i];
    if (leftLower && rightLower && !(i === 0 && j === n - 1)) peaks.push(i);
    i = j + 1;
  }
  if (n > 0 && peaks.length === 0) peaks.push(0); // constant density: one (flat) mode
  return peaks;
}

export interface ModeAnalysis {
  /** Modes left after merging small or shallow ones. */
  modes: number;
  /** Posterior mass of the second-largest mode (0 when unimodal). */
  secondaryMass: number;
  bandwidth: number;
}

/**
 * Sample-based mode count (our method): a weighted Gaussian KDE on 256 points with bandwidth
 * `bandwidthFactor` (default 0.5) times Silverman's rule, so it resolves modes Silverman's
 * oversmoothing would merge; the density is cut into basins at its local minima, and the
 * basin whose mass is below `minMass` (default 0.1), or whose valley to a neighbour is shallow
 * (valley above `maxValleyRatio`, default 0.8, of the lower of the two peaks), is merged into
 * that neighbour, repeatedly, smallest first.
 *
 * The grid spans the draws plus 3 bandwidths on each side. The KDE is binned (linear binning on
 * the grid, or a finer mesh when the grid spacing exceeds h / 8, then a discrete convolution
 * with the kernel cut at 5 h; `kdeUniform` in density.ts), O(n + 256 x 80) instead of
 * O(n x 256); it differs from direct summation by at most `kdeErrorBound(h)`, about 2e-3 of
 * the kernel's peak phi(0) / h, which moves a flag only when a basin mass or a valley ratio
 * is within that of its threshold. `moments` (from `sampleMoments` of the same draws, e.g. with
 * a sort shared with the summary statistics) saves sorting the draws again.
 */
export function modeAnalysis(
  x: Float64Array,
  w: Float64Array,
  opts: { minMass?: number; bandwidthFactor?: number; maxValleyRatio?: number; moments?: SampleMoments } = {},
): ModeAnalysis {
  const minMass = opts.minMass ?? DEFAULT_THRESHOLDS.multimodalMinMass;
  const factor = opts.bandwidthFactor ?? 0.5;
  const maxValley = opts.maxValleyRatio ?? 0.8;
  const m = opts.moments ?? sampleMoments(x, w);
  // extent of the positive-weight, non-NaN draws (empty: lo = hi = NaN)
  const lo = m.lo;
  const hi = m.hi;
  const h = factor * kdeBandwidth(x, w, 'silverman', m);
  if (!(hi > lo) || !(h > 0)) return { modes: lo <= hi ? 1 : 0, secondaryMass: 0, bandwidth: h };
  const G = 256;
  const a = lo - 3 * h;
  const step = (hi - lo + 6 * h) / (G - 1);
  const d = kdeUniform(x, w, a, step, G, h);

  // basins: [start, end] index ranges split at local minima, each with its peak and mass
  interface Basin { peak: number; mass: number; end: number }
  const basins: Basin[] = [];
  let start = 0;
  for (let g = 1; g < G - 1; g++) {
    if (d[g] < d[g - 1] && d[g] <= d[g + 1]) {
      basins.push(basin(d, start, g));
      start = g;
    }
  }
  basins.push(basin(d, start, G - 1));
  let total = 0;
  for (const b of basins) total += b.mass;
  for (const b of basins) b.mass /= total;

  for (;;) {
    if (basins.length < 2) break;
    let worst = -1;
    let worstScore = Infinity;
    for (let k = 0; k < basins.length; k++) {
      const b = basins[k];
      const shallow = neighbourValleyRatio(d, basins, k) > maxValley;
      if (b.mass < minMass || shallow) {
        if (b.mass < worstScore) {
          worstScore = b.mass;
          worst = k;
        }
      }
    }
    if (worst < 0) break;
    // merge into the neighbour with the higher valley (the one it is least separated from)
    const left = worst > 0 ? d[basins[worst - 1].end] : -Infinity;
    const right = worst < basins.length - 1 ? d[basins[worst].end] : -Infinity;
    const into = left >= right ? worst - 1 : worst + 1;
    const keep = basins[into];
    const gone = basins[worst];
    keep.mass += gone.mass;
    if (d[gone.peak] > d[keep.peak]) keep.peak = gone.peak;
    if (into < worst) keep.end = gone.end;
    basins.splice(worst, 1);
  }
  const masses = basins.map((b) => b.mass).sort((p, q) => q - p);
  return { modes: basins.length, secondaryMass: masses[1] ?? 0, bandwidth: h };
}

function basin(d: Float64Array, start: number, end: number) {
  let peak = start;
  let mass = 0;
  for (let g = start; g <= end; g++) {
    if (d[g] > d[peak]) peak = g;
    // boundary points are shared: count them half in each basin
    mass += g === start || g === end ? 0.5 * d[g] : d[g];
  }
  return { peak, mass, end };
}

/** Highest ratio of a valley next to basin k to the lower of the two peaks it separates. */
function neighbourValleyRatio(d: Float64Array, basins: { peak: number; end: number }[], k: number): number {
  let r = 0;
  if (k > 0) r = Math.max(r, d[basins[k - 1].end] / Math.min(d[basins[k - 1].peak], d[basins[k].peak]));
  if (k < basins.length - 1) r = Math.max(r, d[basins[k].end] / Math.min(d[basins[k].peak], d[basins[k + 1].peak]));
  return r;
}

/** True when `modeAnalysis` finds two or more modes (see there for the method). */
export function isMultimodal(
  x: Float64Array,
  w: Float64Array,
  opts: { minMass?: number; bandwidthFactor?: number; maxValleyRatio?: number; moments?: SampleMoments } = {},
): boolean {
  return modeAnalysis(x, w, opts).modes >= 2;
}

/**
 * Posterior mass within `widthFraction` of the prior range of either bound: the weight of draws
 * with x <= min + f (max - min) or x >= max - f (max - min), over the total weight. With one
 * bound only, the range is taken from that bound to the farthest draw (our choice); with none
 * the mass is 0.
 */
export function priorEdgeMass(
  x: Float64Array,
  w: Float64Array,
  bounds: { min?: number; max?: number },
  widthFraction: number,
): number {
  const hasMin = bounds.min !== undefined && Number.isFinite(bounds.min);
  const hasMax = bounds.max !== undefined && Number.isFinite(bounds.max);
  if (!hasMin && !hasMax) return 0;
  let lo = hasMin ? (bounds.min as number) : Infinity;
  let hi = hasMax ? (bounds.max as number) : -Infinity;
  if (!hasMin || !hasMax) {
    for (let i = 0; i < x.length; i++) {
      if (!(w[i] > 0)) continue;
      if (!hasMin && x[i] < lo) lo = x[i];
      if (!hasMax && x[i] > hi) hi = x[i];
    }
  }
  const band = widthFraction * (hi - lo);
  let inBand = 0;
  let total = 0;
  for (let i = 0; i < x.length; i++) {
    const wi = w[i];
    if (!(wi > 0)) continue;
    total += wi;
    const xi = x[i];
    if ((hasMin && xi <= lo + band) || (hasMax && xi >= hi - band)) inBand += wi;
  }
  return total > 0 ? inBand / total : 0;
}
