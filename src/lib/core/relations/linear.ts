/**
 * The linear population relation y = a + b (x - pivot) + N(0, s^2) shared by every fitting
 * method, optionally with a within-bin redshift term, y = a + b (x - pivot) + c dz + N(0, s^2)
 * with dz = z - zc each object's (known) redshift minus the bin centre, its result type, and
 * credible bands of the mean relation from posterior draws.
 *
 * Why the covariate: in a flux-limited sample the relation evolves across a redshift bin and
 * low-x objects are seen only at its low-z end, so x and z are correlated within the bin and a
 * fit without the z term absorbs the evolution into the slope (the omitted-variable bias of
 * least squares, b + c Cov(x, dz) / Var(x); e.g. Wooldridge, Introductory Econometrics: A
 * Modern Approach, ch. 3) and gives an intercept that is the relation at the sample's mean
 * redshift, not at the bin centre. Adding c dz as a linear term (common practice for a nuisance
 * covariate) makes a the relation at (x = pivot, z = zc) and decouples b from the mass-redshift
 * correlation of the sample.
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
  /** Intrinsic (Gaussian) scatter in y at fixed x (and fixed dz when the z term is fitted). */
  s: Estimate;
  /**
   * Coefficient of the within-bin redshift term c (z - zc), present only when the fit was given
   * `dz`; then `a` is the relation at x = pivot and z = zc (the bin centre).
   */
  c?: Estimate;
  /**
   * Sampler diagnostics; `tau`, `ess` and `rhat` are per parameter in the order a, b, s, then
   * the method's own extra parameters, then c when it was fitted.
   */
  diagnostics: RelationDiagnostics;
  /** Thinned posterior draws of (a, b, s), row-major, at most 400 x 3, for credible bands. */
  draws: Float64Array;
  /** With the z term: c of each row of `draws` (same draw, same order), length draws.length / 3. */
  drawsC?: Float64Array;
  warnings: string[];
}

/** Largest number of (a, b, s) draws kept in a `RelationFit`. */
export const MAX_BAND_DRAWS = 400;

/**
 * Pointwise credible band of the mean relation a + b (x - pivot): at each x, the `levels`
 * quantiles (default 16%, 50%, 84%) over the fit's posterior draws, by the rule of
 * `weightedQuantiles`. The band does not include the intrinsic scatter s. For a fit with the
 * redshift term the band is at the bin centre (dz = 0) unless `dz` is given, when it is
 * a + b (x - pivot) + c dz over the joint draws (`drawsC`).
 */
export function credibleBand(
  fit: RelationFit,
  xs: Float64Array,
  levels: readonly [number, number, number] | readonly number[] = [0.16, 0.5, 0.84],
  dz = 0,
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
  if (dz !== 0 && !(fit.drawsC && fit.drawsC.length === m)) {
    throw new PosterityError(
      problem({ message: `a credible band away from the bin centre needs a fit with the redshift term; the ${fit.method} fit has none`, expected: 'dz = 0', got: String(dz) }),
    );
  }
  const cz = dz !== 0 ? fit.drawsC : undefined;
  const lo = new Float64Array(xs.length);
  const mid = new Float64Array(xs.length);
  const hi = new Float64Array(xs.length);
  const vals = new Float64Array(m);
  const ones = new Float64Array(m).fill(1);
  for (let i = 0; i < xs.length; i++) {
    const dx = xs[i] - fit.pivot;
    for (let k = 0; k < m; k++) vals[k] = fit.draws[3 * k] + fit.draws[3 * k + 1] * dx;
    if (cz) for (let k = 0; k < m; k++) vals[k] += cz[k] * dz;
    const q = weightedQuantiles(vals, ones, levels);
    lo[i] = q[0];
    mid[i] = q[1];
    hi[i] = q[2];
  }
  return { x: Float64Array.from(xs), lo, mid, hi };
}

/** Line value a + b (x - pivot), plus c dz for the redshift term when given. */
export function relationMean(a: number, b: number, pivot: number, x: number, c = 0, dz = 0): number {
  return a + b * (x - pivot) + c * dz;
}
