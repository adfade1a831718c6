import { describe, expect, it } from 'vitest';
import { autocorrEss } from '../../../src/lib/core/stats/autocorr.ts';
import { normals } from './_random.ts';

/** AR(1) chain x_t = rho x_{t-1} + e_t; its ESS is n (1 - rho) / (1 + rho) (closed form of the integrated autocorrelation time). */
function ar1(n: number, rho: number, seed: number): Float64Array {
  const e = normals(n, seed);
  const x = new Float64Array(n);
  x[0] = e[0] / Math.sqrt(1 - rho * rho); // start in the stationary distribution
  for (let t = 1; t < n; t++) x[t] = rho * x[t - 1] + e[t];
  return x;
}

describe('autocorrEss (Gelman et al. 2013, BDA3 section 11.5)', () => {
  it('single AR(1) chain, rho = 0.5: ESS = n (1 - rho) / (1 + rho) within 8%', () => {
    const n = 100_000;
    const ess = autocorrEss(ar1(n, 0.5, 1));
    expect(ess / ((n * 0.5) / 1.5)).toBeGreaterThan(0.92);
    expect(ess / ((n * 0.5) / 1.5)).toBeLessThan(1.08);
  });

  it('four AR(1) chains, rho = 0.8, combined through the chain labels', () => {
    const per = 25_000;
    const x = new Float64Array(4 * per);
    const chain = new Int32Array(4 * per);
    for (let c = 0; c < 4; c++) {
      x.set(ar1(per, 0.8, 10 + c), c * per);
      chain.fill(c, c * per, (c + 1) * per);
    }
    const expected = (4 * per * 0.2) / 1.8;
    const ess = autocorrEss(x, chain);
    expect(ess / expected).toBeGreaterThan(0.9);
    expect(ess / expected).toBeLessThan(1.1);
  });

  it('independent draws give ESS close to n', () => {
    const ess = autocorrEss(normals(20_000, 4));
    expect(ess / 20_000).toBeGreaterThan(0.9);
    expect(ess / 20_000).toBeLessThan(1.1);
  });

  it('chains stuck at different values have tiny ESS (between-chain variance counts)', () => {
    const a = normals(1000, 1, 0, 0.01);
    const b = normals(1000, 2, 5, 0.01);
    const x = new Float64Array([...a, ...b]);
    const chain = new Int32Array(2000).fill(1, 1000);
    expect(autocorrEss(x, chain)).toBeLessThan(10);
  });

  it('returns NaN for constant or too-short input', () => {
    expect(autocorrEss(new Float64Array(100).fill(3))).toBeNaN();
    expect(autocorrEss(new Float64Array([1, 2]))).toBeNaN();
  });
});
