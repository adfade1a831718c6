/**
 * Injection and recovery for the hierarchical model: 300 simulated populations with skewed
 * posteriors (flux-like x measurement), correlated x-y errors, a non-flat interim prior and a
 * completeness cut on the true x that the fit models. For speed the 300 runs use the Laplace
 * approximation (mode and inverse Hessian) of the very log posterior the sampler explores;
 * the MCMC path is checked against it on a handful of populations in hierarchical.test.ts.
 * Binomial sd of a coverage fraction from 300 runs is 2.7%, so [0.60, 0.76] is about +/- 3 sd.
 */
import { describe, expect, it } from 'vitest';
import { fitHierarchicalLaplace } from '../../../src/lib/core/relations/hierarchical.ts';
import { meanAndSe, skewedPopulation } from './simulate.ts';

describe('hierarchical fit injection and recovery (300 populations, Laplace)', () => {
  it('68% intervals of a, b, s cover the truth in 60-76% of runs; mean slope error < 2 SE', () => {
    const truth = { a: 1, b: 0.8, s: 0.25, mu: 10, tau: 0.5, pivot: 10 };
    const sim = { n: 120, draws: 64, xMin: 9.6, sF: 0.25, sG: 0.15 };
    const runs = 300;
    const tv = [truth.a, truth.b, truth.s, truth.mu, truth.tau];
    const hits = [0, 0, 0, 0, 0];
    const slopeErr: number[] = [];
    const t0 = performance.now();
    for (let r = 0; r < runs; r++) {
      const p = skewedPopulation(truth, 9000 + r, sim);
      const L = fitHierarchicalLaplace(p, { pivot: truth.pivot, seed: r, selection: { xMin: sim.xMin } });
      // the 68.27% interval of a Gaussian is mode +/- 1 sd
      for (let d = 0; d < 5; d++) if (Math.abs(L.mode[d] - tv[d]) <= L.sd[d]) hits[d]++;
      slopeErr.push(L.mode[1] - truth.b);
    }
    const cov = hits.map((h) => h / runs);
    const err = meanAndSe(slopeErr);
    console.log(
      `hierarchical (Laplace) coverage a ${cov[0].toFixed(3)}, b ${cov[1].toFixed(3)}, s ${cov[2].toFixed(3)}, mu ${cov[3].toFixed(3)}, tau ${cov[4].toFixed(3)}; ` +
        `mean slope error ${err.mean.toFixed(4)} (SE ${err.se.toFixed(4)}); ${((performance.now() - t0) / runs).toFixed(1)} ms per population`,
    );
    for (let d = 0; d < 3; d++) {
      expect(cov[d]).toBeGreaterThanOrEqual(0.6);
      expect(cov[d]).toBeLessThanOrEqual(0.76);
    }
    expect(Math.abs(err.mean)).toBeLessThan(2 * err.se);
  });
});
