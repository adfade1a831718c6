/**
 * Closed-form (weighted) least squares for y = a + b (x - pivot), the baseline that ignores
 * x uncertainties and intrinsic scatter.
 */
import { PosterityError, problem } from '../problems.ts';

export interface LeastSquaresLine {
  /** Intercept at x = pivot. */
  a: number;
  b: number;
  /** Covariance of (a, b): [var a, cov ab, var b]. */
  varA: number;
  covAB: number;
  varB: number;
  /** Sum of squared residuals, weighted by 1/sigma^2 when sigmas were given. */
  chi2: number;
  n: number;
}

/**
 * Weighted least squares with known y uncertainties `sigmaY` (or unit weights when omitted):
 * with w_i = 1/sigma_i^2, S = sum w, Sx = sum w dx, Sxx = sum w dx^2, Sy, Sxy and
 * D = S Sxx - Sx^2: b = (S Sxy - Sx Sy)/D, a = (Sxx Sy - Sx Sxy)/D, var a = Sxx/D,
 * var b = S/D, cov = -Sx/D (Press et al. 2007, Numerical Recipes 3rd ed., §15.2; the standard
 * fit of Hogg, Bovy & Lang 2010, arXiv:1008.4686, eq. 5). Without sigmas the covariance is
 * scaled by the residual variance chi2 / (n - 2), the ordinary least-squares standard errors.
 */
export function weightedLeastSquares(x: Float64Array, y: Float64Array, pivot: number, sigmaY?: Float64Array): LeastSquaresLine {
  const n = x.length;
  if (y.length !== n || (sigmaY && sigmaY.length !== n)) {
    throw new PosterityError(problem({ message: 'least squares: x, y and sigma must have the same length', got: `${n}, ${y.length}, ${sigmaY?.length ?? n}` }));
  }
  if (n < 3) {
    throw new PosterityError(problem({ message: 'least squares needs at least 3 points', expected: '>= 3', got: String(n) }));
  }
  let xm = 0;
  for (let i = 0; i < n; i++) xm += x[i];
  xm /= n;
  // accumulate about the sample mean for stability, then move the intercept to the pivot
  let s = 0, sx = 0, sy = 0, sxx = 0, sxy = 0;
  for (let i = 0; i < n; i++) {
    const w = sigmaY ? 1 / (sigmaY[i] * sigmaY[i]) : 1;
    if (!(Number.isFinite(w) && w > 0) || !Number.isFinite(x[i]) || !Number.isFinite(y[i])) {
      throw new PosterityError(
        problem({ message: 'least squares: point is not finite or has a non-positive uncertainty', row: i + 1, got: `x=${x[i]}, y=${y[i]}, sigma=${sigmaY?.[i]}` }),
      );
    }
    const dx = x[i] - xm;
    s += w;
    sx += w * dx;
    sy += w * y[i];
    sxx += w * dx * dx;
    sxy += w * dx * y[i];
  }
  const det = s * sxx - sx * sx;
  if (!(det > 0)) {
    throw new PosterityError(problem({ message: 'least squares: all x values are equal, the slope is undefined' }));
  }
  const b = (s * sxy - sx * sy) / det;
  const a0 = (sxx * sy - sx * sxy) / det;
  let varA0 = sxx / det;
  let varB = s / det;
  let cov0 = -sx / det;
  let chi2 = 0;
  for (let i = 0; i < n; i++) {
    const w = sigmaY ? 1 / (sigmaY[i] * sigmaY[i]) : 1;
    const r = y[i] - a0 - b * (x[i] - xm);
    chi2 += w * r * r;
  }
  if (!sigmaY) {
    const v = chi2 / (n - 2);
    varA0 *= v;
    varB *= v;
    cov0 *= v;
  }
  // a(pivot) = a0 + b (pivot - xm)
  const d = pivot - xm;
  const a = a0 + b * d;
  const varA = varA0 + 2 * d * cov0 + d * d * varB;
  const covAB = cov0 + d * varB;
  return { a, b, varA, covAB, varB, chi2, n };
}

export interface LeastSquaresPlane {
  /** Intercept at x = pivot, dz = 0. */
  a: number;
  b: number;
  /** Coefficient of the covariate dz. */
  c: number;
  /** Covariance of (a, b, c), row-major 3 x 3, scaled by the residual variance chi2 / (n - 3). */
  cov: Float64Array;
  /** Sum of squared residuals. */
  chi2: number;
  n: number;
}

/**
 * Ordinary least squares for y = a + b (x - pivot) + c dz, the three-column design [1, x, dz]
 * (the normal equations, e.g. Press et al. 2007, Numerical Recipes 3rd ed., §15.4). Both
 * regressors are centred on their means, which decouples the mean of y, then (b, c) solve the
 * 2 x 2 system of centred cross-products and the intercept is moved to (pivot, dz = 0). The
 * covariance is (X^T X)^-1 chi2 / (n - 3), the usual standard errors.
 */
export function leastSquaresWithCovariate(x: Float64Array, y: Float64Array, pivot: number, dz: Float64Array): LeastSquaresPlane {
  const n = x.length;
  if (y.length !== n || dz.length !== n) {
    throw new PosterityError(problem({ message: 'least squares: x, y and dz must have the same length', got: `${n}, ${y.length}, ${dz.length}` }));
  }
  if (n < 4) {
    throw new PosterityError(problem({ message: 'least squares with a covariate needs at least 4 points', expected: '>= 4', got: String(n) }));
  }
  let xm = 0, zm = 0, ym = 0;
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(x[i]) || !Number.isFinite(y[i]) || !Number.isFinite(dz[i])) {
      throw new PosterityError(problem({ message: 'least squares: point is not finite', row: i + 1, got: `x=${x[i]}, y=${y[i]}, dz=${dz[i]}` }));
    }
    xm += x[i];
    zm += dz[i];
    ym += y[i];
  }
  xm /= n;
  zm /= n;
  ym /= n;
  let suu = 0, suv = 0, svv = 0, suy = 0, svy = 0;
  for (let i = 0; i < n; i++) {
    const u = x[i] - xm;
    const v = dz[i] - zm;
    const r = y[i] - ym;
    suu += u * u;
    suv += u * v;
    svv += v * v;
    suy += u * r;
    svy += v * r;
  }
  const det = suu * svv - suv * suv;
  if (!(det > 1e-12 * suu * svv)) {
    throw new PosterityError(
      problem({ message: 'least squares: x and dz are constant or collinear, the slope and the dz coefficient are not both defined' }),
    );
  }
  const b = (svv * suy - suv * svy) / det;
  const c = (suu * svy - suv * suy) / det;
  let chi2 = 0;
  for (let i = 0; i < n; i++) {
    const r = y[i] - ym - b * (x[i] - xm) - c * (dz[i] - zm);
    chi2 += r * r;
  }
  const sig2 = chi2 / (n - 3);
  const vbb = (svv / det) * sig2;
  const vcc = (suu / det) * sig2;
  const vbc = (-suv / det) * sig2;
  const v00 = sig2 / n; // the centred intercept is uncorrelated with (b, c)
  // a = ym + b (pivot - xm) + c (0 - zm)
  const p = pivot - xm;
  const q = -zm;
  const a = ym + b * p + c * q;
  const vaa = v00 + p * p * vbb + q * q * vcc + 2 * p * q * vbc;
  const vab = p * vbb + q * vbc;
  const vac = p * vbc + q * vcc;
  const cov = Float64Array.of(vaa, vab, vac, vab, vbb, vbc, vac, vbc, vcc);
  return { a, b, c, cov, chi2, n };
}
