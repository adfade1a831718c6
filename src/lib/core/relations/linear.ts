/**
 * The linear population relation y = a + b (x - pivot) + N(0, s^2) shared by every fitting
 * method, its result type, and credible bands of the mean relation from posterior draws.
 */
import { PosterityError, problem } from '../problems.ts';
import { weightedQuantiles } from '../stats/summary.ts';

/** A posterior summary: median and the 16th and 84th percentiles. */
export interface Estimate {
  median: number;
  lo: number;
  hi: number;
}

export type RelationMethod = 'deconvolved' | 'hierarchical' | 'naive' | 'mixture';

export interface RelationDiagnostics {
  tau?: number[];
  ess?: number[];
  rhat?: number[];
  acceptance?: number;
  nWalkers?: number;
  nSteps?: number;
  burn?: number;
}

/** One fitted relation in one redshift bin. */
export interface RelationFit {
  method: RelationMethod;
  /** Number of objects fitted. */
  n: number;
  pivot: number;
  /** Intercept at x = pivot. */
  a: Estimate;
  /** Slope. */
  b: Estimate;
  /** Intrinsic (Gaussian) scatter in y at fixed x. */
  s: Estimate;
  diagnostics: RelationDiagnostics;
  /** Thinned posterior draws of (a, b, s), row-major, at most 400 x 3, for credible bands. */
  draws: Float64Array;
  warnings: string[];
}

/** Largest number of (a, b, s) draws kept in a `RelationFit`. */
export const MAX_BAND_DRAWS = 400;

/**
 * Pointwise credible band of the mean relation a + b (x - pivot): at each x, the `levels`
 * quantiles (default 16%, 50%, 84%) over the fit's posterior draws, by the rule of
 * `weightedQuantiles`. The band does not include the intrinsic scatter s.
 */
export function credibleBand(
  fit: RelationFit,
  xs: Float64Array,
  levels: readonly [number, number, number] | readonly number[] = [0.16, 0.5, 0.84],
): { x: Float64Array; lo: Float64Array; mid: Float64Array; hi: Float64Array } {
  if (levels.length !== 3 || !(levels[0] <= levels[1] && levels[1] <= levels[2])) {
    throw new PosterityError(
      problem({ message: 'credible band needs three increasing levels', expected: 'e.g. [0.16, 0.5, 0.84]', got: JSON.stringify(levels) }),
    );
  }
  const m = Math.floor(fit.draws.length / 3);
  if (m === 0) {
    throw new PosterityError(problem({ message: `the ${fit.method} fit has no posterior draws for a credible band` }));
  }
  const lo = new Float64Array(xs.length);
  const mid = new Float64Array(xs.length);
  const hi = new Float64Array(xs.length);
  const vals = new Float64Array(m);
  const ones = new Float64Array(m).fill(1);
  for (let i = 0; i < xs.length; i++) {
    const dx = xs[i] - fit.pivot;
    for (let k = 0; k < m; k++) vals[k] = fit.draws[3 * k] + fit.draws[3 * k + 1] * dx;
    const q = weightedQuantiles(vals, ones, levels);
    lo[i] = q[0];
    mid[i] = q[1];
    hi[i] = q[2];
  }
  return { x: Float64Array.from(xs), lo, mid, hi };
}

/** Line value a + b (x - pivot). */
export function relationMean(a: number, b: number, pivot: number, x: number): number {
  return a + b * (x - pivot);
}
