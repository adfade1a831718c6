/**
 * The Schechter (1976, ApJ 203, 297) function for stellar masses, per dex, and its
 * maximum-likelihood fit to binned counts from a 1/Vmax mass function.
 */
import { integrateGaussKronrod } from '../cosmology.ts';
import { PosterityError, problem } from '../problems.ts';
import { hessian, invertSpd, nelderMead } from './optimise.ts';

export interface SchechterParams {
  /** Normalisation phi*, Mpc^-3 (the per-dex function carries the ln 10). */
  phiStar: number;
  /** Characteristic mass log10(M* / M_sun). */
  logMStar: number;
  /** Faint-end slope. */
  alpha: number;
}

/**
 * Schechter (1976) function per dex of mass, in Mpc^-3 dex^-1:
 * phi(log M) = ln(10) phi* (M / M*)^(alpha + 1) exp(-M / M*).
 */
export function schechter(logM: number, p: SchechterParams): number {
  const x = Math.pow(10, logM - p.logMStar);
  return Math.LN10 * p.phiStar * Math.pow(x, p.alpha + 1) * Math.exp(-x);
}

/** Number density between two masses, integral of `schechter` over [logMLo, logMHi], Mpc^-3. */
export function schechterIntegral(logMLo: number, logMHi: number, p: SchechterParams): number {
  return integrateGaussKronrod((m) => schechter(m, p), logMLo, logMHi, 1e-10);
}

/** One mass bin's data for the fit. */
export interface CountBin {
  logMLo: number;
  logMHi: number;
  /** Galaxies in the bin. */
  n: number;
  /** Effective volume of the bin in Mpc^3 (see `MassFunctionBin.vEffMpc3`). */
  vEffMpc3: number;
}

export interface SchechterFitOptions {
  /** Only bins with logMLo >= minLogM (e.g. the mass completeness limit) are fitted. */
  minLogM?: number;
  /** Starting point; by default the best point of a coarse grid in (log M*, alpha). */
  init?: SchechterParams;
}

export interface SchechterFit {
  /** Maximum-likelihood estimate. */
  params: SchechterParams;
  logPhiStar: number;
  /** 68% (1 sigma) uncertainties from the inverse Hessian of -ln L. */
  errors: { logPhiStar: number; logMStar: number; alpha: number; phiStar: number };
  /** Covariance of (log10 phi*, log M*, alpha), row-major 3 x 3; null if the Hessian is not positive definite. */
  covariance: Float64Array | null;
  /** Poisson deviance 2 sum (mu - n + n ln(n / mu)) at the estimate, and its degrees of freedom. */
  deviance: number;
  dof: number;
  nBins: number;
  nGalaxies: number;
  converged: boolean;
}

function fail(message: string, expected: string, got: string): never {
  throw new PosterityError(problem({ message, expected, got }));
}

/**
 * Maximum-likelihood Schechter (1976) fit to binned counts: n_k ~ Poisson(mu_k) with
 * mu_k = V_eff,k * integral over bin k of phi(log M) dlog M, i.e. minimising
 * -ln L = sum_k (mu_k - n_k ln mu_k) over theta = (log10 phi*, log M*, alpha) by Nelder-Mead.
 * The Poisson form holds where each galaxy in a bin is visible over the whole bin volume (above
 * the mass completeness limit, so pass `minLogM`); empty bins count, with their volume.
 * Uncertainties: the inverse of the observed information (finite-difference Hessian of -ln L at
 * the estimate), the asymptotic Gaussian approximation to the 68% intervals; phi*'s error is
 * ln(10) phi* sigma(log10 phi*) by the delta method.
 */
export function fitSchechter(bins: readonly CountBin[], opts: SchechterFitOptions = {}): SchechterFit {
  const use = bins.filter((b) => b.logMLo >= (opts.minLogM ?? -Infinity) && b.vEffMpc3 > 0 && b.logMHi > b.logMLo);
  const nGalaxies = use.reduce((s, b) => s + b.n, 0);
  if (use.length < 4 || nGalaxies < 3) {
    fail('Schechter fit needs more data', 'at least 4 usable mass bins and 3 galaxies', `${use.length} bins, ${nGalaxies} galaxies`);
  }
  // Integrals of (M/M*)^(alpha+1) exp(-M/M*) ln 10 over each bin for phi* = 1, times V_eff.
  const unitMu = (logMStar: number, alpha: number, out: Float64Array) => {
    const p = { phiStar: 1, logMStar, alpha };
    for (let k = 0; k < use.length; k++) out[k] = use[k].vEffMpc3 * schechterIntegral(use[k].logMLo, use[k].logMHi, p);
  };
  const mu = new Float64Array(use.length);
  const nll = (t: Float64Array) => {
    if (!(t[2] > -5 && t[2] < 5)) return Infinity;
    unitMu(t[1], t[2], mu);
    const phiStar = Math.pow(10, t[0]);
    let s = 0;
    for (let k = 0; k < use.length; k++) {
      const m = phiStar * mu[k];
      if (!(m > 0)) {
        if (use[k].n > 0) return Infinity;
        continue;
      }
      s += m - use[k].n * Math.log(m);
    }
    return s;
  };
  let init: Float64Array;
  if (opts.init) {
    init = Float64Array.from([Math.log10(opts.init.phiStar), opts.init.logMStar, opts.init.alpha]);
  } else {
    // coarse grid in (log M*, alpha) with phi* at its profile maximum sum n / sum mu(phi* = 1)
    const lo = use[0].logMLo;
    const hi = use[use.length - 1].logMHi;
    let bestF = Infinity;
    init = new Float64Array(3);
    for (let i = 0; i <= 24; i++) {
      const logMStar = lo + ((hi - lo) * i) / 24;
      for (let j = 0; j <= 20; j++) {
        const alpha = -2.5 + (2.5 * j) / 20;
        unitMu(logMStar, alpha, mu);
        const total = mu.reduce((s, v) => s + v, 0);
        if (!(total > 0)) continue;
        const t = Float64Array.from([Math.log10(nGalaxies / total), logMStar, alpha]);
        const f = nll(t);
        if (f < bestF) {
          bestF = f;
          init = t;
        }
      }
    }
  }
  const min = nelderMead(nll, init, { step: [0.1, 0.1, 0.1], fTol: 1e-12, xTol: 1e-7 });
  const t = min.x;
  const cov = invertSpd(hessian(nll, t, [1e-3, 1e-3, 1e-3]), 3);
  const sd = (k: number) => (cov ? Math.sqrt(cov[k * 3 + k]) : NaN);
  const phiStar = Math.pow(10, t[0]);
  unitMu(t[1], t[2], mu);
  let deviance = 0;
  for (let k = 0; k < use.length; k++) {
    const m = phiStar * mu[k];
    const n = use[k].n;
    deviance += 2 * (m - n + (n > 0 ? n * Math.log(n / m) : 0));
  }
  return {
    params: { phiStar, logMStar: t[1], alpha: t[2] },
    logPhiStar: t[0],
    errors: { logPhiStar: sd(0), logMStar: sd(1), alpha: sd(2), phiStar: Math.LN10 * phiStar * sd(0) },
    covariance: cov,
    deviance,
    dof: use.length - 3,
    nBins: use.length,
    nGalaxies,
    converged: min.converged,
  };
}
