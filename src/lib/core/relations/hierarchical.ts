/**
 * Hierarchical (population) fit of y = a + b (x - pivot) + N(0, s^2) from each object's
 * posterior draws, reweighted by the population model over the interim prior the draws were
 * made under (Hogg, Myers & Bovy 2010, ApJ 725, 2166); optionally with the within-bin redshift
 * term c dz of `linear.ts`.
 */
import { PosterityError, problem } from '../problems.ts';
import { deriveSeed, makeRng } from '../random.ts';
import { normalCdf } from '../stats/special.ts';
import { chainDiagnostics, summariseChain, thinChain } from './diagnostics.ts';
import { objectMoments, validateDraws, type ObjectDraws } from './draws.ts';
import { sampleEnsemble } from './ensemble.ts';
import { validateCovariate } from './deconvolved.ts';
import { leastSquaresWithCovariate, weightedLeastSquares } from './leastsquares.ts';
import { MAX_BAND_DRAWS, type Estimate, type RelationFit } from './linear.ts';
import { nelderMead } from './optimise.ts';
import { startAtMode } from './start.ts';
import { convergenceWarnings } from './warnings.ts';

export interface HierarchicalData extends ObjectDraws {
  /** Natural log of the interim prior density the fitter used, at each draw. */
  logPrior: Float64Array;
  /**
   * Optional covariate, one value per object (not per draw): its redshift minus the bin centre,
   * z - zc, taken as known. When given, the mean relation gets + c dz and the fit reports c.
   */
  dz?: Float64Array;
}

export interface HierarchicalOptions {
  pivot: number;
  seed: number;
  /** Default 16 (>= 10 for the 5 parameters, >= 12 for the 6 with dz). */
  nWalkers?: number;
  /** Default 300; the first fifth is discarded as burn-in. */
  nSteps?: number;
  /** Completeness cut on the true x: objects enter the sample only if x > xMin. */
  selection?: { xMin?: number };
  /**
   * Objects with more draws are sub-sampled to this many by systematic resampling in
   * proportion to weight (default 64; fewer biases s upwards, see the tests), which keeps each L_i estimate unbiased.
   */
  maxDraws?: number;
}

export interface HierarchicalFit extends RelationFit {
  /** Per object: Kish ESS of the terms w_ik f(x_ik, y_ik | theta) / pi_ik at the posterior median, over all its draws above the cut. */
  effectiveDraws: Float64Array;
  /** Gaussian model of the true-x distribution (before selection). */
  xModel: { mu: Estimate; tau: Estimate };
  /** Draws per object used by the likelihood after sub-sampling and removal of draws below the cut. */
  drawsUsed: { maxDraws: number; objectsSubsampled: number; total: number };
}

const LOG_2PI = Math.log(2 * Math.PI);

function needPrior(detail: string, row?: number): never {
  throw new PosterityError(
    problem({
      message: `the hierarchical fit needs the interim prior: ${detail}`,
      column: 'log_prior',
      ...(row !== undefined ? { row } : {}),
      expected: 'the finite log interim-prior density of every draw',
    }),
  );
}

/** Flat per-draw arrays the likelihood loops over: (X, Y, C = ln w - ln pi) interleaved. */
interface Terms {
  t: Float64Array;
  offsets: Int32Array;
  /** Per kept object: dz (zeros without the covariate). */
  dz: Float64Array;
  n: number;
  maxK: number;
  objectsSubsampled: number;
  dropped: number;
}

function buildTerms(d: HierarchicalData, n: number, xMin: number, maxDraws: number, seed: number): Terms {
  const rng = makeRng(deriveSeed(seed, 'hierarchical', 'subsample'));
  const xs: number[] = [];
  const offsets = [0];
  const dzKept: number[] = [];
  let objectsSubsampled = 0;
  let dropped = 0;
  let maxK = 0;
  const keepX: number[] = [];
  const keepY: number[] = [];
  const keepC: number[] = [];
  for (let i = 0; i < n; i++) {
    const lo = d.offsets[i];
    const hi = d.offsets[i + 1];
    keepX.length = keepY.length = keepC.length = 0;
    let sw = 0;
    for (let j = lo; j < hi; j++) if (d.x[j] > xMin) sw += d.w[j];
    if (!(sw > 0)) {
      dropped++;
      continue;
    }
    let count = 0;
    for (let j = lo; j < hi; j++) if (d.x[j] > xMin && d.w[j] > 0) count++;
    if (count > maxDraws) {
      // systematic resampling: M equally spaced points (u + k) / M on the cumulative weight
      objectsSubsampled++;
      const u = rng.next();
      let cum = 0;
      let k = 0;
      const inv = 1 / maxDraws;
      for (let j = lo; j < hi && k < maxDraws; j++) {
        if (!(d.x[j] > xMin)) continue;
        cum += d.w[j] / sw;
        while (k < maxDraws && (u + k) * inv < cum) {
          keepX.push(d.x[j]);
          keepY.push(d.y[j]);
          keepC.push(-Math.log(maxDraws) - d.logPrior[j]);
          k++;
        }
      }
      // rounding in the cumulative sum can leave the last point unplaced
      for (let j = hi - 1; k < maxDraws && j >= lo; j--) {
        if (d.x[j] > xMin && d.w[j] > 0) {
          keepX.push(d.x[j]);
          keepY.push(d.y[j]);
          keepC.push(-Math.log(maxDraws) - d.logPrior[j]);
          k++;
        }
      }
    } else {
      for (let j = lo; j < hi; j++) {
        if (!(d.x[j] > xMin) || !(d.w[j] > 0)) continue;
        keepX.push(d.x[j]);
        keepY.push(d.y[j]);
        keepC.push(Math.log(d.w[j] / sw) - d.logPrior[j]);
      }
    }
    for (let k = 0; k < keepX.length; k++) xs.push(keepX[k], keepY[k], keepC[k]);
    offsets.push(offsets[offsets.length - 1] + keepX.length);
    dzKept.push(d.dz ? d.dz[i] : 0);
    maxK = Math.max(maxK, keepX.length);
  }
  return { t: Float64Array.from(xs), offsets: Int32Array.from(offsets), dz: Float64Array.from(dzKept), n: offsets.length - 1, maxK, objectsSubsampled, dropped };
}

/**
 * Log posterior of theta = (a, b, ln s, mu, ln tau[, c]). Population model: true x ~ N(mu, tau^2)
 * truncated to x > xMin when a selection is given, y | x ~ N(a + b (x - pivot) [+ c dz_i], s^2)
 * (a single Gaussian in x, the K = 1 case of Kelly 2007, ApJ 665, 1489, fitted jointly; the
 * redshift term is a linear covariate of the mean, one known dz per object, so it costs one
 * multiply-add per object, not per draw, and the x model is unchanged). Each object's
 * marginal likelihood is the importance-sampling estimate of Hogg, Myers & Bovy (2010, eq. 9)
 * L_i = sum_k w_ik f(x_ik, y_ik | theta) / pi_ik, with weights normalised per object, summed
 * by log-sum-exp. The selection renormalises f by P(x > xMin) = Phi((mu - xMin) / tau).
 * Priors: flat in a, c, mu; flat in the angle arctan b, p(b) ∝ (1 + b^2)^(-3/2) (Hogg, Bovy &
 * Lang 2010, sect. 3); flat in s > 0 and tau > 0 (hence the + ln s + ln tau Jacobians).
 */
function makeLogPosterior(terms: Terms, pivot: number, xMin: number, hasC: boolean): (theta: Float64Array) => number {
  const { t, offsets, n, dz } = terms;
  const v = new Float64Array(terms.maxK);
  const hasCut = xMin > -Infinity;
  return (theta) => {
    const a = theta[0], b = theta[1], lnS = theta[2], mu = theta[3], lnTau = theta[4];
    const c = hasC ? theta[5] : 0;
    if (!(lnS > -30 && lnS < 30 && lnTau > -30 && lnTau < 30) || !Number.isFinite(a) || !Number.isFinite(b) || !Number.isFinite(mu) || !Number.isFinite(c)) return -Infinity;
    const is2 = Math.exp(-2 * lnS);
    const it2 = Math.exp(-2 * lnTau);
    const ap = a - b * pivot; // a + b (x - pivot) = ap + b x
    let total = 0;
    for (let i = 0; i < n; i++) {
      const lo = offsets[i];
      const k = offsets[i + 1] - lo;
      const api = hasC ? ap + c * dz[i] : ap;
      let m = -Infinity;
      for (let j = 0, o = 3 * lo; j < k; j++, o += 3) {
        const x = t[o];
        const r = t[o + 1] - api - b * x;
        const u = x - mu;
        const val = t[o + 2] - 0.5 * (r * r * is2 + u * u * it2);
        v[j] = val;
        if (val > m) m = val;
      }
      let acc = 0;
      for (let j = 0; j < k; j++) acc += Math.exp(v[j] - m);
      total += m + Math.log(acc);
    }
    let logSel = 0;
    if (hasCut) {
      const p = normalCdf((mu - xMin) * Math.exp(-lnTau));
      if (!(p > 0)) return -Infinity;
      logSel = Math.log(p);
    }
    total += n * (-LOG_2PI - lnS - lnTau - logSel);
    return total - 1.5 * Math.log1p(b * b) + lnS + lnTau;
  };
}

/**
 * Hierarchical fit (see `makeLogPosterior` for the model, priors and selection). The walkers
 * of the affine-invariant ensemble sampler (Goodman & Weare 2010) start from the Laplace
 * approximation at the posterior mode, found from a start at least squares on the posterior
 * means. Objects with no draw above the selection cut are left out (with a warning). Refuses,
 * with a PosterityError, draws without a finite interim prior.
 */
interface Setup {
  terms: Terms;
  /** 5, or 6 with the covariate (c last). */
  dim: number;
  logPost: (theta: Float64Array) => number;
  x0: Float64Array;
  step: Float64Array;
  h: Float64Array;
  n0: number;
  xMin: number;
  pivot: number;
  maxDraws: number;
  warnings: string[];
}

function setup(objs: HierarchicalData, opts: HierarchicalOptions): Setup {
  if (!objs.logPrior) needPrior('no log_prior column was given');
  const n0 = validateDraws(objs, 'hierarchical fit');
  if (objs.logPrior.length !== objs.x.length) needPrior(`log_prior has ${objs.logPrior.length} values for ${objs.x.length} draws`);
  for (let j = 0; j < objs.logPrior.length; j++) {
    if (!Number.isFinite(objs.logPrior[j])) {
      let i = 0;
      while (objs.offsets[i + 1] <= j) i++;
      needPrior(`draw ${j - objs.offsets[i] + 1} of object ${i + 1} has log_prior = ${objs.logPrior[j]}`, i + 1);
    }
  }
  const { pivot, seed } = opts;
  const maxDraws = opts.maxDraws ?? 64;
  const xMin = opts.selection?.xMin ?? -Infinity;
  const warnings: string[] = [];
  const dz = objs.dz;
  if (dz) validateCovariate(dz, n0, 'hierarchical fit');
  const terms = buildTerms(objs, n0, xMin, maxDraws, seed);
  if (terms.dropped > 0) {
    warnings.push(`${terms.dropped} object(s) have no posterior draw above the selection cut x > ${xMin} and were left out`);
  }
  if (terms.n < 5) {
    throw new PosterityError(problem({ message: 'the hierarchical fit needs at least 5 objects with draws above the selection cut', expected: '>= 5', got: String(terms.n) }));
  }
  const logPost = makeLogPosterior(terms, pivot, xMin, dz !== undefined);

  // start: least squares on posterior means (with dz, the three-column fit), scatter and x spread from the moments
  const mom = objectMoments(objs);
  const plane = dz ? leastSquaresWithCovariate(mom.x, mom.y, pivot, dz) : undefined;
  const ols = plane
    ? { a: plane.a, b: plane.b, chi2: (plane.chi2 * (n0 - 2)) / (n0 - 3), varA: plane.cov[0], varB: plane.cov[4] }
    : weightedLeastSquares(mom.x, mom.y, pivot);
  let meanProj = 0, meanCxx = 0, mx = 0;
  for (let i = 0; i < n0; i++) {
    meanProj += mom.cyy[i] - 2 * ols.b * mom.cxy[i] + ols.b * ols.b * mom.cxx[i];
    meanCxx += mom.cxx[i];
    mx += mom.x[i];
  }
  meanProj /= n0;
  meanCxx /= n0;
  mx /= n0;
  let vx = 0;
  for (let i = 0; i < n0; i++) vx += (mom.x[i] - mx) ** 2;
  vx /= n0 - 1;
  const residVar = ols.chi2 / (n0 - 2);
  const s0 = Math.sqrt(Math.max(residVar - meanProj, 0.05 * residVar, 1e-12));
  const tau0 = Math.sqrt(Math.max(vx - meanCxx, 0.05 * vx, 1e-12));
  const seB = Math.sqrt(ols.varB) || 1e-3;
  const seA = Math.sqrt(ols.varA) || 1e-3;
  const rn = Math.sqrt(terms.n);
  const x0 = [ols.a, ols.b, Math.log(s0), mx, Math.log(tau0)];
  const step = [2 * seA, 3 * seB, 0.3, tau0 / rn, 0.2];
  const h = [0.1 * seA, 0.1 * seB, 0.2 / rn, (0.1 * tau0) / rn, 0.2 / rn];
  if (plane) {
    const seC = Math.sqrt(plane.cov[8]) || 1e-3;
    x0.push(plane.c);
    step.push(2 * seC);
    h.push(0.1 * seC);
  }
  return {
    terms,
    dim: x0.length,
    logPost,
    x0: Float64Array.from(x0),
    step: Float64Array.from(step),
    h: Float64Array.from(h),
    n0,
    xMin,
    pivot,
    maxDraws,
    warnings,
  };
}

/**
 * The log posterior the hierarchical fit explores (`makeLogPosterior`), in the sampling
 * coordinates (a, b, ln s, mu, ln tau[, c]) after validation, sub-sampling and the selection cut
 * of `opts`; for tests and checks. `dim` is 6 when the data have dz.
 */
export function hierarchicalLogPosterior(objs: HierarchicalData, opts: HierarchicalOptions): { logPost: (theta: Float64Array) => number; dim: number } {
  const st = setup(objs, opts);
  return { logPost: st.logPost, dim: st.dim };
}

/** Objects above which the mode search starts on an evenly strided subset of about this many. */
const PRESOLVE_OBJECTS = 2000;

/**
 * Start for the mode search: for large samples, Nelder–Mead on an evenly strided subset of
 * the objects first (cheap), then a short search on all of them from there.
 */
function presolve(st: Setup): { x0: Float64Array; step: Float64Array; maxEval: number } {
  const { terms } = st;
  if (terms.n <= 2 * PRESOLVE_OBJECTS) return { x0: st.x0, step: st.step, maxEval: 600 };
  const stride = Math.ceil(terms.n / PRESOLVE_OBJECTS);
  const offsets = [0];
  const parts: Float64Array[] = [];
  const dz: number[] = [];
  let maxK = 0;
  for (let i = 0; i < terms.n; i += stride) {
    const lo = terms.offsets[i];
    const hi = terms.offsets[i + 1];
    parts.push(terms.t.subarray(3 * lo, 3 * hi));
    dz.push(terms.dz[i]);
    offsets.push(offsets[offsets.length - 1] + (hi - lo));
    maxK = Math.max(maxK, hi - lo);
  }
  const t = new Float64Array(3 * offsets[offsets.length - 1]);
  let o = 0;
  for (const p of parts) {
    t.set(p, o);
    o += p.length;
  }
  const sub: Terms = { t, offsets: Int32Array.from(offsets), dz: Float64Array.from(dz), n: offsets.length - 1, maxK, objectsSubsampled: 0, dropped: 0 };
  const lp = makeLogPosterior(sub, st.pivot, st.xMin, st.dim === 6);
  const min = nelderMead((x) => -lp(x), st.x0, st.step, { maxEval: 600, fTol: 1e-6 });
  // the full-sample posterior is narrower by about sqrt(n / n_sub)
  const shrink = Math.sqrt(sub.n / terms.n);
  const step = st.step.map((v) => v * shrink * 2);
  return { x0: min.x, step, maxEval: 200 };
}

/** Laplace approximation of the hierarchical posterior: mode and standard deviations of (a, b, s, mu, tau[, c]). */
export interface HierarchicalLaplace {
  /**
   * Posterior mode in (a, b, s, mu, tau), found in the sampling coordinates (a, b, ln s, mu,
   * ln tau); with dz a sixth entry, c.
   */
  mode: Float64Array;
  /** Standard deviations from H^-1 at the mode; for s and tau by the delta method (s sd(ln s)); NaN if H is not positive definite. */
  sd: Float64Array;
  n: number;
}

/**
 * Mode and Laplace (inverse-Hessian) uncertainties of the same log posterior the hierarchical
 * fit samples (Laplace's method; MacKay 2003, ch. 27). Much cheaper than sampling; used as the
 * sampler's starting point and for large simulation studies.
 */
export function fitHierarchicalLaplace(objs: HierarchicalData, opts: HierarchicalOptions): HierarchicalLaplace {
  const st = setup(objs, opts);
  const rng = makeRng(deriveSeed(opts.seed, 'hierarchical', 'start'));
  const pre = presolve(st);
  const start = startAtMode(st.logPost, pre.x0, pre.step, st.h, 10, rng, { maxEval: pre.maxEval });
  const m = start.mode;
  const dim = st.dim;
  const mode = Float64Array.from(m);
  mode[2] = Math.exp(m[2]);
  mode[4] = Math.exp(m[4]);
  const sd = new Float64Array(dim).fill(NaN);
  if (start.cov) {
    for (let d = 0; d < dim; d++) sd[d] = Math.sqrt(start.cov[d * dim + d]);
    sd[2] *= mode[2];
    sd[4] *= mode[4];
  }
  return { mode, sd, n: st.terms.n };
}

/**
 * Hierarchical fit (see `makeLogPosterior` for the model, priors and selection). The walkers
 * of the affine-invariant ensemble sampler (Goodman & Weare 2010) start from the Laplace
 * approximation at the posterior mode, found from a start at least squares on the posterior
 * means. Objects with no draw above the selection cut are left out (with a warning). Refuses,
 * with a PosterityError, draws without a finite interim prior. With `objs.dz` the redshift
 * coefficient c is sampled as a sixth parameter (reported as `c` and `drawsC`, last in the
 * diagnostics). Caveat: the x model is one Gaussian for the whole bin, not a function of z;
 * when the x distribution changes strongly across the bin (e.g. a redshift-dependent
 * completeness limit) it is only an approximate prior for the true x, which matters little
 * when the x errors are small compared with the spread of x.
 */
export function fitHierarchical(objs: HierarchicalData, opts: HierarchicalOptions): HierarchicalFit {
  const st = setup(objs, opts);
  const { terms, logPost, n0, xMin, maxDraws, warnings } = st;
  const { pivot, seed } = opts;
  const nWalkers = opts.nWalkers ?? 16;
  const nSteps = opts.nSteps ?? 300;
  const burn = Math.floor(nSteps / 5);
  const pre = presolve(st);
  const start = startAtMode(logPost, pre.x0, pre.step, st.h, nWalkers, makeRng(deriveSeed(seed, 'hierarchical', 'start')), { maxEval: pre.maxEval });
  const dim = st.dim;
  const run = sampleEnsemble(logPost, start.init, { nWalkers, dim, nSteps, seed: deriveSeed(seed, 'hierarchical', 'ensemble') });
  const m = nSteps * nWalkers;
  const chain = new Float64Array(m * dim);
  for (let i = 0; i < m; i++) {
    const o = dim * i;
    chain[o] = run.chain[o];
    chain[o + 1] = run.chain[o + 1];
    chain[o + 2] = Math.exp(run.chain[o + 2]);
    chain[o + 3] = run.chain[o + 3];
    chain[o + 4] = Math.exp(run.chain[o + 4]);
    if (dim === 6) chain[o + 5] = run.chain[o + 5];
  }
  const [a, b, s, mu, tau, c] = summariseChain(chain, nSteps, nWalkers, dim, burn);
  const diag = chainDiagnostics(chain, nSteps, nWalkers, dim, burn);
  warnings.push(...convergenceWarnings(diag, run.acceptance, ['a', 'b', 's', 'mu', 'tau', 'c']));

  const thin = thinChain(chain, nSteps, nWalkers, dim, burn, MAX_BAND_DRAWS);
  const k = thin.length / dim;
  const draws = new Float64Array(3 * k);
  const drawsC = dim === 6 ? new Float64Array(k) : undefined;
  for (let i = 0; i < k; i++) {
    draws.set(thin.subarray(dim * i, dim * i + 3), 3 * i);
    if (drawsC) drawsC[i] = thin[dim * i + 5];
  }

  const effectiveDraws = termEss(objs, n0, xMin, pivot, a.median, b.median, s.median, mu.median, tau.median, c?.median ?? 0);
  let poor = 0;
  for (let i = 0; i < n0; i++) if (effectiveDraws[i] < 5) poor++;
  if (poor > 0.1 * n0) {
    warnings.push(
      `${poor} of ${n0} objects have fewer than 5 effective draws under the population model: their marginal likelihoods are noisy importance-sampling estimates (more or better-spread draws would help)`,
    );
  }
  return {
    method: 'hierarchical',
    n: terms.n,
    pivot,
    a,
    b,
    s,
    ...(drawsC ? { c, drawsC } : {}),
    diagnostics: { ...diag, acceptance: run.acceptance, nWalkers, nSteps, burn },
    draws,
    warnings,
    effectiveDraws,
    xModel: { mu, tau },
    drawsUsed: { maxDraws, objectsSubsampled: terms.objectsSubsampled, total: terms.t.length / 3 },
  };
}

/** Kish ESS (sum t)^2 / sum t^2 of t_k = w_k f(x_k, y_k | theta) / pi_k over each object's draws (all draws, before sub-sampling; 0 when none is above the cut). */
function termEss(d: HierarchicalData, n: number, xMin: number, pivot: number, a0: number, b: number, s: number, mu: number, tau: number, c: number): Float64Array {
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const lo = d.offsets[i];
    const hi = d.offsets[i + 1];
    const a = d.dz ? a0 + c * d.dz[i] : a0;
    let m = -Infinity;
    const v = new Float64Array(hi - lo);
    for (let j = lo; j < hi; j++) {
      if (!(d.x[j] > xMin) || !(d.w[j] > 0)) {
        v[j - lo] = -Infinity;
        continue;
      }
      const r = (d.y[j] - a - b * (d.x[j] - pivot)) / s;
      const u = (d.x[j] - mu) / tau;
      const val = Math.log(d.w[j]) - d.logPrior[j] - 0.5 * (r * r + u * u);
      v[j - lo] = val;
      if (val > m) m = val;
    }
    if (m === -Infinity) continue;
    let s1 = 0, s2 = 0;
    for (let j = 0; j < v.length; j++) {
      const e = Math.exp(v[j] - m);
      s1 += e;
      s2 += e * e;
    }
    out[i] = (s1 * s1) / s2;
  }
  return out;
}
