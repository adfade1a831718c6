import { describe, expect, it } from 'vitest';
import { weightedLeastSquares } from '../../../src/lib/core/relations/leastsquares.ts';
import { PosterityError } from '../../../src/lib/core/problems.ts';
import { describeWithPython, runPython } from '../../helpers/python.ts';

// Hogg, Bovy & Lang (2010, arXiv:1008.4686), Table 1: ID, x, y, sigma_y, sigma_x, rho_xy.
// Values written from memory. They reproduce the paper's quoted answers below to every digit
// given, which is good evidence the memory is right, and the authority for our arithmetic is
// numpy's weighted polyfit on the same numbers (test below).
const TABLE1 = [
  [1, 201, 592, 61, 9, -0.84], [2, 244, 401, 25, 4, 0.31], [3, 47, 583, 38, 11, 0.64], [4, 287, 402, 15, 7, -0.27],
  [5, 203, 495, 21, 5, -0.33], [6, 58, 173, 15, 9, 0.67], [7, 210, 479, 27, 4, -0.02], [8, 202, 504, 14, 4, -0.05],
  [9, 198, 510, 30, 11, -0.84], [10, 158, 416, 16, 7, -0.69], [11, 165, 393, 14, 5, 0.3], [12, 201, 442, 25, 5, -0.46],
  [13, 157, 317, 52, 5, -0.03], [14, 131, 311, 16, 6, 0.5], [15, 166, 400, 34, 6, 0.73], [16, 160, 337, 31, 5, -0.52],
  [17, 186, 423, 42, 9, 0.9], [18, 125, 334, 26, 8, 0.4], [19, 218, 533, 16, 6, -0.78], [20, 146, 344, 22, 5, -0.56],
];
const col = (rows: number[][], k: number) => Float64Array.from(rows.map((r) => r[k]));
const pts5to20 = TABLE1.slice(4);

describe('weightedLeastSquares on Hogg, Bovy & Lang (2010) Table 1', () => {
  it('exercise 1 (points 5-20): slope 2.24 +/- 0.11, intercept 34 +/- 18 (paper, from memory)', () => {
    const f = weightedLeastSquares(col(pts5to20, 1), col(pts5to20, 2), 0, col(pts5to20, 3));
    expect(f.b).toBeCloseTo(2.24, 2);
    expect(Math.sqrt(f.varB)).toBeCloseTo(0.11, 2);
    expect(Math.abs(f.a - 34)).toBeLessThan(0.5);
    expect(Math.abs(Math.sqrt(f.varA) - 18)).toBeLessThan(0.5);
  });

  it('exercise 2 (all 20 points): slope 1.08 +/- 0.08, intercept 213 +/- 14 (paper, from memory)', () => {
    const f = weightedLeastSquares(col(TABLE1, 1), col(TABLE1, 2), 0, col(TABLE1, 3));
    expect(f.b).toBeCloseTo(1.08, 2);
    expect(Math.sqrt(f.varB)).toBeCloseTo(0.08, 2);
    expect(Math.abs(f.a - 213)).toBeLessThan(0.5);
    expect(Math.abs(Math.sqrt(f.varA) - 14)).toBeLessThan(0.5);
  });

  it('moves the intercept to the pivot consistently: a(pivot) = a(0) + b pivot, var by propagation', () => {
    const x = col(pts5to20, 1), y = col(pts5to20, 2), s = col(pts5to20, 3);
    const f0 = weightedLeastSquares(x, y, 0, s);
    const f = weightedLeastSquares(x, y, 180, s);
    expect(f.a).toBeCloseTo(f0.a + 180 * f0.b, 8);
    expect(f.varA).toBeCloseTo(f0.varA + 2 * 180 * f0.covAB + 180 * 180 * f0.varB, 6);
  });

  it('refuses equal x and a zero uncertainty', () => {
    expect(() => weightedLeastSquares(Float64Array.of(1, 1, 1), Float64Array.of(1, 2, 3), 0)).toThrow(PosterityError);
    expect(() => weightedLeastSquares(Float64Array.of(1, 2, 3), Float64Array.of(1, 2, 3), 0, Float64Array.of(1, 0, 1))).toThrow(PosterityError);
  });
});

describeWithPython('weightedLeastSquares against numpy (authority for the arithmetic)', ['numpy', 'scipy'], () => {
  it('matches np.polyfit(w = 1/sigma, cov="unscaled") and scipy curve_fit (absolute_sigma) to 1e-9', () => {
    const x = col(pts5to20, 1), y = col(pts5to20, 2), s = col(pts5to20, 3);
    const ref = runPython(
      `
import numpy as np
from scipy.optimize import curve_fit
d = json.load(sys.stdin)
x, y, s = map(np.array, (d['x'], d['y'], d['s']))
p, C = np.polyfit(x, y, 1, w=1/s, cov='unscaled')
q, Q = curve_fit(lambda t, m, b: m*t + b, x, y, p0=[1, 0], sigma=s, absolute_sigma=True)
# ordinary least squares with residual-scaled covariance
po, Co = np.polyfit(x, y, 1, cov=True)
print(json.dumps({'m': p[0], 'b': p[1], 'vm': C[0,0], 'vb': C[1,1], 'cmb': C[0,1], 'cf': [q[0], q[1], Q[0,0]],
                  'om': po[0], 'ob': po[1], 'ovm': Co[0,0], 'ovb': Co[1,1]}))
`,
      { x: Array.from(x), y: Array.from(y), s: Array.from(s) },
    ) as Record<string, number & number[]>;
    const f = weightedLeastSquares(x, y, 0, s);
    expect(Math.abs(f.b - ref.m)).toBeLessThan(1e-9);
    expect(Math.abs(f.a - ref.b)).toBeLessThan(1e-7);
    expect(Math.abs(f.varB / ref.vm - 1)).toBeLessThan(1e-9);
    expect(Math.abs(f.varA / ref.vb - 1)).toBeLessThan(1e-9);
    expect(Math.abs(f.covAB / ref.cmb - 1)).toBeLessThan(1e-9);
    expect(Math.abs(f.b - ref.cf[0])).toBeLessThan(1e-6);
    expect(Math.abs(f.varB / ref.cf[2] - 1)).toBeLessThan(1e-5);
    // unweighted: numpy's cov=True scales by chi2 / (n - 2), as we do without sigmas
    const o = weightedLeastSquares(x, y, 0);
    expect(Math.abs(o.b - ref.om)).toBeLessThan(1e-9);
    expect(Math.abs(o.varB / ref.ovm - 1)).toBeLessThan(1e-9);
    expect(Math.abs(o.varA / ref.ovb - 1)).toBeLessThan(1e-9);
  });
});
