/**
 * Deconvolved linear relation from each object's posterior mean and 2x2 covariance, and the
 * naive least-squares fit on point estimates shown beside it for comparison; both optionally
 * with the within-bin redshift term c dz of `linear.ts`.
 */
import { PosterityError, problem } from '../problems.ts';
import { deriveSeed, makeRng } from '../random.ts';
import { sampleEnsemble } from './ensemble.ts';
import { chainDiagnostics, summariseChain, thinChain } from './diagnostics.ts';
import { leastSquaresWithCovariate, weightedLeastSquares } from './leastsquares.ts';
import { MAX_BAND_DRAWS, type Estimate, type RelationFit } from './linear.ts';
import { cholesky } from './optimise.ts';
import { startAtMode } from './start.ts';
import { convergenceWarnings } from './warnings.ts';

export interface DeconvolvedData {
  /** Posterior means of x and y. */
  x: Float64Array;
  y: Float64Array;
  /** Posterior covariance entries Var x, Var y, Cov(x, y). */
  cxx: Float64Array;
  cyy: Float64Array;
  cxy: Float64Array;
  /**
   * Optional covariate, each object's redshift minus the bin centre, z - zc (taken as known
   * exactly). When given, the fits add c dz to the mean relation and report c; a is then the
   * relation at the bin centre.
   */
  dz?: Float64Array;
  /**
   * Optional weight of each object in [0, 1], multiplying its log-likelihood term: its
   * probability of belonging to the sample, e.g. the share of its posterior draws whose redshift
   * falls in the redshift bin (then x, y and the covariances are the moments of those draws).
   * Without it every object has weight 1 and the fit is exactly the unweighted one.
   */
  objectWeight?: Float64Array;
}

export interface DeconvolvedOptions {
  pivot: number;
  seed: number;
  /** Default 12. */
  nWalkers?: number;
  /** Default 600; the first fifth is discarded as burn-in. */
  nSteps?: number;
  /**
   * Optional: while any split R-hat exceeds `rhat`, the chain is doubled, up to maxSteps steps
   * (the sampler's `until`); the fit reports the steps it ran in its diagnostics.
   */
  converge?: { rhat: number; maxSteps: number };
}

function validate(d: DeconvolvedData): number {
  const n = d.x.length;
  for (const [name, col] of [['y', d.y], ['cxx', d.cxx], ['cyy', d.cyy], ['cxy', d.cxy]] as const) {
    if (col.length !== n) {
      throw new PosterityError(problem({ message: 'deconvolved fit: columns have different lengths', column: name, expected: String(n), got: String(col.length) }));
    }
  }
  if (n < 3) throw new PosterityError(problem({ message: 'deconvolved fit needs at least 3 objects', expected: '>= 3', got: String(n) }));
  if (d.dz) validateCovariate(d.dz, n, 'deconvolved fit');
  if (d.objectWeight) validateObjectWeight(d.objectWeight, n, 'deconvolved fit');
  for (let i = 0; i < n; i++) {
    const { x, y, cxx, cyy, cxy } = { x: d.x[i], y: d.y[i], cxx: d.cxx[i], cyy: d.cyy[i], cxy: d.cxy[i] };
    const finite = Number.isFinite(x) && Number.isFinite(y) && Number.isFinite(cxx) && Number.isFinite(cyy) && Number.isFinite(cxy);
    const psd = cxx >= 0 && cyy >= 0 && cxy * cxy <= cxx * cyy * (1 + 1e-9) + 1e-300;
    if (!finite || !psd) {
      throw new PosterityError(
        problem({
          message: 'deconvolved fit: object has a non-finite mean or a covariance that is not positive semi-definite',
          row: i + 1,
          expected: 'finite x, y and cxx >= 0, cyy >= 0, cxy^2 <= cxx cyy',
          got: `x=${x}, y=${y}, cxx=${cxx}, cyy=${cyy}, cxy=${cxy}`,
        }),
      );
    }
  }
  return n;
}

/**
 * Checks a per-object weight column: one value in [0, 1] per object, not all zero. Shared by
 * the deconvolved and mixture fits.
 */
export function validateObjectWeight(w: Float64Array, n: number, what: string): void {
  if (w.length !== n) {
    throw new PosterityError(problem({ message: `${what}: objectWeight must have one value per object`, column: 'objectWeight', expected: String(n), got: String(w.length) }));
  }
  let sum = 0;
  for (let i = 0; i < n; i++) {
    if (!(w[i] >= 0 && w[i] <= 1)) {
      throw new PosterityError(problem({ message: `${what}: object weight is not in [0, 1]`, column: 'objectWeight', row: i + 1, expected: 'a number in [0, 1]', got: String(w[i]) }));
    }
    sum += w[i];
  }
  if (!(sum > 0)) {
    throw new PosterityError(problem({ message: `${what}: every object weight is zero, so no object carries the likelihood`, column: 'objectWeight', expected: 'at least one weight > 0', got: '0' }));
  }
}

/**
 * Checks a per-object covariate column: one finite value per object, not all equal (a constant
 * dz would make c and a degenerate). Shared by the deconvolved, mixture and hierarchical fits.
 */
export function validateCovariate(dz: Float64Array, n: number, what: string): void {
  if (dz.length !== n) {
    throw new PosterityError(problem({ message: `${what}: dz must have one value per object`, column: 'dz', expected: String(n), got: String(dz.length) }));
  }
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(dz[i])) {
      throw new PosterityError(problem({ message: `${what}: dz (z - zc) is not finite`, column: 'dz', row: i + 1, got: String(dz[i]) }));
    }
  }
  let lo = Infinity, hi = -Infinity;
  for (let i = 0; i < n; i++) {
    if (dz[i] < lo) lo = dz[i];
    if (dz[i] > hi) hi = dz[i];
  }
  if (!(hi > lo)) {
    throw new PosterityError(
      problem({ message: `${what}: dz (z - zc) is the same for every object, so its coefficient is undefined; leave dz out`, column: 'dz', got: String(lo) }),
    );
  }
}

/**
 * Log-likelihood of (a, b, s[, c]) for y = a + b (x - pivot) [+ c dz] with Gaussian intrinsic
 * scatter s in y: sum_i -1/2 [ln(2 pi V_i) + (y_i - a - b (x_i - pivot) - c dz_i)^2 / V_i],
 * V_i = s^2 + Cyy_i - 2 b Cxy_i + b^2 Cxx_i, the variance of the vertical residual (Hogg, Bovy &
 * Lang 2010, arXiv:1008.4686, eq. 32, projected vertically instead of orthogonally, with
 * correlated x-y uncertainties). The covariate dz is known exactly, so it only shifts the mean;
 * `c` is ignored when the data have no dz. With `d.objectWeight` object i's term is multiplied
 * by its weight f_i (a weighted likelihood).
 */
export function deconvolvedLogLikelihood(d: DeconvolvedData, pivot: number, a: number, b: number, s: number, c = 0): number {
  let acc = 0;
  const s2 = s * s;
  const dz = d.dz;
  const fw = d.objectWeight;
  for (let i = 0; i < d.x.length; i++) {
    if (fw && fw[i] === 0) continue;
    const v = s2 + d.cyy[i] - 2 * b * d.cxy[i] + b * b * d.cxx[i];
    if (!(v > 0)) return -Infinity;
    let r = d.y[i] - a - b * (d.x[i] - pivot);
    if (dz) r -= c * dz[i];
    const t = Math.log(2 * Math.PI * v) + (r * r) / v;
    acc += fw ? fw[i] * t : t;
  }
  return -0.5 * acc;
}

/**
 * Log posterior of (b, ln s) with a marginalised analytically, plus the conditional of a.
 * Priors: flat in a; flat in the angle theta = arctan b, p(b) ∝ (1 + b^2)^(-3/2) (Hogg, Bovy &
 * Lang 2010, sect. 3); flat in s for s > 0 (improper; a flat prior in ln s would make the
 * posterior improper when the scatter is unresolved). Because the likelihood is Gaussian in a,
 * a | b, s, data ~ N(ybar + sum w r / sum w, 1 / sum w), w_i = 1/V_i, r_i = y_i - ybar - b dx_i,
 * and integrating a out leaves -1/2 [sum ln V_i + sum w r^2 - (sum w r)^2 / sum w + ln sum w].
 * The blob receives (conditional mean of a, conditional sd of a). With `d.objectWeight` every
 * sum carries the object's weight f_i (w_i = f_i / V_i, and f_i ln V_i in the first sum).
 */
export function marginalPosterior(d: DeconvolvedData, pivot: number): (theta: Float64Array, blob: Float64Array) => number {
  const n = d.x.length;
  let ybar = 0;
  for (let i = 0; i < n; i++) ybar += d.y[i];
  ybar /= n;
  const k: PlainKernel = { dx: new Float64Array(n), yc: new Float64Array(n), cxx: d.cxx, cyy: d.cyy, cxy: d.cxy, acc: new Float64Array(5) };
  for (let i = 0; i < n; i++) {
    k.dx[i] = d.x[i] - pivot;
    k.yc[i] = d.y[i] - ybar;
  }
  const acc = k.acc;
  const fw = d.objectWeight;
  return (theta, blob) => {
    const b = theta[0];
    const lnS = theta[1];
    if (!Number.isFinite(b) || !(lnS > -50 && lnS < 50)) return -Infinity;
    const s2 = Math.exp(2 * lnS);
    acc.fill(0);
    acc[4] = 1;
    // blocks in their own function, as in `marginalPosteriorWithCovariate`
    for (let lo = 0; lo < n; lo += KERNEL_BLOCK) {
      const hi = Math.min(n, lo + KERNEL_BLOCK);
      if (!(fw ? accumulatePlainWeighted(k, fw, lo, hi, s2, b) : accumulatePlain(k, lo, hi, s2, b))) return -Infinity;
    }
    const sw = acc[0], swr = acc[1], swr2 = acc[2];
    const sumLog = acc[3] + Math.log(acc[4]);
    const q = swr2 - (swr * swr) / sw;
    if (blob.length >= 2) {
      blob[0] = ybar + swr / sw;
      blob[1] = 1 / Math.sqrt(sw);
    }
    return -0.5 * (sumLog + q + Math.log(sw)) - 1.5 * Math.log1p(b * b) + lnS;
  };
}

interface PlainKernel {
  dx: Float64Array;
  yc: Float64Array;
  cxx: Float64Array;
  cyy: Float64Array;
  cxy: Float64Array;
  /** Running sums (S, Swr, Swr2, sum of ln V so far, pending product of V). */
  acc: Float64Array;
}

/** Adds objects [lo, hi) to the sums of `marginalPosterior`; false when some V <= 0. */
function accumulatePlain(k: PlainKernel, lo: number, hi: number, s2: number, b: number): boolean {
  const { dx, yc, cxx, cyy, cxy, acc } = k;
  let sw = acc[0], swr = acc[1], swr2 = acc[2], sumLog = acc[3], prod = acc[4];
  const twoB = 2 * b;
  const b2 = b * b;
  for (let i = lo; i < hi; i++) {
    const v = s2 + cyy[i] - twoB * cxy[i] + b2 * cxx[i];
    if (!(v > 0)) return false;
    const w = 1 / v;
    const r = yc[i] - b * dx[i];
    const wr = w * r;
    sw += w;
    swr += wr;
    swr2 += wr * r;
    // sum of ln V in batches: one logarithm per batch of products
    prod *= v;
    if (prod > 1e150 || prod < 1e-150) {
      sumLog += Math.log(prod);
      prod = 1;
    }
  }
  acc[0] = sw;
  acc[1] = swr;
  acc[2] = swr2;
  acc[3] = sumLog;
  acc[4] = prod;
  return true;
}

/** `accumulatePlain` with object weights f_i: w_i = f_i / V_i, and f_i ln V_i summed directly (objects of weight 0 skipped). */
function accumulatePlainWeighted(k: PlainKernel, fw: Float64Array, lo: number, hi: number, s2: number, b: number): boolean {
  const { dx, yc, cxx, cyy, cxy, acc } = k;
  let sw = acc[0], swr = acc[1], swr2 = acc[2], sumLog = acc[3];
  const twoB = 2 * b;
  const b2 = b * b;
  for (let i = lo; i < hi; i++) {
    const f = fw[i];
    if (f === 0) continue;
    const v = s2 + cyy[i] - twoB * cxy[i] + b2 * cxx[i];
    if (!(v > 0)) return false;
    const w = f / v;
    const r = yc[i] - b * dx[i];
    const wr = w * r;
    sw += w;
    swr += wr;
    swr2 += wr * r;
    sumLog += f * Math.log(v);
  }
  acc[0] = sw;
  acc[1] = swr;
  acc[2] = swr2;
  acc[3] = sumLog;
  return true;
}

/**
 * As `marginalPosterior` for y = a + b (x - pivot) + c dz: with flat priors on a and c the
 * likelihood is Gaussian in (a, c) jointly, so both are marginalised analytically (a weighted
 * linear regression of r_i = y_i - ybar - b dx_i on [1, dz_i] with weights w_i = 1/V_i; e.g.
 * Press et al. 2007, §15.4). With M = [[S, Sz], [Sz, Szz]] (S = sum w, Sz = sum w dz',
 * Szz = sum w dz'^2, dz' = dz - mean dz) and q = (sum w r, sum w dz' r), the log posterior of
 * (b, ln s) is -1/2 [sum ln V_i + sum w r^2 - q^T M^-1 q + ln det M] + priors, and
 * (a, c) | b, s ~ N(M^-1 q, M^-1) (moved back from dz' to dz = 0, the bin centre). The blob
 * receives (mean a, mean c, L11, L21, L22), the lower Cholesky factor of that 2 x 2 covariance.
 * Three more multiply-adds per object than without the covariate. With `d.objectWeight` the
 * sums carry the object weights as in `marginalPosterior`.
 */
export function marginalPosteriorWithCovariate(d: DeconvolvedData, pivot: number): (theta: Float64Array, blob: Float64Array) => number {
  const dzIn = d.dz;
  if (!dzIn) throw new PosterityError(problem({ message: 'marginalPosteriorWithCovariate needs dz' }));
  const n = d.x.length;
  let ybar = 0, zbar = 0;
  for (let i = 0; i < n; i++) {
    ybar += d.y[i];
    zbar += dzIn[i];
  }
  ybar /= n;
  zbar /= n;
  const k: CovariateKernel = {
    dx: new Float64Array(n),
    yc: new Float64Array(n),
    zc: new Float64Array(n),
    cxx: d.cxx,
    cyy: d.cyy,
    cxy: d.cxy,
    acc: new Float64Array(8),
  };
  for (let i = 0; i < n; i++) {
    k.dx[i] = d.x[i] - pivot;
    k.yc[i] = d.y[i] - ybar;
    k.zc[i] = dzIn[i] - zbar;
  }
  const acc = k.acc;
  const fw = d.objectWeight;
  return (theta, blob) => {
    const b = theta[0];
    const lnS = theta[1];
    if (!Number.isFinite(b) || !(lnS > -50 && lnS < 50)) return -Infinity;
    const s2 = Math.exp(2 * lnS);
    acc.fill(0);
    acc[7] = 1;
    // the object loop runs in blocks in its own function, which the engine then optimises as a
    // whole (a single long loop is compiled on-stack mid-loop, without feedback for the code after it)
    for (let lo = 0; lo < n; lo += KERNEL_BLOCK) {
      const hi = Math.min(n, lo + KERNEL_BLOCK);
      if (!(fw ? accumulateWithCovariateWeighted(k, fw, lo, hi, s2, b) : accumulateWithCovariate(k, lo, hi, s2, b))) return -Infinity;
    }
    const sw = acc[0], swz = acc[1], swzz = acc[2], swr = acc[3], swzr = acc[4], swr2 = acc[5];
    const sumLog = acc[6] + Math.log(acc[7]);
    const det = sw * swzz - swz * swz;
    if (!(det > 0)) return -Infinity;
    // M^-1 = [[Szz, -Sz], [-Sz, S]] / det
    const ma = (swzz * swr - swz * swzr) / det;
    const mc = (sw * swzr - swz * swr) / det;
    const q = swr2 - (ma * swr + mc * swzr);
    if (blob.length >= 5) {
      // covariance of (a at dz' = 0, c), then of (a at dz = 0) = a' - c zbar
      const saa = swzz / det, sac = -swz / det, scc = sw / det;
      const vaa = saa - 2 * zbar * sac + zbar * zbar * scc;
      const vac = sac - zbar * scc;
      const l11 = Math.sqrt(vaa);
      const l21 = vac / l11;
      blob[0] = ybar + ma - mc * zbar;
      blob[1] = mc;
      blob[2] = l11;
      blob[3] = l21;
      blob[4] = Math.sqrt(Math.max(scc - l21 * l21, 0));
    }
    return -0.5 * (sumLog + q + Math.log(det)) - 1.5 * Math.log1p(b * b) + lnS;
  };
}

/** Objects per call of the accumulation kernel. */
const KERNEL_BLOCK = 4096;

interface CovariateKernel {
  dx: Float64Array;
  yc: Float64Array;
  zc: Float64Array;
  cxx: Float64Array;
  cyy: Float64Array;
  cxy: Float64Array;
  /** Running sums (S, Sz, Szz, Swr, Swzr, Swr2, sum of ln V so far, pending product of V). */
  acc: Float64Array;
}

/** Adds objects [lo, hi) to the sums of `marginalPosteriorWithCovariate`; false when some V <= 0. */
function accumulateWithCovariate(k: CovariateKernel, lo: number, hi: number, s2: number, b: number): boolean {
  const { dx, yc, zc, cxx, cyy, cxy, acc } = k;
  let sw = acc[0], swz = acc[1], swzz = acc[2], swr = acc[3], swzr = acc[4], swr2 = acc[5], sumLog = acc[6], prod = acc[7];
  const twoB = 2 * b;
  const b2 = b * b;
  for (let i = lo; i < hi; i++) {
    const v = s2 + cyy[i] - twoB * cxy[i] + b2 * cxx[i];
    if (!(v > 0)) return false;
    const w = 1 / v;
    const r = yc[i] - b * dx[i];
    const wr = w * r;
    const wz = w * zc[i];
    sw += w;
    swz += wz;
    swzz += wz * zc[i];
    swr += wr;
    swzr += wz * r;
    swr2 += wr * r;
    // sum of ln V in batches: one logarithm per batch of products
    prod *= v;
    if (prod > 1e150 || prod < 1e-150) {
      sumLog += Math.log(prod);
      prod = 1;
    }
  }
  acc[0] = sw;
  acc[1] = swz;
  acc[2] = swzz;
  acc[3] = swr;
  acc[4] = swzr;
  acc[5] = swr2;
  acc[6] = sumLog;
  acc[7] = prod;
  return true;
}

/** `accumulateWithCovariate` with object weights f_i (w_i = f_i / V_i, f_i ln V_i summed directly; weight-0 objects skipped). */
function accumulateWithCovariateWeighted(k: CovariateKernel, fw: Float64Array, lo: number, hi: number, s2: number, b: number): boolean {
  const { dx, yc, zc, cxx, cyy, cxy, acc } = k;
  let sw = acc[0], swz = acc[1], swzz = acc[2], swr = acc[3], swzr = acc[4], swr2 = acc[5], sumLog = acc[6];
  const twoB = 2 * b;
  const b2 = b * b;
  for (let i = lo; i < hi; i++) {
    const f = fw[i];
    if (f === 0) continue;
    const v = s2 + cyy[i] - twoB * cxy[i] + b2 * cxx[i];
    if (!(v > 0)) return false;
    const w = f / v;
    const r = yc[i] - b * dx[i];
    const wr = w * r;
    const wz = w * zc[i];
    sw += w;
    swz += wz;
    swzz += wz * zc[i];
    swr += wr;
    swzr += wz * r;
    swr2 += wr * r;
    sumLog += f * Math.log(v);
  }
  acc[0] = sw;
  acc[1] = swz;
  acc[2] = swzz;
  acc[3] = swr;
  acc[4] = swzr;
  acc[5] = swr2;
  acc[6] = sumLog;
  return true;
}

/**
 * Deconvolved fit of y = a + b (x - pivot) + N(0, s^2) from posterior means and covariances
 * (likelihood `deconvolvedLogLikelihood`; priors and the analytic marginalisation of a in
 * `marginalPosterior`). (b, ln s) is sampled with the affine-invariant ensemble sampler
 * (Goodman & Weare 2010) started from the Laplace approximation at the posterior mode, and
 * each stored position gets an exact draw of a from its Gaussian conditional, so the (a, b, s)
 * draws are from the joint posterior. Caveat: the objects' true x values get no population
 * model (an implicitly flat distribution in x; this likelihood is the infinitely broad limit of
 * the Gaussian-x model of Kelly 2007, ApJ 665, 1489), so when x errors, or their correlation
 * with y errors, are not small compared with the spread of x the slope is biased by about
 * `predictedSlopeBias`, as in least squares; the fit warns when that exceeds half a posterior
 * sd, and the hierarchical fit (which models the x distribution) should be preferred. With
 * `d.dz` the mean is a + b (x - pivot) + c dz and (a, c) are both marginalised analytically
 * (`marginalPosteriorWithCovariate`); the result then has `c` and `drawsC`, and c is the
 * fourth entry of the diagnostics. With `d.objectWeight` each object's likelihood term is
 * weighted by f_i (for membership probabilities; `n` stays the number of objects given).
 */
export function fitDeconvolved(d: DeconvolvedData, opts: DeconvolvedOptions): RelationFit {
  const n = validate(d);
  if (d.dz) return fitDeconvolvedWithCovariate(d, d.dz, n, opts);
  const { pivot, seed } = opts;
  const nWalkers = opts.nWalkers ?? 12;
  const nSteps0 = opts.nSteps ?? 600;
  const logPost = marginalPosterior(d, pivot);
  const scratch = new Float64Array(2);
  const lp = (t: Float64Array): number => logPost(t, scratch);

  // start: ordinary least squares, scatter from the residual variance minus the mean projected error
  const ols = weightedLeastSquares(d.x, d.y, pivot);
  let meanErr = 0;
  for (let i = 0; i < n; i++) meanErr += d.cyy[i] - 2 * ols.b * d.cxy[i] + ols.b * ols.b * d.cxx[i];
  meanErr /= n;
  const residVar = ols.chi2 / (n - 2);
  const s0 = Math.sqrt(Math.max(residVar - meanErr, 0.01 * residVar, 1e-12));
  const seB = Math.sqrt(ols.varB) || 1e-3;
  const rng = makeRng(deriveSeed(seed, 'deconvolved', 'start'));
  const start = startAtMode(
    lp,
    Float64Array.of(ols.b, Math.log(s0)),
    Float64Array.of(3 * seB, 0.3),
    Float64Array.of(0.1 * seB, 0.1 / Math.sqrt(n)),
    nWalkers,
    rng,
  );

  const run = sampleEnsemble(logPost, start.init, { nWalkers, dim: 2, nSteps: nSteps0, seed: deriveSeed(seed, 'deconvolved', 'ensemble'), blobDim: 2, ...(opts.converge ? { until: opts.converge } : {}) });
  const nSteps = run.nSteps;
  const burn = Math.floor(nSteps / 5);
  const blobs = run.blobs as Float64Array;
  const m = nSteps * nWalkers;
  const chain = new Float64Array(m * 3);
  const rngA = makeRng(deriveSeed(seed, 'deconvolved', 'intercept'));
  for (let i = 0; i < m; i++) {
    chain[3 * i] = blobs[2 * i] + blobs[2 * i + 1] * rngA.normal();
    chain[3 * i + 1] = run.chain[2 * i];
    chain[3 * i + 2] = Math.exp(run.chain[2 * i + 1]);
  }
  const [a, b, s] = summariseChain(chain, nSteps, nWalkers, 3, burn);
  const diag = chainDiagnostics(chain, nSteps, nWalkers, 3, burn);
  const warnings = convergenceWarnings(diag, run.acceptance);
  biasWarning(d, b, warnings);
  return {
    method: 'deconvolved',
    n,
    pivot,
    a,
    b,
    s,
    diagnostics: { ...diag, acceptance: run.acceptance, nWalkers, nSteps, burn },
    draws: thinChain(chain, nSteps, nWalkers, 3, burn, MAX_BAND_DRAWS),
    warnings,
  };
}

function biasWarning(d: DeconvolvedData, b: Estimate, warnings: string[]): void {
  const bias = predictedSlopeBias(d, b.median);
  const sdB = 0.5 * (b.hi - b.lo);
  if (Math.abs(bias) > 0.5 * sdB) {
    warnings.push(
      `the deconvolved slope may be biased by about ${bias.toPrecision(2)} (${(Math.abs(bias) / sdB).toFixed(1)} posterior sd): the x errors and their correlation with the y errors are not small compared with the spread of x${d.dz ? ' at fixed dz' : ''}; prefer the hierarchical fit`,
    );
  }
}

/**
 * `fitDeconvolved` with the redshift term: (b, ln s) sampled as without it, (a, c) marginalised
 * analytically (`marginalPosteriorWithCovariate`) and drawn exactly from their joint Gaussian
 * conditional at each stored position. Started from three-column least squares.
 */
function fitDeconvolvedWithCovariate(d: DeconvolvedData, dz: Float64Array, n: number, opts: DeconvolvedOptions): RelationFit {
  if (n < 4) throw new PosterityError(problem({ message: 'deconvolved fit with dz needs at least 4 objects', expected: '>= 4', got: String(n) }));
  const { pivot, seed } = opts;
  const nWalkers = opts.nWalkers ?? 12;
  const nSteps0 = opts.nSteps ?? 600;
  const logPost = marginalPosteriorWithCovariate(d, pivot);
  const scratch = new Float64Array(0);
  const lp = (t: Float64Array): number => logPost(t, scratch);

  const ols = leastSquaresWithCovariate(d.x, d.y, pivot, dz);
  let meanErr = 0;
  for (let i = 0; i < n; i++) meanErr += d.cyy[i] - 2 * ols.b * d.cxy[i] + ols.b * ols.b * d.cxx[i];
  meanErr /= n;
  const residVar = ols.chi2 / (n - 3);
  const s0 = Math.sqrt(Math.max(residVar - meanErr, 0.01 * residVar, 1e-12));
  const seB = Math.sqrt(ols.cov[4]) || 1e-3;
  const rng = makeRng(deriveSeed(seed, 'deconvolved', 'start'));
  const start = startAtMode(
    lp,
    Float64Array.of(ols.b, Math.log(s0)),
    Float64Array.of(3 * seB, 0.3),
    Float64Array.of(0.1 * seB, 0.1 / Math.sqrt(n)),
    nWalkers,
    rng,
  );

  const run = sampleEnsemble(logPost, start.init, { nWalkers, dim: 2, nSteps: nSteps0, seed: deriveSeed(seed, 'deconvolved', 'ensemble'), blobDim: 5, ...(opts.converge ? { until: opts.converge } : {}) });
  const nSteps = run.nSteps;
  const burn = Math.floor(nSteps / 5);
  const blobs = run.blobs as Float64Array;
  const m = nSteps * nWalkers;
  // columns (a, b, s, c): c last, after the parameters of the fit without the covariate
  const chain = new Float64Array(m * 4);
  const rngA = makeRng(deriveSeed(seed, 'deconvolved', 'intercept'));
  for (let i = 0; i < m; i++) {
    const o = 5 * i;
    const z1 = rngA.normal();
    const z2 = rngA.normal();
    chain[4 * i] = blobs[o] + blobs[o + 2] * z1;
    chain[4 * i + 1] = run.chain[2 * i];
    chain[4 * i + 2] = Math.exp(run.chain[2 * i + 1]);
    chain[4 * i + 3] = blobs[o + 1] + blobs[o + 3] * z1 + blobs[o + 4] * z2;
  }
  const [a, b, s, c] = summariseChain(chain, nSteps, nWalkers, 4, burn);
  const diag = chainDiagnostics(chain, nSteps, nWalkers, 4, burn);
  const warnings = convergenceWarnings(diag, run.acceptance, ['a', 'b', 's', 'c']);
  biasWarning(d, b, warnings);
  const { draws, drawsC } = splitDraws(thinChain(chain, nSteps, nWalkers, 4, burn, MAX_BAND_DRAWS), 4, 3);
  return {
    method: 'deconvolved',
    n,
    pivot,
    a,
    b,
    s,
    c,
    diagnostics: { ...diag, acceptance: run.acceptance, nWalkers, nSteps, burn },
    draws,
    drawsC,
    warnings,
  };
}

/** Splits thinned rows of `dim` values into the (a, b, s) rows of `draws` (columns 0-2) and c (column `cCol`). */
export function splitDraws(thin: Float64Array, dim: number, cCol: number): { draws: Float64Array; drawsC: Float64Array } {
  const k = thin.length / dim;
  const draws = new Float64Array(3 * k);
  const drawsC = new Float64Array(k);
  for (let i = 0; i < k; i++) {
    draws[3 * i] = thin[dim * i];
    draws[3 * i + 1] = thin[dim * i + 1];
    draws[3 * i + 2] = thin[dim * i + 2];
    drawsC[i] = thin[dim * i + cCol];
  }
  return { draws, drawsC };
}

/**
 * Slope bias of the flat-x likelihood to first order: the vertical residual e_y - b e_x is
 * correlated with the observed x through e_x, so the slope is off by about
 * (mean Cxy - b mean Cxx) / Var(x_obs) (the errors-in-variables bias; Fuller 1987,
 * Measurement Error Models, sect. 1.1; Kelly 2007, sect. 2). With the covariate dz, Var(x_obs)
 * is the variance of x left after its least-squares regression on dz (the slope is estimated
 * from that part of x alone; Frisch-Waugh-Lovell theorem, e.g. Wooldridge, ch. 3).
 */
export function predictedSlopeBias(d: DeconvolvedData, b: number): number {
  if (d.objectWeight) return weightedSlopeBias(d, d.objectWeight, b);
  const n = d.x.length;
  let m = 0;
  for (let i = 0; i < n; i++) m += d.x[i];
  m /= n;
  let v = 0, cxx = 0, cxy = 0;
  for (let i = 0; i < n; i++) {
    v += (d.x[i] - m) ** 2;
    cxx += d.cxx[i];
    cxy += d.cxy[i];
  }
  const dz = d.dz;
  if (dz) {
    let zm = 0;
    for (let i = 0; i < n; i++) zm += dz[i];
    zm /= n;
    let szz = 0, sxz = 0;
    for (let i = 0; i < n; i++) {
      szz += (dz[i] - zm) ** 2;
      sxz += (dz[i] - zm) * (d.x[i] - m);
    }
    if (szz > 0) v -= (sxz * sxz) / szz;
  }
  v /= n - 1;
  return v > 0 ? (cxy / n - (b * cxx) / n) / v : NaN;
}

/** `predictedSlopeBias` with object weights f_i in every mean and sum (variance over sum f - 1, at least half of sum f). */
function weightedSlopeBias(d: DeconvolvedData, fw: Float64Array, b: number): number {
  const n = d.x.length;
  let sf = 0, m = 0;
  for (let i = 0; i < n; i++) {
    sf += fw[i];
    m += fw[i] * d.x[i];
  }
  m /= sf;
  let v = 0, cxx = 0, cxy = 0;
  for (let i = 0; i < n; i++) {
    v += fw[i] * (d.x[i] - m) ** 2;
    cxx += fw[i] * d.cxx[i];
    cxy += fw[i] * d.cxy[i];
  }
  const dz = d.dz;
  if (dz) {
    let zm = 0;
    for (let i = 0; i < n; i++) zm += fw[i] * dz[i];
    zm /= sf;
    let szz = 0, sxz = 0;
    for (let i = 0; i < n; i++) {
      szz += fw[i] * (dz[i] - zm) ** 2;
      sxz += fw[i] * (dz[i] - zm) * (d.x[i] - m);
    }
    if (szz > 0) v -= (sxz * sxz) / szz;
  }
  v /= Math.max(sf - 1, 0.5 * sf);
  return v > 0 ? (cxy / sf - (b * cxx) / sf) / v : NaN;
}

/**
 * Naive fit for comparison: ordinary least squares of y on x through point estimates (e.g.
 * posterior medians), ignoring every uncertainty, with the usual standard errors (Press et al.
 * 2007, Numerical Recipes 3rd ed., §15.2) and s = sqrt(RSS / (n - 2)), the total residual
 * scatter (intrinsic plus measurement), with standard error s / sqrt(2 (n - 2)). Estimates are
 * median ± one standard error; `draws` come from the Gaussian approximation (seeded). With
 * `dz` (z - zc per object) it is the three-column least squares of y on [1, x - pivot, dz]
 * (`leastSquaresWithCovariate`), n - 3 degrees of freedom, and reports c.
 */
export function fitNaive(x: Float64Array, y: Float64Array, pivot: number, seed = 0, dz?: Float64Array): RelationFit {
  if (dz) return fitNaiveWithCovariate(x, y, pivot, seed, dz);
  const fit = weightedLeastSquares(x, y, pivot);
  const n = fit.n;
  const sA = Math.sqrt(fit.varA);
  const sB = Math.sqrt(fit.varB);
  const s = Math.sqrt(fit.chi2 / (n - 2));
  const sS = s / Math.sqrt(2 * (n - 2));
  const rng = makeRng(deriveSeed(seed, 'naive'));
  const k = MAX_BAND_DRAWS;
  const draws = new Float64Array(3 * k);
  const rho = sA > 0 && sB > 0 ? fit.covAB / (sA * sB) : 0;
  const c = Math.sqrt(Math.max(0, 1 - rho * rho));
  for (let i = 0; i < k; i++) {
    const z1 = rng.normal();
    const z2 = rng.normal();
    draws[3 * i] = fit.a + sA * z1;
    draws[3 * i + 1] = fit.b + sB * (rho * z1 + c * z2);
    draws[3 * i + 2] = Math.abs(s + sS * rng.normal());
  }
  return {
    method: 'naive',
    n,
    pivot,
    a: { median: fit.a, lo: fit.a - sA, hi: fit.a + sA },
    b: { median: fit.b, lo: fit.b - sB, hi: fit.b + sB },
    s: { median: s, lo: s - sS, hi: s + sS },
    diagnostics: {},
    draws,
    warnings: ['ordinary least squares on point estimates: ignores every uncertainty, so its slope is biased when x is uncertain; shown for comparison only'],
  };
}

function fitNaiveWithCovariate(x: Float64Array, y: Float64Array, pivot: number, seed: number, dz: Float64Array): RelationFit {
  validateCovariate(dz, x.length, 'naive fit');
  const fit = leastSquaresWithCovariate(x, y, pivot, dz);
  const n = fit.n;
  const se = [Math.sqrt(fit.cov[0]), Math.sqrt(fit.cov[4]), Math.sqrt(fit.cov[8])];
  const s = Math.sqrt(fit.chi2 / (n - 3));
  const sS = s / Math.sqrt(2 * (n - 3));
  const l = cholesky(fit.cov, 3);
  const rng = makeRng(deriveSeed(seed, 'naive'));
  const k = MAX_BAND_DRAWS;
  const draws = new Float64Array(3 * k);
  const drawsC = new Float64Array(k);
  const mean = [fit.a, fit.b, fit.c];
  const z = new Float64Array(3);
  const v = new Float64Array(3);
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < 3; j++) z[j] = rng.normal();
    for (let r = 0; r < 3; r++) {
      let acc = 0;
      if (l) for (let j = 0; j <= r; j++) acc += l[3 * r + j] * z[j];
      v[r] = mean[r] + acc; // without a factor (exact fit, zero residuals) the draws sit at the estimate
    }
    draws[3 * i] = v[0];
    draws[3 * i + 1] = v[1];
    draws[3 * i + 2] = Math.abs(s + sS * rng.normal());
    drawsC[i] = v[2];
  }
  const est = (m: number, e: number): Estimate => ({ median: m, lo: m - e, hi: m + e });
  return {
    method: 'naive',
    n,
    pivot,
    a: est(fit.a, se[0]),
    b: est(fit.b, se[1]),
    s: est(s, sS),
    c: est(fit.c, se[2]),
    diagnostics: {},
    draws,
    drawsC,
    warnings: ['ordinary least squares on point estimates: ignores every uncertainty, so its slope is biased when x is uncertain; shown for comparison only'],
  };
}
