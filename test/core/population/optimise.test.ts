import { describe, expect, it } from 'vitest';
import { hessian, invertSpd, nelderMead } from '../../../src/lib/core/population/optimise.ts';

describe('nelderMead', () => {
  it('finds the Rosenbrock minimum at (1, 1) (Rosenbrock 1960, Computer Journal 3, 175)', () => {
    const f = (x: Float64Array) => 100 * (x[1] - x[0] * x[0]) ** 2 + (1 - x[0]) ** 2;
    const r = nelderMead(f, [-1.2, 1], { xTol: 1e-10, fTol: 1e-14 });
    expect(r.x[0]).toBeCloseTo(1, 5);
    expect(r.x[1]).toBeCloseTo(1, 5);
  });
  it('treats NaN as outside the domain', () => {
    const f = (x: Float64Array) => (x[0] < 0 ? NaN : (x[0] - 2) ** 2);
    expect(nelderMead(f, [0.5]).x[0]).toBeCloseTo(2, 6);
  });
});

describe('hessian and invertSpd', () => {
  it('recover the covariance of a Gaussian log-likelihood exactly (quadratic form)', () => {
    // -ln L = 0.5 x^T A x with A = [[4, 1], [1, 3]]; A^-1 = [[3, -1], [-1, 4]] / 11 (hand computed)
    const f = (x: Float64Array) => 0.5 * (4 * x[0] * x[0] + 2 * x[0] * x[1] + 3 * x[1] * x[1]);
    const H = hessian(f, [0.3, -0.2]);
    [4, 1, 1, 3].forEach((v, i) => expect(H[i]).toBeCloseTo(v, 5));
    const inv = invertSpd(Float64Array.from([4, 1, 1, 3]), 2)!;
    [3 / 11, -1 / 11, -1 / 11, 4 / 11].forEach((v, i) => expect(inv[i]).toBeCloseTo(v, 14));
    expect(invertSpd(Float64Array.from([1, 2, 2, 1]), 2)).toBeNull();
  });
});
