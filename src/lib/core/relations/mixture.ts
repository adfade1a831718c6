/**
 * Two-component mixture for a sequence: a linear relation with intrinsic scatter plus a
 * broad component, giving each galaxy a probability of belonging to the sequence instead of
 * a hard cut (in the spirit of the outlier mixture of Hogg, Bovy & Lang 2010, sect. 5).
 */
import { PosterityError, problem } from '../problems.ts';
import { deriveSeed, makeRng } from '../random.ts';
import { chainDiagnostics, summariseChain, thinChain } from './diagnostics.ts';
import { splitDraws, validateCovariate, validateObjectWeight, type DeconvolvedData } from './deconvolved.ts';
import { sampleEnsemble } from './ensemble.ts';
import { leastSquaresWithCovariate, weightedLeastSquares } from './leastsquares.ts';
import { MAX_BAND_DRAWS, type Estimate, type RelationFit } from './linear.ts';
import { startAtMode } from './start.ts';
import { convergenceWarnings } from './warnings.ts';

export interface MixtureOptions {
  pivot: number;
  seed: number;
  /** Default 16 (>= 12 for the 6 parameters, >= 14 for the 7 with dz). */
  nWalkers?: number;
  /** Default 400; the first fifth is burn-in. */
  nSteps?: number;
  /**
   * Optional: while any split R-hat exceeds `rhat`, the chain is doubled, up to maxSteps steps
   * (the sampler's `until`); the fit reports the steps it ran in its diagnostics.
   */
  converge?: { rhat: number; maxSteps: number };
}

export interface MixtureFit extends RelationFit {
  /** Each galaxy's posterior probability of belonging to the sequence, averaged over posterior draws. */
  membership: Float64Array;
  /** The broad component: mean and sd of y, and the sequence's share of the population. */
  broad: { mean: Estimate; sd: Estimate };
  sequenceFraction: Estimate;
}

const HALF_LOG_2PI = 0.5 * Math.log(2 * Math.PI);

/** ln of the sequence and broad-component densities of object i, without the mixing weights (cdz: c dz_i, 0 without the redshift term). */
function componentLogs(d: DeconvolvedData, pivot: number, i: number, a: number, b: number, s2: number, mo: number, so2: number, cdz: number): [number, number] {
  const vs = s2 + d.cyy[i] - 2 * b * d.cxy[i] + b * b * d.cxx[i];
  const r = d.y[i] - a - b * (d.x[i] - pivot) - cdz;
  const vo = so2 + d.cyy[i];
  const ro = d.y[i] - mo;
  return [-0.5 * ((r * r) / vs + Math.log(vs)) - HALF_LOG_2PI, -0.5 * ((ro * ro) / vo + Math.log(vo)) - HALF_LOG_2PI];
}

/**
 * Log posterior of theta = (a, b, ln s, mu_o, ln s_o, logit f[, c]). Likelihood per galaxy:
 * f N(y; a + b (x - pivot) [+ c dz], s^2 + Cyy - 2 b Cxy + b^2 Cxx) + (1 - f) N(y; mu_o, s_o^2 + Cyy)
 * (sequence as in the deconvolved fit, Hogg, Bovy & Lang 2010 eq. 32 projected vertically;
 * broad component Gaussian in y, their sect. 5 mixture). Only the sequence gets the redshift
 * term (a linear covariate, c last in theta). Priors: flat in a and c; flat in the angle of b;
 * flat in s; uniform f on (0, 1); for the broad component, mu_o uniform over the range of the
 * galaxies' y and s_o uniform between s (s_o > s labels the broad component) and that range.
 * The bounds keep the posterior proper where the broad component holds few galaxies: with f
 * near 1 the data say little about mu_o and s_o, and flat priors without bounds would let the
 * walkers drift without end (a broad component wider than all the data, or centred outside
 * them, describes no galaxy).
 * With `d.objectWeight` each galaxy's log mixture likelihood is multiplied by its weight (its
 * probability of belonging to the sample, e.g. to the redshift bin).
 */
/** Range of y over the galaxies that count (weight > 0): the support of the broad component's mean and width. */
function yRange(d: DeconvolvedData): { yLo: number; yHi: number } {
  let yLo = Infinity, yHi = -Infinity;
  for (let i = 0; i < d.y.length; i++) {
    if (d.objectWeight && !(d.objectWeight[i] > 0)) continue;
    if (d.y[i] < yLo) yLo = d.y[i];
    if (d.y[i] > yHi) yHi = d.y[i];
  }
  return yHi > yLo ? { yLo, yHi } : { yLo: yLo - 1, yHi: yHi + 1 };
}

function makeLogPosterior(d: DeconvolvedData, pivot: number): (t: Float64Array) => number {
  const n = d.x.length;
  const hasC = d.dz !== undefined;
  // without the covariate: dz = 0 and c = 0, so r is unchanged to the last bit
  const dz = d.dz ?? new Float64Array(n);
  const fw = d.objectWeight;
  let sumW = n;
  if (fw) {
    sumW = 0;
    for (let i = 0; i < n; i++) sumW += fw[i];
  }
  const { yLo, yHi } = yRange(d);
  const lnRange = Math.log(yHi - yLo);
  return (t) => {
    const a = t[0], b = t[1], lnS = t[2], mo = t[3], lnSo = t[4], lf = t[5];
    const c = hasC ? t[6] : 0;
    if (hasC && !Number.isFinite(c)) return -Infinity;
    if (!(lnS > -30 && lnSo > lnS && lnSo < lnRange && Math.abs(lf) < 30 && mo >= yLo && mo <= yHi) || !Number.isFinite(a) || !Number.isFinite(b)) return -Infinity;
    const f = 1 / (1 + Math.exp(-lf));
    const lnF = Math.log(f);
    const ln1F = Math.log1p(-f);
    const s2 = Math.exp(2 * lnS);
    const so2 = Math.exp(2 * lnSo);
    const { x, y, cxx, cyy, cxy } = d;
    let total = 0;
    for (let i = 0; i < n; i++) {
      if (fw && fw[i] === 0) continue;
      const vs = s2 + cyy[i] - 2 * b * cxy[i] + b * b * cxx[i];
      const r = y[i] - a - b * (x[i] - pivot) - c * dz[i];
      const vo = so2 + cyy[i];
      const ro = y[i] - mo;
      const u = lnF - 0.5 * ((r * r) / vs + Math.log(vs));
      const v = ln1F - 0.5 * ((ro * ro) / vo + Math.log(vo));
      const li = u > v ? u + Math.log1p(Math.exp(v - u)) : v + Math.log1p(Math.exp(u - v));
      total += fw ? fw[i] * li : li;
    }
    return total - sumW * HALF_LOG_2PI - 1.5 * Math.log1p(b * b) + lnS + lnSo + lnF + ln1F;
  };
}

/**
 * Fits the sequence-plus-broad-component mixture (see `makeLogPosterior`) to all galaxies'
 * posterior means and covariances with the affine-invariant ensemble sampler (Goodman &
 * Weare 2010), started from the Laplace approximation at the mode. `membership` is each
 * galaxy's f p_seq / (f p_seq + (1 - f) p_broad), averaged over up to 400 posterior draws.
 * With `d.dz` the sequence mean gets the redshift term c dz (reported as `c`, `drawsC`; c
 * is the 7th sampled parameter, last in the diagnostics). With `d.objectWeight` (values in
 * [0, 1]) each galaxy's likelihood term is weighted; `membership` is still each galaxy's
 * probability of belonging to the sequence given that it is in the sample.
 */
export function fitMixture(d: DeconvolvedData, opts: MixtureOptions): MixtureFit {
  const n = d.x.length;
  if (n < 10) throw new PosterityError(problem({ message: 'the mixture fit needs at least 10 objects', expected: '>= 10', got: String(n) }));
  for (const col of [d.y, d.cxx, d.cyy, d.cxy]) {
    if (col.length !== n) throw new PosterityError(problem({ message: 'mixture fit: columns have different lengths', expected: String(n), got: String(col.length) }));
  }
  for (let i = 0; i < n; i++) {
    if (![d.x[i], d.y[i], d.cxx[i], d.cyy[i], d.cxy[i]].every(Number.isFinite) || d.cxx[i] < 0 || d.cyy[i] < 0) {
      throw new PosterityError(problem({ message: 'mixture fit: object has a non-finite mean or an invalid covariance', row: i + 1 }));
    }
  }
  const dz = d.dz;
  if (dz) validateCovariate(dz, n, 'mixture fit');
  if (d.objectWeight) validateObjectWeight(d.objectWeight, n, 'mixture fit');
  const dim = dz ? 7 : 6;
  const { pivot, seed } = opts;
  const nWalkers = opts.nWalkers ?? 16;
  const nSteps0 = opts.nSteps ?? 400;
  const logPost = makeLogPosterior(d, pivot);

  // start: least squares for the sequence, the broad component at the y mean with twice the spread
  const plane = dz ? leastSquaresWithCovariate(d.x, d.y, pivot, dz) : undefined;
  const ols = plane
    ? { a: plane.a, b: plane.b, chi2: (plane.chi2 * (n - 2)) / (n - 3), varA: plane.cov[0], varB: plane.cov[4] }
    : weightedLeastSquares(d.x, d.y, pivot);
  let my = 0;
  for (let i = 0; i < n; i++) my += d.y[i];
  my /= n;
  let vy = 0;
  for (let i = 0; i < n; i++) vy += (d.y[i] - my) ** 2;
  vy /= n - 1;
  const s0 = Math.sqrt(ols.chi2 / (n - 2)) * 0.7;
  // inside the broad component's support: s < s_o < range of y (s0 <= 0.7 sd(y) <= 0.35 range)
  const range = yRange(d);
  const so0 = Math.min(Math.max(Math.sqrt(vy), 2 * s0), 0.6 * (range.yHi - range.yLo));
  const seA = Math.sqrt(ols.varA) || 1e-3;
  const seB = Math.sqrt(ols.varB) || 1e-3;
  const rn = Math.sqrt(n);
  const x0 = [ols.a, ols.b, Math.log(s0), my, Math.log(so0), Math.log(0.7 / 0.3)];
  const step = [2 * seA, 3 * seB, 0.3, so0 / 3, 0.3, 0.5];
  const h = [0.1 * seA, 0.1 * seB, 0.2 / rn, (0.2 * so0) / rn, 0.2 / rn, 0.5 / rn];
  if (plane) {
    const seC = Math.sqrt(plane.cov[8]) || 1e-3;
    x0.push(plane.c);
    step.push(2 * seC);
    h.push(0.1 * seC);
  }
  const start = startAtMode(
    logPost,
    Float64Array.from(x0),
    Float64Array.from(step),
    Float64Array.from(h),
    nWalkers,
    makeRng(deriveSeed(seed, 'mixture', 'start')),
    { maxEval: dz ? 1400 : 1200 },
  );
  const run = sampleEnsemble(logPost, start.init, { nWalkers, dim, nSteps: nSteps0, seed: deriveSeed(seed, 'mixture', 'ensemble'), ...(opts.converge ? { until: opts.converge } : {}) });
  const nSteps = run.nSteps;
  const burn = Math.floor(nSteps / 5);
  const m = nSteps * nWalkers;
  const chain = new Float64Array(m * dim);
  for (let i = 0; i < m; i++) {
    const o = dim * i;
    chain[o] = run.chain[o];
    chain[o + 1] = run.chain[o + 1];
    chain[o + 2] = Math.exp(run.chain[o + 2]);
    chain[o + 3] = run.chain[o + 3];
    chain[o + 4] = Math.exp(run.chain[o + 4]);
    chain[o + 5] = 1 / (1 + Math.exp(-run.chain[o + 5]));
    if (dz) chain[o + 6] = run.chain[o + 6];
  }
  const [a, b, s, mo, so, f, c] = summariseChain(chain, nSteps, nWalkers, dim, burn);
  const diag = chainDiagnostics(chain, nSteps, nWalkers, dim, burn);
  const names = ['a', 'b', 's', 'broad mean', 'broad sd', 'sequence fraction'];
  if (dz) names.push('c');
  const warnings = convergenceWarnings(diag, run.acceptance, names);

  const thin = thinChain(chain, nSteps, nWalkers, dim, burn, MAX_BAND_DRAWS);
  const k = thin.length / dim;
  const split = dz ? splitDraws(thin, dim, 6) : undefined;
  const draws = split ? split.draws : new Float64Array(3 * k);
  const membership = new Float64Array(n);
  for (let r = 0; r < k; r++) {
    const t = thin.subarray(dim * r, dim * r + dim);
    if (!split) draws.set(t.subarray(0, 3), 3 * r);
    const lnF = Math.log(t[5]);
    const ln1F = Math.log1p(-t[5]);
    for (let i = 0; i < n; i++) {
      const [ls, lo] = componentLogs(d, pivot, i, t[0], t[1], t[2] * t[2], t[3], t[4] * t[4], dz ? t[6] * dz[i] : 0);
      membership[i] += 1 / (1 + Math.exp(ln1F + lo - lnF - ls));
    }
  }
  for (let i = 0; i < n; i++) membership[i] /= k;
  return {
    method: 'mixture',
    n,
    pivot,
    a,
    b,
    s,
    ...(dz ? { c, drawsC: split!.drawsC } : {}),
    diagnostics: { ...diag, acceptance: run.acceptance, nWalkers, nSteps, burn },
    draws,
    warnings,
    membership,
    broad: { mean: mo, sd: so },
    sequenceFraction: f,
  };
}
