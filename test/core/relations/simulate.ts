/**
 * Simulated populations with known relations for injection-and-recovery tests.
 *
 * Gaussian case: each object has a Gaussian posterior (flat interim prior) with a known
 * covariance, and the reported mean is drawn from it around the truth.
 *
 * Skewed case (for the hierarchical fit): true x ~ N(mu, tau^2) kept only above a completeness
 * cut, y = a + b (x - pivot) + N(0, s^2). Each object is "observed" through a flux-like
 * quantity F = 10^(x - pivot) + N(0, sF^2), which makes the x posterior skewed in log space,
 * and a colour-like G = y - 0.5 x + N(0, sG^2), which correlates x and y. The fitter's interim
 * prior is not flat: x ~ N(10, 1), y ~ N(1, 2^2). Posterior draws are importance samples from
 * a Gaussian proposal with weights likelihood x prior / proposal, as a real fitter might give.
 *
 * Evolving case (optional `Evolution` argument of both): the relation evolves across the
 * redshift bin, y = a + b (x - pivot) + c dz + N(0, s^2) with dz = z - zc uniform in [-h, h],
 * and the sample is flux-limited: an object of true x is seen only up to
 * dz_max(x) = -h + (x - xLo) / k, so objects with x near xLo occur only at the low-z end of the
 * bin and x and dz are positively correlated. The true-x distribution is unchanged (each x gets
 * a dz drawn uniformly on [-h, min(h, dz_max(x))]; x <= xLo is not seen), so the hierarchical
 * fit's Gaussian-x model with the cut xMin = xLo is still the right one. Without an Evolution
 * argument no extra random numbers are drawn, so the populations are those of earlier tests.
 */
import { makeRng } from '../../../src/lib/core/random.ts';

export interface Truth {
  a: number;
  b: number;
  s: number;
  mu: number;
  tau: number;
  pivot: number;
}

export interface Evolution {
  /** Coefficient of dz = z - zc. */
  c: number;
  /** Half-width of the bin in z. */
  h: number;
  /** Completeness limit in x at the low-z edge of the bin. */
  xLo: number;
  /** Rise of the limit in x per unit z: dz_max(x) = -h + (x - xLo) / k. */
  k: number;
}

/** dz for an object of true x under the flux limit of `ev` (see the file comment); x must exceed ev.xLo. */
function drawDz(x: number, ev: Evolution, u: number): number {
  const top = Math.min(ev.h, -ev.h + (x - ev.xLo) / ev.k);
  return -ev.h + (top + ev.h) * u;
}

export function gaussianPopulation(
  n: number,
  truth: Truth,
  seed: number,
  err: { sx: [number, number]; sy: [number, number]; rho: number },
  ev?: Evolution,
) {
  const rng = makeRng(seed);
  const x = new Float64Array(n), y = new Float64Array(n), cxx = new Float64Array(n), cyy = new Float64Array(n), cxy = new Float64Array(n);
  const xt = new Float64Array(n), yt = new Float64Array(n);
  const dz = ev ? new Float64Array(n) : undefined;
  for (let i = 0; i < n; i++) {
    if (ev && dz) {
      do xt[i] = truth.mu + truth.tau * rng.normal();
      while (!(xt[i] > ev.xLo));
      dz[i] = drawDz(xt[i], ev, rng.next());
      yt[i] = truth.a + truth.b * (xt[i] - truth.pivot) + ev.c * dz[i] + truth.s * rng.normal();
    } else {
      xt[i] = truth.mu + truth.tau * rng.normal();
      yt[i] = truth.a + truth.b * (xt[i] - truth.pivot) + truth.s * rng.normal();
    }
    const sx = err.sx[0] + (err.sx[1] - err.sx[0]) * rng.next();
    const sy = err.sy[0] + (err.sy[1] - err.sy[0]) * rng.next();
    const r = err.rho;
    cxx[i] = sx * sx;
    cyy[i] = sy * sy;
    cxy[i] = r * sx * sy;
    const z1 = rng.normal();
    const z2 = rng.normal();
    x[i] = xt[i] + sx * z1;
    y[i] = yt[i] + sy * (r * z1 + Math.sqrt(1 - r * r) * z2);
  }
  return { x, y, cxx, cyy, cxy, xt, yt, ...(dz ? { dz } : {}) };
}

const LN10 = Math.log(10);

export interface SkewedOptions {
  n: number;
  draws: number;
  xMin: number;
  sF: number;
  sG: number;
}

/** Skewed posteriors with a non-flat interim prior and a selection cut x > xMin on the true x. */
export function skewedPopulation(truth: Truth, seed: number, o: SkewedOptions, ev?: Evolution) {
  const rng = makeRng(seed);
  const { n, draws: K, xMin, sF, sG } = o;
  const m = n * K;
  const x = new Float64Array(m), y = new Float64Array(m), w = new Float64Array(m), logPrior = new Float64Array(m);
  const offsets = new Int32Array(n + 1);
  const xt = new Float64Array(n), yt = new Float64Array(n);
  const dz = ev ? new Float64Array(n) : undefined;
  const logw = new Float64Array(K);
  for (let i = 0; i < n; i++) {
    let xi: number;
    do xi = truth.mu + truth.tau * rng.normal();
    while (!(xi > xMin));
    let cdz = 0;
    if (ev && dz) {
      dz[i] = drawDz(xi, ev, rng.next());
      cdz = ev.c * dz[i];
    }
    const yi = truth.a + truth.b * (xi - truth.pivot) + cdz + truth.s * rng.normal();
    xt[i] = xi;
    yt[i] = yi;
    const F = Math.pow(10, xi - truth.pivot) + sF * rng.normal();
    const G = yi - 0.5 * xi + sG * rng.normal();
    // proposal: Gaussian in x around the flux-implied value, y | x around the colour-implied value
    const Fc = Math.max(F, 0.1);
    const xc = truth.pivot + Math.log10(Fc);
    const qx = Math.max(1.5 * (sF / (LN10 * Fc)), 0.05);
    const qy = 1.5 * sG;
    offsets[i] = i * K;
    let max = -Infinity;
    for (let k = 0; k < K; k++) {
      const j = i * K + k;
      const zx = rng.normal();
      const zy = rng.normal();
      const xd = xc + qx * zx;
      const yd = G + 0.5 * xd + qy * zy;
      const lq = -0.5 * (zx * zx + zy * zy) - Math.log(qx) - Math.log(qy);
      const lpi = -0.5 * (xd - 10) ** 2 - 0.5 * ((yd - 1) / 2) ** 2 - Math.log(2) - Math.log(2 * Math.PI);
      const resF = (F - Math.pow(10, xd - truth.pivot)) / sF;
      const resG = (G - yd + 0.5 * xd) / sG;
      const ll = -0.5 * (resF * resF + resG * resG);
      x[j] = xd;
      y[j] = yd;
      logPrior[j] = lpi;
      logw[k] = ll + lpi - lq;
      if (logw[k] > max) max = logw[k];
    }
    let sum = 0;
    for (let k = 0; k < K; k++) sum += Math.exp(logw[k] - max);
    for (let k = 0; k < K; k++) w[i * K + k] = Math.exp(logw[k] - max) / sum;
  }
  offsets[n] = m;
  return { x, y, w, logPrior, offsets, xt, yt, ...(dz ? { dz } : {}) };
}

/** Fraction of runs whose [lo, hi] holds the truth. */
export function coverage(intervals: { lo: number; hi: number }[], truth: number): number {
  let c = 0;
  for (const e of intervals) if (e.lo <= truth && truth <= e.hi) c++;
  return c / intervals.length;
}

export function meanAndSe(values: number[]): { mean: number; se: number; sd: number } {
  const n = values.length;
  const mean = values.reduce((s, v) => s + v, 0) / n;
  const sd = Math.sqrt(values.reduce((s, v) => s + (v - mean) ** 2, 0) / (n - 1));
  return { mean, se: sd / Math.sqrt(n), sd };
}
