import { describe, expect, it } from 'vitest';
import { makeCosmology } from '../../../src/lib/core/cosmology.ts';
import { massCompleteness } from '../../../src/lib/core/population/completeness.ts';
import {
  fitSchechter,
  massFunction1OverVmax,
  schechter,
  schechterIntegral,
  type SchechterFit,
} from '../../../src/lib/core/population/massfunction.ts';
import { PosterityError } from '../../../src/lib/core/problems.ts';
import { gammaincc, logGamma } from '../../../src/lib/core/stats/special.ts';
import { applyFluxLimit, simulatePopulation } from './simulate.ts';

const cosmo = makeCosmology({ H0: 70, Om0: 0.3 });
// Simulation truth (our choice, typical of local stellar mass functions).
const truth = { phiStar: 1e-3, logMStar: 10.7, alpha: -1.3 };
const massEdges = Float64Array.from({ length: 36 }, (_, i) => 8.5 + 0.1 * i);

function pulls(fit: SchechterFit) {
  return [
    (fit.logPhiStar - Math.log10(truth.phiStar)) / fit.errors.logPhiStar,
    (fit.params.logMStar - truth.logMStar) / fit.errors.logMStar,
    (fit.params.alpha - truth.alpha) / fit.errors.alpha,
  ];
}

describe('schechter', () => {
  it('is ln(10) phi* (M/M*)^(alpha+1) exp(-M/M*) per dex (Schechter 1976)', () => {
    // at M = M*: ln(10) phi* / e (hand computed)
    expect(schechter(10.7, truth)).toBeCloseTo((Math.LN10 * 1e-3) / Math.E, 18);
  });
  it('integrates to phi* Gamma(alpha + 1, x_lo) above a mass (incomplete gamma identity)', () => {
    // with alpha = -0.5 so alpha + 1 > 0: integral over log M >= 10 of phi = phi* Gamma(0.5, 10^-0.7)
    const p = { phiStar: 2e-3, logMStar: 10.7, alpha: -0.5 };
    const ref = 2e-3 * gammaincc(0.5, Math.pow(10, -0.7)) * Math.exp(logGamma(0.5));
    expect(schechterIntegral(10, 14, p) / ref).toBeCloseTo(1, 9);
  });
});

describe('fitSchechter on a simulated volume-limited population', () => {
  it('recovers phi*, M*, alpha within 3 sigma, and the stated sigmas match the scatter over 24 surveys', () => {
    // 24 independent 1 deg^2 surveys, 0.1 <= z < 0.5, all galaxies with log M >= 8.5 seen
    // (magnitude limit far too faint to matter): V_max is the whole volume.
    const all: number[][] = [];
    for (let s = 0; s < 24; s++) {
      const pop = simulatePopulation({ schechter: truth, cosmo, areaDeg2: 1, zLo: 0.1, zHi: 0.5, logMMin: 8.5, logMMax: 12.5, seed: `vl${s}` });
      const [zb] = massFunction1OverVmax(pop.logM, pop.mag, pop.z, { areaDeg2: 1, magLim: 99, zBins: [0.1, 0.5], massEdges, cosmo });
      const fit = fitSchechter(zb.bins);
      expect(fit.converged).toBe(true);
      const p = pulls(fit);
      for (const x of p) expect(Math.abs(x)).toBeLessThan(3.5);
      all.push(p);
    }
    // pulls (estimate - truth) / sigma: mean 0 and standard deviation 1 if the inverse-Hessian
    // sigmas are honest; with 24 surveys the sample sd has standard error ~ 1/sqrt(48) = 0.14.
    for (let k = 0; k < 3; k++) {
      const col = all.map((p) => p[k]);
      const mean = col.reduce((a, b) => a + b, 0) / col.length;
      const sd = Math.sqrt(col.reduce((a, b) => a + (b - mean) ** 2, 0) / (col.length - 1));
      expect(Math.abs(mean)).toBeLessThan(0.7);
      expect(sd).toBeGreaterThan(0.6);
      expect(sd).toBeLessThan(1.45);
    }
  });
});

describe('fitSchechter on a simulated flux-limited population', () => {
  it('recovers the parameters within 3 sigma when fitted above the Pozzetti completeness limit', () => {
    // 2 deg^2, 0.2 <= z < 0.4, m < 23.5, log M/L scatter 0.2 dex (see simulate.ts)
    for (const seed of ['fl1', 'fl2', 'fl3']) {
      const parent = simulatePopulation({ schechter: truth, cosmo, areaDeg2: 2, zLo: 0.2, zHi: 0.4, logMMin: 8, logMMax: 12.5, seed });
      const pop = applyFluxLimit(parent, 23.5);
      const [lim] = massCompleteness(pop.logM, pop.mag, pop.z, 23.5, [0.2, 0.4]);
      const [zb] = massFunction1OverVmax(pop.logM, pop.mag, pop.z, { areaDeg2: 2, magLim: 23.5, zBins: [0.2, 0.4], massEdges, cosmo });
      const fit = fitSchechter(zb.bins, { minLogM: lim.logMLim });
      expect(fit.nBins).toBeGreaterThan(10);
      for (const x of pulls(fit)) expect(Math.abs(x)).toBeLessThan(3);
      // goodness of fit: Poisson deviance within chi-square(dof) mean + 4 sd
      expect(fit.deviance).toBeLessThan(fit.dof + 4 * Math.sqrt(2 * fit.dof));
    }
  });

  it('refuses too little data with a PosterityError', () => {
    expect(() => fitSchechter([{ logMLo: 10, logMHi: 10.1, n: 3, vEffMpc3: 1e5 }])).toThrow(PosterityError);
  });
});
