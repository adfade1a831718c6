/**
 * Mock posteriors that behave like the output of an importance-sampling SED fit.
 *
 * Generative model, per galaxy: "observed" values x = theta_true + e, with e drawn from the
 * measurement-error density f (correlated Gaussian, skew-normal in log SFR where the data are
 * weak, Azzalini 1985; for a few galaxies a two-component mixture with an aliased solution).
 * The fit's likelihood is f_fit(x - theta), its posterior f_fit(x - theta) pi(theta) with the
 * interim prior pi, represented by draws from a wider Gaussian proposal q with importance
 * weights pi f_fit / q. Because f is a location family, the truth is, in the frequentist sense,
 * a draw from the (flat-prior) posterior: intervals are calibrated up to the prior's pull.
 * The planted flaw: f_fit is f with the log_age axis narrowed by FLAW.factor.
 */
import type { Rng } from '../../src/lib/core/random.ts';
import { normalCdf } from '../../src/lib/core/stats/special.ts';
import { FLAW, SSFR_PRIOR, errorCorrelation, type ParamSpec } from './params.ts';

const LOG_2PI = Math.log(2 * Math.PI);

/** Lower Cholesky factor of a symmetric positive-definite matrix (row-major n x n). */
export function cholesky(a: number[][]): Float64Array {
  const n = a.length;
  const l = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = a[i][j];
      for (let k = 0; k < j; k++) s -= l[i * n + k] * l[j * n + k];
      if (i === j) {
        if (!(s > 0)) throw new Error('demo: error correlation matrix is not positive definite');
        l[i * n + i] = Math.sqrt(s);
      } else {
        l[i * n + j] = s / l[j * n + j];
      }
    }
  }
  return l;
}

/** log Phi(x), with the asymptotic series far in the lower tail. */
function logNormalCdf(x: number): number {
  if (x > -30) return Math.log(normalCdf(x));
  const x2 = x * x;
  return -0.5 * x2 - 0.5 * LOG_2PI - Math.log(-x) + Math.log(1 - 1 / x2 + 3 / (x2 * x2));
}

/** The interim prior of the fit: uniform box times a Gaussian in log sSFR, normalised over the box. */
export interface InterimPrior {
  inBox(theta: ArrayLike<number>): boolean;
  logDensity(theta: ArrayLike<number>): number;
  /** log of the normalising constant of the (log M, log SFR) part. */
  logNorm: number;
}

export function makeInterimPrior(params: ParamSpec[]): InterimPrior {
  const iM = params.findIndex((p) => p.role === 'log_mass');
  const iS = params.findIndex((p) => p.role === 'log_sfr');
  const { mean, sigma } = SSFR_PRIOR;
  const pm = params[iM];
  const ps = params[iS];
  // Zbar = (1/dM) int dM [Phi((Smax - M - mu)/sigma) - Phi((Smin - M - mu)/sigma)], midpoint rule
  const steps = 4000;
  let acc = 0;
  for (let i = 0; i < steps; i++) {
    const m = pm.min + ((i + 0.5) * (pm.max - pm.min)) / steps;
    acc += normalCdf((ps.max - m - mean) / sigma) - normalCdf((ps.min - m - mean) / sigma);
  }
  const zbar = acc / steps;
  let logBox = 0;
  for (let k = 0; k < params.length; k++) if (k !== iS) logBox -= Math.log(params[k].max - params[k].min);
  const logNorm = logBox - Math.log(zbar) - Math.log(sigma) - 0.5 * LOG_2PI;
  const inBox = (t: ArrayLike<number>) => {
    for (let k = 0; k < params.length; k++) if (!(t[k] >= params[k].min && t[k] <= params[k].max)) return false;
    return true;
  };
  return {
    inBox,
    logNorm,
    logDensity(t) {
      if (!inBox(t)) return -Infinity;
      const d = (t[iS] - t[iM] - mean) / sigma;
      return logNorm - 0.5 * d * d;
    },
  };
}

export interface FitInput {
  z: number;
  mag: number;
  truth: Float64Array;
  nDraws: number;
  multimodal: boolean;
}

export interface ObjectFit {
  n: number;
  /** Row-major n x d draws (float32-exact values). */
  theta: Float32Array;
  weight: Float64Array;
  logPrior: Float64Array;
  logLike: Float32Array;
  ess: number;
  multimodal: boolean;
  skewed: boolean;
  /** Per-parameter true error width (before the flaw). */
  sigma: Float64Array;
  /** Per-parameter posterior mass within `edgeWidth` of a prior bound. */
  edgeMass: Float64Array;
}

/** Error scale: errors grow with redshift and, fainter than 23 mag, with magnitude. */
export function errorScale(z: number, mag: number): number {
  return (1 + 0.25 * z) * Math.pow(10, 0.12 * Math.max(0, mag - 23));
}

export const SKEW = { threshold: 2.2, alpha: 4 } as const;

/** Aliased second solutions in log SFR: separation minSeparation + U(0, separationRange) dex (at least 4 sigma), weight minWeight + U(0, weightRange). */
export const MULTIMODAL = { fraction: 0.03, minSeparation: 1.2, separationRange: 0.6, minWeight: 0.25, weightRange: 0.2 } as const;

export interface PosteriorModel {
  params: ParamSpec[];
  prior: InterimPrior;
  fit(input: FitInput, rng: Rng): ObjectFit;
}

export function makePosteriorModel(params: ParamSpec[], edgeWidth: number): PosteriorModel {
  const d = params.length;
  const lc = cholesky(errorCorrelation(d));
  const prior = makeInterimPrior(params);
  const iS = params.findIndex((p) => p.role === 'log_sfr');
  const iAge = params.findIndex((p) => p.name === FLAW.parameter);

  function fit(input: FitInput, rng: Rng): ObjectFit {
    const g = errorScale(input.z, input.mag) * Math.pow(10, 0.08 * rng.normal());
    const sigma = new Float64Array(d);
    for (let k = 0; k < d; k++) sigma[k] = Math.min(params[k].sigma0 * g, 0.25 * (params[k].max - params[k].min));
    // Cholesky factors: true errors diag(sigma) Lc, the fit's with the age row narrowed
    const lt = new Float64Array(d * d);
    const lf = new Float64Array(d * d);
    for (let i = 0; i < d; i++) {
      for (let j = 0; j <= i; j++) {
        lt[i * d + j] = sigma[i] * lc[i * d + j];
        lf[i * d + j] = lt[i * d + j] / (i === iAge ? FLAW.factor : 1);
      }
    }
    let logDetF = 0;
    for (let i = 0; i < d; i++) logDetF += Math.log(lf[i * d + i]);
    const skewed = g > SKEW.threshold;
    const alpha = skewed ? SKEW.alpha : 0;
    const omegaS = sigma[iS];

    // mixture with an aliased solution in log SFR
    let delta = 0;
    let w2 = 0;
    if (input.multimodal) {
      const mag = Math.max(MULTIMODAL.minSeparation + MULTIMODAL.separationRange * rng.next(), 4 * sigma[iS]);
      const ps = params[iS];
      const t = input.truth[iS];
      if (t - mag - 0.3 > ps.min && t + mag + 0.3 < ps.max) {
        delta = rng.next() < 0.5 ? mag : -mag;
        w2 = MULTIMODAL.minWeight + MULTIMODAL.weightRange * rng.next();
      }
    }
    const multimodal = w2 > 0;

    // the measurement error e ~ f, by rejection for the skew-normal factor 2 Phi(alpha u_s / omega_s)
    const zz = new Float64Array(d);
    const e = new Float64Array(d);
    for (let tries = 0; ; tries++) {
      for (let k = 0; k < d; k++) zz[k] = rng.normal();
      for (let i = 0; i < d; i++) {
        let s = 0;
        for (let j = 0; j <= i; j++) s += lt[i * d + j] * zz[j];
        e[i] = s;
      }
      if (alpha === 0 || tries > 200 || rng.next() < normalCdf((alpha * e[iS]) / omegaS)) break;
    }
    if (multimodal && rng.next() < w2) e[iS] += delta;
    const x = new Float64Array(d);
    for (let k = 0; k < d; k++) x[k] = input.truth[k] + e[k];

    // whitened quadratic form |L^-1 v|^2 by forward substitution
    const tmp = new Float64Array(d);
    const quad = (l: Float64Array, v: ArrayLike<number>): number => {
      let q = 0;
      for (let i = 0; i < d; i++) {
        let s = v[i];
        for (let j = 0; j < i; j++) s -= l[i * d + j] * tmp[j];
        tmp[i] = s / l[i * d + i];
        q += tmp[i] * tmp[i];
      }
      return q;
    };
    const u = new Float64Array(d);
    const logF = (theta: ArrayLike<number>, shift: number): number => {
      for (let k = 0; k < d; k++) u[k] = x[k] - theta[k];
      u[iS] -= shift;
      let lfv = -0.5 * quad(lf, u) - logDetF - 0.5 * d * LOG_2PI;
      if (alpha !== 0) lfv += Math.LN2 + logNormalCdf((alpha * u[iS]) / omegaS);
      return lfv;
    };
    const logLike = (theta: ArrayLike<number>): number => {
      if (!multimodal) return logF(theta, 0);
      const a = Math.log(1 - w2) + logF(theta, 0);
      const b = Math.log(w2) + logF(theta, delta);
      const m = Math.max(a, b);
      return m + Math.log(Math.exp(a - m) + Math.exp(b - m));
    };

    // proposal: Gaussian(s) at the likelihood mean(s), covariance k^2 Sigma_fit
    const meanShift = new Float64Array(d);
    if (alpha !== 0) {
      const c = Math.sqrt(2 / Math.PI) * (alpha / Math.sqrt(1 + alpha * alpha)) / omegaS;
      // Sigma_fit[:, s] = Lf Lf^T e_s
      for (let i = 0; i < d; i++) {
        let s = 0;
        for (let j = 0; j < d; j++) s += lf[i * d + j] * lf[iS * d + j];
        meanShift[i] = c * s;
      }
    }
    const centres: Float64Array[] = [];
    const c1 = new Float64Array(d);
    for (let k = 0; k < d; k++) c1[k] = x[k] - meanShift[k];
    centres.push(c1);
    if (multimodal) {
      const c2 = c1.slice();
      c2[iS] -= delta;
      centres.push(c2);
    }
    // inflation k from a target ESS fraction r: per dimension n/ESS = k^2 / sqrt(2k^2 - 1)
    const r = rng.next() < 0.1 ? Math.exp(Math.log(0.01) + rng.next() * Math.log(6)) : Math.exp(Math.log(0.12) + rng.next() * Math.log(0.65 / 0.12));
    const h = Math.pow(r, -1 / d);
    const kk = Math.sqrt(h * h + h * Math.sqrt(Math.max(0, h * h - 1)));
    const lq = new Float64Array(d * d);
    for (let i = 0; i < d * d; i++) lq[i] = kk * lf[i];
    const logDetQ = logDetF + d * Math.log(kk);
    const logQ = (theta: ArrayLike<number>): number => {
      let best = -Infinity;
      const parts: number[] = [];
      for (const c of centres) {
        for (let k = 0; k < d; k++) u[k] = theta[k] - c[k];
        const v = -Math.log(centres.length) - 0.5 * quad(lq, u) - logDetQ - 0.5 * d * LOG_2PI;
        parts.push(v);
        if (v > best) best = v;
      }
      if (parts.length === 1) return best;
      let s = 0;
      for (const v of parts) s += Math.exp(v - best);
      return best + Math.log(s);
    };

    const n = input.nDraws;
    const theta = new Float32Array(n * d);
    const logW = new Float64Array(n);
    const logPrior = new Float64Array(n);
    const logLikeOut = new Float32Array(n);
    const th = new Float64Array(d);
    for (let i = 0; i < n; i++) {
      let ok = false;
      for (let tries = 0; tries < 1000 && !ok; tries++) {
        const c = centres.length === 1 ? centres[0] : centres[rng.int(centres.length)];
        for (let k = 0; k < d; k++) zz[k] = rng.normal();
        for (let a = 0; a < d; a++) {
          let s = 0;
          for (let b = 0; b <= a; b++) s += lq[a * d + b] * zz[b];
          th[a] = Math.fround(c[a] + s);
        }
        ok = prior.inBox(th);
      }
      if (!ok) for (let k = 0; k < d; k++) th[k] = Math.fround(Math.min(params[k].max, Math.max(params[k].min, th[k])));
      const lp = prior.logDensity(th);
      const ll = logLike(th);
      logW[i] = ll + lp - logQ(th);
      logPrior[i] = lp;
      logLikeOut[i] = ll;
      for (let k = 0; k < d; k++) theta[i * d + k] = th[k];
    }
    let maxW = -Infinity;
    for (let i = 0; i < n; i++) if (logW[i] > maxW) maxW = logW[i];
    const weight = new Float64Array(n);
    let sw = 0;
    let sw2 = 0;
    for (let i = 0; i < n; i++) {
      const w = Math.max(1e-300, Math.exp(logW[i] - maxW));
      weight[i] = w;
      sw += w;
      sw2 += w * w;
    }
    const edgeMass = new Float64Array(d);
    for (let k = 0; k < d; k++) {
      const width = edgeWidth * (params[k].max - params[k].min);
      let m = 0;
      for (let i = 0; i < n; i++) {
        const t = theta[i * d + k];
        if (t <= params[k].min + width || t >= params[k].max - width) m += weight[i];
      }
      edgeMass[k] = m / sw;
    }
    return { n, theta, weight, logPrior, logLike: logLikeOut, ess: (sw * sw) / sw2, multimodal, skewed, sigma, edgeMass };
  }

  return { params, prior, fit };
}
