import { describe, expect, it } from 'vitest';
import {
  bias,
  calibrationFlag,
  cdfSorted,
  COVERAGE_LEVELS,
  coverage,
  nmad,
  NMAD_FACTOR,
  outlierFraction,
  pit,
  pitHistogram,
  REDSHIFT_OUTLIER_THRESHOLD,
  redshiftResiduals,
} from '../../../src/lib/core/population/calibration.ts';
import type { DrawSet } from '../../../src/lib/core/population/draws.ts';
import { makeRng } from '../../../src/lib/core/random.ts';
import { normalCdf, normalPpf } from '../../../src/lib/core/stats/special.ts';
import { quantileSorted, sortDraws } from '../../../src/lib/core/stats/summary.ts';

/**
 * Synthetic Gaussian posteriors with known calibration: object i has posterior centre mu_i and
 * reported width s_i = sigma_i / k, while its truth is mu_i + sigma_i e_i, e_i ~ N(0, 1). k = 1
 * is calibrated; k > 1 makes the posteriors too narrow by k.
 */
function gaussianMock(n: number, k: number, seed: string) {
  const rng = makeRng(seed);
  const mu = new Float64Array(n);
  const s = new Float64Array(n);
  const truth = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    mu[i] = rng.normal(10, 1);
    const sigma = 0.05 + 0.5 * rng.next();
    s[i] = sigma / k;
    truth[i] = mu[i] + sigma * rng.normal();
  }
  return { mu, s, truth, quantile: (i: number, p: number) => mu[i] + s[i] * normalPpf(p) };
}

/**
 * Weighted draws of the same posteriors by importance sampling: draws from N(mu, (1.5 s)^2),
 * weight = target density / proposal density, so the weights are unequal as from a fitter.
 */
function importanceDraws(mu: Float64Array, s: Float64Array, nDraws: number, seed: string): DrawSet {
  const rng = makeRng(seed);
  const n = mu.length;
  const offsets = Array.from({ length: n + 1 }, (_, i) => i * nDraws);
  const values = new Float64Array(n * nDraws);
  const weights = new Float64Array(n * nDraws);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < nDraws; j++) {
      const x = rng.normal();
      values[i * nDraws + j] = mu[i] + 1.5 * s[i] * x;
      // target N(0, 1) over proposal N(0, 1.5^2), both at y = 1.5 x, up to a constant
      weights[i * nDraws + j] = Math.exp(-0.5 * (1.5 * x) ** 2 + 0.5 * x * x);
    }
  }
  return { offsets, values, weights };
}

describe('coverage and PIT of calibrated posteriors', () => {
  const n = 4000;
  const m = gaussianMock(n, 1, 'calibrated');

  it('covers each level L a fraction L of the time within 3 binomial standard errors', () => {
    const cov = coverage(m.truth, { quantile: m.quantile }, COVERAGE_LEVELS);
    expect(cov.map((c) => c.level)).toEqual([...COVERAGE_LEVELS]);
    for (const c of cov) {
      expect(c.n).toBe(n);
      expect(c.binomialSe).toBeCloseTo(Math.sqrt((c.level * (1 - c.level)) / n), 15);
      expect(Math.abs(c.fraction - c.level)).toBeLessThan(3 * c.binomialSe);
    }
    const c68 = cov.find((c) => c.level === 0.6827)!;
    expect(calibrationFlag(c68.fraction, c68.n)).toBe(false);
  });

  it('gives a flat PIT histogram by a chi-square test (p > 0.001, 20 bins)', () => {
    const u = pit(m.truth, { quantile: m.quantile });
    // PIT of a Gaussian posterior is Phi((t - mu) / s) exactly
    for (let i = 0; i < 50; i++) expect(u[i]).toBeCloseTo(normalCdf((m.truth[i] - m.mu[i]) / m.s[i]), 8);
    const h = pitHistogram(u, 20);
    expect(h.n).toBe(n);
    expect(h.dof).toBe(19);
    expect(h.pValue).toBeGreaterThan(0.001);
  });

  it('holds for weighted importance-sampling draws too', () => {
    const nObj = 2000;
    const g = gaussianMock(nObj, 1, 'calibrated-draws');
    const draws = importanceDraws(g.mu, g.s, 400, 'is');
    const cov = coverage(g.truth, draws, [0.5, 0.6827, 0.9]);
    for (const c of cov) expect(Math.abs(c.fraction - c.level)).toBeLessThan(3 * c.binomialSe);
    const h = pitHistogram(pit(g.truth, draws), 10);
    expect(h.pValue).toBeGreaterThan(0.001);
  });
});

describe('coverage and PIT of posteriors too narrow by k = 1.5', () => {
  const n = 4000;
  const k = 1.5;
  const m = gaussianMock(n, k, 'narrow');

  it('covers 2 Phi(z_L / k) - 1 at level L (Gaussian CDF); 0.495 at 68.27%', () => {
    // For e ~ N(0, 1) and reported half-width z_L sigma / k, z_L = Phi^-1((1 + L) / 2), the truth
    // is covered with probability 2 Phi(z_L / k) - 1. At L = 0.6827, z_L = 1.000, so
    // 2 Phi(1 / 1.5) - 1 = 0.4950 (the 0.994 of Phi^-1(0.84) belongs to L = 0.68).
    expect(2 * normalCdf(normalPpf((1 + 0.6827) / 2) / k) - 1).toBeCloseTo(0.495, 3);
    const cov = coverage(m.truth, { quantile: m.quantile });
    for (const c of cov) {
      const expected = 2 * normalCdf(normalPpf((1 + c.level) / 2) / k) - 1;
      const se = Math.sqrt((expected * (1 - expected)) / n);
      expect(Math.abs(c.fraction - expected)).toBeLessThan(3 * se);
    }
    const c68 = cov.find((c) => c.level === 0.6827)!;
    expect(calibrationFlag(c68.fraction, c68.n)).toBe(true);
  });

  it('gives a U-shaped PIT histogram that fails the flatness test', () => {
    const h = pitHistogram(pit(m.truth, { quantile: m.quantile }), 20);
    expect(h.pValue).toBeLessThan(1e-6);
    expect(h.density[0]).toBeGreaterThan(1.5);
    expect(h.density[19]).toBeGreaterThan(1.5);
    expect(h.density[10]).toBeLessThan(1);
  });
});

describe('cdfSorted', () => {
  it('inverts quantileSorted on weighted draws', () => {
    const rng = makeRng('cdf');
    const x = Float64Array.from({ length: 50 }, () => rng.normal());
    const w = Float64Array.from({ length: 50 }, () => rng.next());
    const s = sortDraws(x, w);
    for (const p of [0.05, 0.2, 0.5, 0.77, 0.95]) expect(cdfSorted(s, quantileSorted(s, p))).toBeCloseTo(p, 12);
    expect(cdfSorted(s, -100)).toBe(0);
    expect(cdfSorted(s, 100)).toBe(1);
  });
});

describe('point-estimate scatter', () => {
  it('NMAD of a large normal sample tends to sigma', () => {
    // 1.4826 = 1 / Phi^-1(3/4) (Hoaglin, Mosteller & Tukey 1983), to the four places quoted
    expect(1 / normalPpf(0.75)).toBeCloseTo(NMAD_FACTOR, 4);
    const rng = makeRng('nmad');
    const d = Float64Array.from({ length: 200_000 }, () => rng.normal(0.1, 0.3));
    // relative standard error of the MAD scale estimate is about 1.17 / sqrt(n) = 0.26% here
    expect(Math.abs(nmad(d) / 0.3 - 1)).toBeLessThan(0.01);
    expect(Math.abs(bias(d) - 0.1)).toBeLessThan(0.005);
  });

  it('NMAD, bias and outlier fraction on a hand-computed sample', () => {
    // d = 1 2 3 4 100: median 3; |d - 3| = 2 1 0 1 97, median 1; NMAD = 1.4826
    const d = Float64Array.from([1, 2, 3, 4, 100, NaN]);
    expect(nmad(d)).toBeCloseTo(1.4826, 12);
    expect(bias(d)).toBe(3);
    expect(outlierFraction(d, 3.5)).toBeCloseTo(2 / 5, 15);
  });

  it('redshift outliers are |dz| / (1 + z) > 0.15', () => {
    // (1.29 - 1) / 2 = 0.145 is not an outlier; (1.4 - 1) / 2 = 0.2 is; 0.5 - 0.5 = 0 is not.
    // (Exactly 0.15 is avoided: (1.3 - 1) / 2 is 0.15000000000000002 in floating point.)
    const d = redshiftResiduals(Float64Array.from([1.29, 1.4, 0.5]), Float64Array.from([1, 1, 0.5]));
    expect(outlierFraction(d, REDSHIFT_OUTLIER_THRESHOLD)).toBeCloseTo(1 / 3, 15);
  });
});

describe('calibrationFlag', () => {
  it('flags 68.27% coverage more than 3 binomial errors from 0.6827', () => {
    // n = 1000: 3 sqrt(0.6827 x 0.3173 / 1000) = 0.04415 (hand computed)
    expect(calibrationFlag(0.7, 1000)).toBe(false);
    expect(calibrationFlag(0.64, 1000)).toBe(false);
    expect(calibrationFlag(0.74, 1000)).toBe(true);
    expect(calibrationFlag(0.63, 1000)).toBe(true);
    expect(calibrationFlag(0.1, 0)).toBe(false);
  });
});
