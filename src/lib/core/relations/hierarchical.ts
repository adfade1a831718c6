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
import { createLikelihoodSum, paddedDraws, threadsFor, type CompactTerms, type LikelihoodSum, type Precision } from './hierarchical-sum.ts';

export interface HierarchicalData extends ObjectDraws {
  /** Natural log of the interim prior density the fitter used, at each draw. */
  logPrior: Float64Array;
  /**
   * Optional covariate, one value per object (not per draw): its redshift minus the bin centre,
   * z - zc, taken as known. When given, the mean relation gets + c dz and the fit reports c.
   */
  dz?: Float64Array;
  /**
   * Optional weight f_i in [0, 1] per object (not per draw): the probability that the object
   * belongs to the bin being fitted, when its redshift is itself a sampled parameter. Object i's
   * log marginal likelihood, with its share of the normalisation terms (1 / (2 pi s tau) and
   * the selection 1 / P(x > xMin)), is multiplied by f_i: a weighted ("fractional")
   * likelihood. This is an approximation: the exact treatment would model bin membership
   * jointly with the relation (a mixture over bins), and the weighted likelihood's posterior
   * width is only right when the weights are close to 0 or 1. Objects with f_i = 0 are left
   * out exactly as if they were not given; without the array every f_i is 1.
   */
  objectWeight?: Float64Array;
}

export interface HierarchicalOptions {
  pivot: number;
  seed: number;
  /** Default 16 (>= 10 for the 5 parameters, >= 12 for the 6 with dz). */
  nWalkers?: number;
  /** Default 300; the first fifth is discarded as burn-in. */
  nSteps?: number;
  /**
   * Optional: while any split R-hat exceeds `rhat`, the chain is doubled, up to maxSteps steps
   * (the sampler's `until`); the fit reports the steps it ran in its diagnostics.
   */
  converge?: { rhat: number; maxSteps: number };
  /** Completeness cut on the true x: objects enter the sample only if x > xMin. */
  selection?: { xMin?: number };
  /**
   * Objects with more draws are sub-sampled to this many by systematic resampling in
   * proportion to weight (default 64; fewer biases s upwards, see the tests), which keeps each L_i estimate unbiased.
   */
  maxDraws?: number;
  /**
   * Precision of the likelihood terms while sampling (see `Precision` in hierarchical-sum.ts):
   * 'single' (default) or 'double'. The mode search, the Laplace approximation that starts the
   * walkers, `fitHierarchicalLaplace` and `hierarchicalLogPosterior` (unless told otherwise)
   * use 'double'. In 'single' each object's ln L_i is within about 1e-7 x (1 + |its largest
   * exponent|) of the double-precision value, far below the sampling noise of the fit.
   */
  precision?: Precision;
  /**
   * Threads that evaluate the likelihood (this one plus worker threads sharing the draws through
   * one shared memory). Default: one per core (os.availableParallelism()) when there are at
   * least 2^18 draws, else 1; `hierarchicalLogPosterior` defaults to 1. The result does not
   * depend on it: objects are summed in fixed chunks added in a fixed order.
   */
  threads?: number;
}

export interface HierarchicalFit extends RelationFit {
  /** Per object: Kish ESS of the terms w_ik f(x_ik, y_ik | theta) / pi_ik at the posterior median, over all its draws above the cut. */
  effectiveDraws: Float64Array;
  /** Gaussian model of the true-x distribution (before selection). */
  xModel: { mu: Estimate; tau: Estimate };
  /** Draws per object used by the likelihood after sub-sampling and removal of draws below the cut. */
  drawsUsed: { maxDraws: number; objectsSubsampled: number; total: number };
  /** Precision of the likelihood terms while sampling (the mode search is always in double). */
  precision: Precision;
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

/**
 * The likelihood's arrays (`CompactTerms`: per draw (x - xc, y - yc, C - Cmax) in float32 with
 * C = ln w - ln pi, per object the float64 centre and Cmax, each object padded to DRAW_ALIGN
 * draws) plus bookkeeping. Float32 is enough for the stored per-draw values because they are
 * relative to each object's own centre and maximum: the rounding (relative 2^-24 = 6e-8) is
 * 6e-8 of the object's own spread of draws in x and y, and at most about 6e-8 |C - Cmax| in a
 * log weight (1e-6 for a draw e^-16 below the best one), a fixed perturbation of the draws far
 * below their spread, not noise in theta.
 */
interface Terms extends CompactTerms {
  objectsSubsampled: number;
  dropped: number;
  total: number;
}

function buildTerms(d: HierarchicalData, n: number, xMin: number, maxDraws: number, seed: number, weight: Float64Array | undefined): Terms {
  const rng = makeRng(deriveSeed(seed, 'hierarchical', 'subsample'));
  // first pass: draws kept per object (all draws above the cut with w > 0, or maxDraws of them)
  let total = 0;
  let padded = 0;
  let nKept = 0;
  for (let i = 0; i < n; i++) {
    let sw = 0;
    let count = 0;
    for (let j = d.offsets[i]; j < d.offsets[i + 1]; j++) {
      if (d.x[j] > xMin) {
        sw += d.w[j];
        if (d.w[j] > 0) count++;
      }
    }
    if (!(sw > 0)) continue;
    nKept++;
    total += Math.min(count, maxDraws);
    padded += paddedDraws(Math.min(count, maxDraws));
  }
  const dx = new Float32Array(padded), dy = new Float32Array(padded), cc = new Float32Array(padded).fill(-Infinity);
  const offsets = new Int32Array(nKept + 1);
  const cmax = new Float64Array(nKept), xc = new Float64Array(nKept), yc = new Float64Array(nKept), dz = new Float64Array(nKept);
  const f = weight ? new Float64Array(nKept) : undefined;
  let objectsSubsampled = 0;
  let dropped = 0;
  let kept = 0;
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
    const K = keepX.length;
    let mx = 0, my = 0, mc = -Infinity;
    for (let k = 0; k < K; k++) {
      mx += keepX[k];
      my += keepY[k];
      if (keepC[k] > mc) mc = keepC[k];
    }
    mx /= K;
    my /= K;
    const o = offsets[kept];
    for (let k = 0; k < K; k++) {
      dx[o + k] = keepX[k] - mx;
      dy[o + k] = keepY[k] - my;
      cc[o + k] = keepC[k] - mc;
    }
    xc[kept] = mx;
    yc[kept] = my;
    cmax[kept] = mc;
    dz[kept] = d.dz ? d.dz[i] : 0;
    if (f) f[kept] = weight![i];
    kept++;
    offsets[kept] = o + paddedDraws(K);
  }
  return { dx, dy, c: cc, offsets, cmax, xc, yc, dz, ...(f ? { f } : {}), n: kept, objectsSubsampled, dropped, total };
}

/** sum_i f_i (n without weights): the weight of the per-object normalisation terms. */
function weightSum(terms: CompactTerms): number {
  if (!terms.f) return terms.n;
  let s = 0;
  for (let i = 0; i < terms.n; i++) s += terms.f[i];
  return s;
}

/**
 * Log posterior of theta = (a, b, ln s, mu, ln tau[, c]). Population model: true x ~ N(mu, tau^2)
 * truncated to x > xMin when a selection is given, y | x ~ N(a + b (x - pivot) [+ c dz_i], s^2)
 * (a single Gaussian in x, the K = 1 case of Kelly 2007, ApJ 665, 1489, fitted jointly; the
 * redshift term is a linear covariate of the mean, one known dz per object, so it costs one
 * multiply-add per object, not per draw, and the x model is unchanged). Each object's
 * marginal likelihood is the importance-sampling estimate of Hogg, Myers & Bovy (2010, eq. 9)
 * L_i = sum_k w_ik f(x_ik, y_ik | theta) / pi_ik, with weights normalised per object, summed
 * by log-sum-exp (`hierarchical-sum.ts`: one pass, shifted by each object's largest ln w - ln pi,
 * in fixed chunks of objects, optionally on several threads). With `objectWeight` each object's
 * term, normalisation included, is multiplied by f_i. The selection renormalises f by
 * P(x > xMin) = Phi((mu - xMin) / tau).
 * Priors: flat in a, c, mu; flat in the angle arctan b, p(b) ∝ (1 + b^2)^(-3/2) (Hogg, Bovy &
 * Lang 2010, sect. 3); flat in s > 0 and tau > 0 (hence the + ln s + ln tau Jacobians).
 */
interface LogPosterior {
  /** At one theta. */
  one: (theta: Float64Array) => number;
  /** At m thetas (thetas[k dim ..]) into out[k]: bit for bit what `one` gives for each. */
  batch: (thetas: Float64Array, m: number, out: Float64Array) => void;
}

function makeLogPosterior(terms: CompactTerms, lik: LikelihoodSum, pivot: number, xMin: number, hasC: boolean, precision: Precision): LogPosterior {
  const hasCut = xMin > -Infinity;
  const nEff = weightSum(terms);
  const dim = hasC ? 6 : 5;
  /** Writes the likelihood's parameters of theta to P[o .. o + 5]; returns the rest of the log posterior, or -Infinity outside the support. */
  const prepare = (theta: Float64Array, t0: number, P: Float64Array, o: number): number => {
    const a = theta[t0], b = theta[t0 + 1], lnS = theta[t0 + 2], mu = theta[t0 + 3], lnTau = theta[t0 + 4];
    const c = hasC ? theta[t0 + 5] : 0;
    if (!(lnS > -30 && lnS < 30 && lnTau > -30 && lnTau < 30) || !Number.isFinite(a) || !Number.isFinite(b) || !Number.isFinite(mu) || !Number.isFinite(c)) return -Infinity;
    let logSel = 0;
    if (hasCut) {
      const p = normalCdf((mu - xMin) * Math.exp(-lnTau));
      if (!(p > 0)) return -Infinity;
      logSel = Math.log(p);
    }
    P[o] = a - b * pivot;
    P[o + 1] = b;
    P[o + 2] = 0.5 * Math.exp(-2 * lnS);
    P[o + 3] = 0.5 * Math.exp(-2 * lnTau);
    P[o + 4] = mu;
    P[o + 5] = c;
    return nEff * (-LOG_2PI - lnS - lnTau - logSel) - 1.5 * Math.log1p(b * b) + lnS + lnTau;
  };
  const P1 = new Float64Array(6);
  let Pm = new Float64Array(0), rest = new Float64Array(0), sums = new Float64Array(0);
  let index = new Int32Array(0);
  return {
    one(theta) {
      const r = prepare(theta, 0, P1, 0);
      if (r === -Infinity) return r;
      return lik.sum(P1[0], P1[1], P1[2], P1[3], P1[4], P1[5], precision) + r;
    },
    batch(thetas, m, out) {
      if (Pm.length < 6 * m) {
        Pm = new Float64Array(6 * m);
        rest = new Float64Array(m);
        sums = new Float64Array(m);
        index = new Int32Array(m);
      }
      let k = 0;
      for (let q = 0; q < m; q++) {
        const r = prepare(thetas, q * dim, Pm, 6 * k);
        out[q] = -Infinity;
        if (r === -Infinity) continue;
        rest[k] = r;
        index[k++] = q;
      }
      if (k === 0) return;
      lik.sumBatch(Pm, k, sums, precision);
      for (let q = 0; q < k; q++) out[index[q]] = sums[q] + rest[q];
    },
  };
}

interface Setup {
  terms: Terms;
  /** 5, or 6 with the covariate (c last). */
  dim: number;
  /** The log posterior in double precision (mode search, Laplace approximation). */
  logPost: (theta: Float64Array) => number;
  /** The log posterior at the sampling precision, one theta or a batch. */
  sampling: LogPosterior;
  precision: Precision;
  /** Releases the worker threads of the likelihood. */
  close: () => void;
  whenClosed: () => Promise<void>;
  threads: number;
  x0: Float64Array;
  step: Float64Array;
  h: Float64Array;
  /** Objects given. */
  n0: number;
  /** Per object given: whether it takes part (objectWeight > 0), or undefined (all do). */
  used: Uint8Array | undefined;
  xMin: number;
  pivot: number;
  maxDraws: number;
  warnings: string[];
}

function badWeight(message: string, row: number | undefined, got: string): never {
  throw new PosterityError(
    problem({ message: `hierarchical fit: ${message}`, column: 'objectWeight', ...(row !== undefined ? { row } : {}), expected: 'one probability in [0, 1] per object', got }),
  );
}

/** The objects with used[i] = 1, as a new data set (draws, interim prior and dz). */
function selectObjects(d: HierarchicalData, used: Uint8Array): HierarchicalData {
  const n = d.offsets.length - 1;
  let m = 0, k = 0;
  for (let i = 0; i < n; i++) if (used[i]) {
    m += d.offsets[i + 1] - d.offsets[i];
    k++;
  }
  const x = new Float64Array(m), y = new Float64Array(m), w = new Float64Array(m), logPrior = new Float64Array(m);
  const offsets = new Int32Array(k + 1);
  const dz = d.dz ? new Float64Array(k) : undefined;
  let o = 0, r = 0;
  for (let i = 0; i < n; i++) {
    if (!used[i]) continue;
    const lo = d.offsets[i], hi = d.offsets[i + 1];
    x.set(d.x.subarray(lo, hi), o);
    y.set(d.y.subarray(lo, hi), o);
    w.set(d.w.subarray(lo, hi), o);
    logPrior.set(d.logPrior.subarray(lo, hi), o);
    o += hi - lo;
    if (dz) dz[r] = d.dz![i];
    offsets[++r] = o;
  }
  return { x, y, w, logPrior, offsets, ...(dz ? { dz } : {}) };
}

function setup(objs: HierarchicalData, opts: HierarchicalOptions, defaultThreads?: number, defaultPrecision: Precision = 'single'): Setup {
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
  if (objs.dz) validateCovariate(objs.dz, n0, 'hierarchical fit');
  // per-object weights: objects with f = 0 leave the data set before anything else sees it
  let data = objs;
  let used: Uint8Array | undefined;
  let weight: Float64Array | undefined;
  const fw = objs.objectWeight;
  if (fw) {
    if (fw.length !== n0) badWeight('objectWeight must have one value per object', undefined, `${fw.length} values for ${n0} objects`);
    for (let i = 0; i < n0; i++) {
      if (!(fw[i] >= 0 && fw[i] <= 1)) badWeight(`objectWeight of object ${i + 1} is not a probability in [0, 1]`, i + 1, String(fw[i]));
    }
    used = Uint8Array.from(fw, (v) => (v > 0 ? 1 : 0));
    let nUsed = 0;
    for (let i = 0; i < n0; i++) nUsed += used[i];
    if (nUsed < n0) {
      data = selectObjects(objs, used);
      if (data.dz && nUsed > 0) validateCovariate(data.dz, nUsed, 'hierarchical fit (objects with objectWeight > 0)');
    }
    weight = new Float64Array(nUsed);
    for (let i = 0, r = 0; i < n0; i++) if (used[i]) weight[r++] = fw[i];
  }
  const nUsed = data.offsets.length - 1;
  const dz = data.dz;
  const terms = buildTerms(data, nUsed, xMin, maxDraws, seed, weight);
  if (terms.dropped > 0) {
    warnings.push(`${terms.dropped} object(s) have no posterior draw above the selection cut x > ${xMin} and were left out`);
  }
  if (terms.n < 5) {
    throw new PosterityError(problem({ message: 'the hierarchical fit needs at least 5 objects with draws above the selection cut', expected: '>= 5', got: String(terms.n) }));
  }

  // start: least squares on posterior means (with dz, the three-column fit), scatter and x spread from the moments
  const mom = objectMoments(data);
  const plane = dz ? leastSquaresWithCovariate(mom.x, mom.y, pivot, dz) : undefined;
  const ols = plane
    ? { a: plane.a, b: plane.b, chi2: (plane.chi2 * (nUsed - 2)) / (nUsed - 3), varA: plane.cov[0], varB: plane.cov[4] }
    : weightedLeastSquares(mom.x, mom.y, pivot);
  let meanProj = 0, meanCxx = 0, mx = 0;
  for (let i = 0; i < nUsed; i++) {
    meanProj += mom.cyy[i] - 2 * ols.b * mom.cxy[i] + ols.b * ols.b * mom.cxx[i];
    meanCxx += mom.cxx[i];
    mx += mom.x[i];
  }
  meanProj /= nUsed;
  meanCxx /= nUsed;
  mx /= nUsed;
  let vx = 0;
  for (let i = 0; i < nUsed; i++) vx += (mom.x[i] - mx) ** 2;
  vx /= nUsed - 1;
  const residVar = ols.chi2 / (nUsed - 2);
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
  const lik = createLikelihoodSum(terms, threadsFor(opts.threads ?? defaultThreads, terms));
  const precision = opts.precision ?? defaultPrecision;
  if (precision !== 'single' && precision !== 'double') {
    throw new PosterityError(problem({ message: 'hierarchical fit: precision must be single or double', expected: "'single' or 'double'", got: String(precision) }));
  }
  const double = makeLogPosterior(terms, lik, pivot, xMin, dz !== undefined, 'double');
  const logPost = double.one;
  const sampling = precision === 'double' ? double : makeLogPosterior(terms, lik, pivot, xMin, dz !== undefined, precision);
  return {
    terms,
    dim: x0.length,
    logPost,
    sampling,
    precision,
    close: () => lik.close(),
    whenClosed: () => lik.whenClosed(),
    threads: lik.threads,
    x0: Float64Array.from(x0),
    step: Float64Array.from(step),
    h: Float64Array.from(h),
    n0,
    used,
    xMin,
    pivot,
    maxDraws,
    warnings,
  };
}

/**
 * The log posterior the hierarchical fit explores (`makeLogPosterior`), in the sampling
 * coordinates (a, b, ln s, mu, ln tau[, c]) after validation, sub-sampling, the selection cut
 * and the object weights of `opts`; for tests and checks. `dim` is 6 when the data have dz.
 * One thread unless `opts.threads` says otherwise; with more, call `close()` when done (the
 * workers never keep the process alive, but hold the draws until closed). In double precision
 * unless `opts.precision` says otherwise; `logPostBatch` evaluates several thetas in one pass.
 */
export function hierarchicalLogPosterior(
  objs: HierarchicalData,
  opts: HierarchicalOptions,
): {
  logPost: (theta: Float64Array) => number;
  logPostBatch: (thetas: Float64Array, m: number, out: Float64Array) => void;
  dim: number;
  threads: number;
  close: () => void;
  whenClosed: () => Promise<void>;
} {
  const st = setup(objs, opts, 1, 'double');
  return { logPost: st.sampling.one, logPostBatch: st.sampling.batch, dim: st.dim, threads: st.threads, close: st.close, whenClosed: st.whenClosed };
}

/** Objects above which the mode search starts on an evenly strided subset of about this many. */
const PRESOLVE_OBJECTS = 2000;

/**
 * Start for the mode search: for large samples, Nelder–Mead on an evenly strided subset of
 * the objects first (cheap), then a short search on all of them from there.
 */
function presolve(st: Setup, threads: number | undefined): { x0: Float64Array; step: Float64Array; maxEval: number } {
  const { terms } = st;
  if (terms.n <= 2 * PRESOLVE_OBJECTS) return { x0: st.x0, step: st.step, maxEval: 600 };
  const stride = Math.ceil(terms.n / PRESOLVE_OBJECTS);
  const nSub = Math.ceil(terms.n / stride);
  let total = 0;
  for (let i = 0; i < terms.n; i += stride) total += terms.offsets[i + 1] - terms.offsets[i];
  const dx = new Float32Array(total), dy = new Float32Array(total), c = new Float32Array(total);
  const offsets = new Int32Array(nSub + 1);
  const cmax = new Float64Array(nSub), xc = new Float64Array(nSub), yc = new Float64Array(nSub), dz = new Float64Array(nSub);
  const f = terms.f ? new Float64Array(nSub) : undefined;
  for (let i = 0, r = 0; i < terms.n; i += stride, r++) {
    const lo = terms.offsets[i];
    const hi = terms.offsets[i + 1];
    dx.set(terms.dx.subarray(lo, hi), offsets[r]);
    dy.set(terms.dy.subarray(lo, hi), offsets[r]);
    c.set(terms.c.subarray(lo, hi), offsets[r]);
    offsets[r + 1] = offsets[r] + (hi - lo);
    cmax[r] = terms.cmax[i];
    xc[r] = terms.xc[i];
    yc[r] = terms.yc[i];
    dz[r] = terms.dz[i];
    if (f) f[r] = terms.f![i];
  }
  const sub: CompactTerms = { dx, dy, c, offsets, cmax, xc, yc, dz, ...(f ? { f } : {}), n: nSub };
  const lik = createLikelihoodSum(sub, threadsFor(threads, sub));
  try {
    const lp = makeLogPosterior(sub, lik, st.pivot, st.xMin, st.dim === 6, 'double').one;
    const min = nelderMead((x) => -lp(x), st.x0, st.step, { maxEval: 600, fTol: 1e-6 });
    // the full-sample posterior is narrower by about sqrt(n / n_sub)
    const shrink = Math.sqrt(nSub / terms.n);
    const step = st.step.map((v) => v * shrink * 2);
    return { x0: min.x, step, maxEval: 200 };
  } finally {
    lik.close();
  }
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
  try {
    const rng = makeRng(deriveSeed(opts.seed, 'hierarchical', 'start'));
    const pre = presolve(st, opts.threads);
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
  } finally {
    st.close();
  }
}

/**
 * Hierarchical fit (see `makeLogPosterior` for the model, priors and selection). The walkers
 * of the affine-invariant ensemble sampler (Goodman & Weare 2010) start from the Laplace
 * approximation at the posterior mode, found from a start at least squares on the posterior
 * means. Objects with no draw above the selection cut are left out (with a warning). Refuses,
 * with a PosterityError, draws without a finite interim prior. With `objs.dz` the redshift
 * coefficient c is sampled as a sixth parameter (reported as `c` and `drawsC`, last in the
 * diagnostics). With `objs.objectWeight` objects of weight 0 are left out and the others enter
 * with their weights; `n` counts the objects that entered, `effectiveDraws` has one entry per
 * object given. Caveat: the x model is one Gaussian for the whole bin, not a function of z;
 * when the x distribution changes strongly across the bin (e.g. a redshift-dependent
 * completeness limit) it is only an approximate prior for the true x, which matters little
 * when the x errors are small compared with the spread of x.
 */
export function fitHierarchical(objs: HierarchicalData, opts: HierarchicalOptions): HierarchicalFit {
  const st = setup(objs, opts);
  try {
    return sampleHierarchical(objs, opts, st);
  } finally {
    st.close();
  }
}

function sampleHierarchical(objs: HierarchicalData, opts: HierarchicalOptions, st: Setup): HierarchicalFit {
  const { terms, logPost, n0, used, xMin, maxDraws, warnings } = st;
  const { pivot, seed } = opts;
  const nWalkers = opts.nWalkers ?? 16;
  const nSteps0 = opts.nSteps ?? 300;
  const pre = presolve(st, opts.threads);
  const start = startAtMode(logPost, pre.x0, pre.step, st.h, nWalkers, makeRng(deriveSeed(seed, 'hierarchical', 'start')), { maxEval: pre.maxEval });
  const dim = st.dim;
  const { sampling } = st;
  const run = sampleEnsemble(sampling.one, start.init, {
    nWalkers, dim, nSteps: nSteps0, seed: deriveSeed(seed, 'hierarchical', 'ensemble'),
    logProbBatch: (t, m, out) => sampling.batch(t, m, out),
    ...(opts.converge ? { until: opts.converge } : {}),
  });
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
  let nIn = 0;
  for (let i = 0; i < n0; i++) {
    if (used && !used[i]) continue;
    nIn++;
    if (effectiveDraws[i] < 5) poor++;
  }
  if (poor > 0.1 * nIn) {
    warnings.push(
      `${poor} of ${nIn} objects have fewer than 5 effective draws under the population model: their marginal likelihoods are noisy importance-sampling estimates (more or better-spread draws would help)`,
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
    drawsUsed: { maxDraws, objectsSubsampled: terms.objectsSubsampled, total: terms.total },
    precision: st.precision,
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
