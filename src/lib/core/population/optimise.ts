/**
 * Small dense optimisation helpers for low-dimensional maximum-likelihood fits: Nelder-Mead
 * simplex minimisation, a finite-difference Hessian and a symmetric matrix inverse.
 */
import { PosterityError, problem } from '../problems.ts';

export interface NelderMeadOptions {
  /** Initial simplex step per coordinate (default 0.1 for each). */
  step?: ArrayLike<number>;
  /** Stop when the simplex's spread of f values falls below this (default 1e-10). */
  fTol?: number;
  /** Stop when every vertex lies within this of the best in each coordinate (default 1e-8). */
  xTol?: number;
  maxIter?: number;
  /** Restarts from the best point with a fresh simplex, guarding against collapse (default 2). */
  restarts?: number;
}

export interface MinimumResult {
  x: Float64Array;
  f: number;
  iterations: number;
  converged: boolean;
}

/**
 * Minimises `f` by the Nelder & Mead (1965, Computer Journal 7, 308) downhill simplex with the
 * standard coefficients (reflection 1, expansion 2, contraction 1/2, shrink 1/2), as described
 * by Lagarias et al. (1998, SIAM J. Optim. 9, 112), restarted from the best vertex.
 * `f` may return +Infinity (or NaN, treated as +Infinity) outside its domain.
 */
export function nelderMead(f: (x: Float64Array) => number, x0: ArrayLike<number>, opts: NelderMeadOptions = {}): MinimumResult {
  const d = x0.length;
  const fTol = opts.fTol ?? 1e-10;
  const xTol = opts.xTol ?? 1e-8;
  const maxIter = opts.maxIter ?? 2000 * d;
  const restarts = opts.restarts ?? 2;
  const F = (x: Float64Array) => {
    const v = f(x);
    return Number.isNaN(v) ? Infinity : v;
  };
  let best = Float64Array.from(x0);
  let fBest = F(best);
  if (!Number.isFinite(fBest)) {
    throw new PosterityError(problem({ message: 'optimiser: objective is not finite at the starting point', expected: 'a finite value', got: String(fBest) }));
  }
  let iterations = 0;
  let converged = false;
  for (let r = 0; r <= restarts; r++) {
    const pts: Float64Array[] = [Float64Array.from(best)];
    for (let k = 0; k < d; k++) {
      const p = Float64Array.from(best);
      p[k] += opts.step ? opts.step[k] : 0.1;
      pts.push(p);
    }
    const fv = pts.map(F);
    const cen = new Float64Array(d);
    const trial = (t: number, worst: Float64Array) => {
      const p = new Float64Array(d);
      for (let k = 0; k < d; k++) p[k] = cen[k] + t * (worst[k] - cen[k]);
      return p;
    };
    converged = false;
    for (let it = 0; it < maxIter; it++, iterations++) {
      const order = fv.map((_, i) => i).sort((a, b) => fv[a] - fv[b]);
      const sp = order.map((i) => pts[i]);
      const sf = order.map((i) => fv[i]);
      for (let i = 0; i <= d; i++) {
        pts[i] = sp[i];
        fv[i] = sf[i];
      }
      let spread = 0;
      for (let i = 1; i <= d; i++) for (let k = 0; k < d; k++) spread = Math.max(spread, Math.abs(pts[i][k] - pts[0][k]));
      if (Math.abs(fv[d] - fv[0]) <= fTol * (Math.abs(fv[0]) + fTol) && spread <= xTol) {
        converged = true;
        break;
      }
      cen.fill(0);
      for (let i = 0; i < d; i++) for (let k = 0; k < d; k++) cen[k] += pts[i][k] / d;
      const worst = pts[d];
      const xr = trial(-1, worst);
      const fr = F(xr);
      if (fr < fv[0]) {
        const xe = trial(-2, worst);
        const fe = F(xe);
        if (fe < fr) {
          pts[d] = xe;
          fv[d] = fe;
        } else {
          pts[d] = xr;
          fv[d] = fr;
        }
      } else if (fr < fv[d - 1]) {
        pts[d] = xr;
        fv[d] = fr;
      } else {
        const outside = fr < fv[d];
        const xc = trial(outside ? -0.5 : 0.5, worst);
        const fc = F(xc);
        if (fc < (outside ? fr : fv[d])) {
          pts[d] = xc;
          fv[d] = fc;
        } else {
          for (let i = 1; i <= d; i++) {
            for (let k = 0; k < d; k++) pts[i][k] = pts[0][k] + 0.5 * (pts[i][k] - pts[0][k]);
            fv[i] = F(pts[i]);
          }
        }
      }
    }
    let iMin = 0;
    for (let i = 1; i <= d; i++) if (fv[i] < fv[iMin]) iMin = i;
    const improved = fBest - fv[iMin];
    best = Float64Array.from(pts[iMin]);
    fBest = fv[iMin];
    if (converged && r > 0 && Math.abs(improved) <= fTol * (Math.abs(fBest) + fTol)) break;
  }
  return { x: best, f: fBest, iterations, converged };
}

/**
 * Hessian of `f` at `x` by central differences (row-major d x d): diagonal from
 * (f(x+h) - 2 f(x) + f(x-h)) / h^2, off-diagonal from the four-point cross difference,
 * with steps `h` per coordinate (default 1e-4 (1 + |x_k|)).
 */
export function hessian(f: (x: Float64Array) => number, x: ArrayLike<number>, h?: ArrayLike<number>): Float64Array {
  const d = x.length;
  const step = Float64Array.from({ length: d }, (_, k) => (h ? h[k] : 1e-4 * (1 + Math.abs(x[k]))));
  const H = new Float64Array(d * d);
  const p = Float64Array.from(x);
  const at = (shifts: [number, number][]) => {
    p.set(x as ArrayLike<number>);
    for (const [k, s] of shifts) p[k] += s * step[k];
    return f(p);
  };
  const f0 = at([]);
  for (let a = 0; a < d; a++) {
    H[a * d + a] = (at([[a, 1]]) - 2 * f0 + at([[a, -1]])) / (step[a] * step[a]);
    for (let b = a + 1; b < d; b++) {
      const v = (at([[a, 1], [b, 1]]) - at([[a, 1], [b, -1]]) - at([[a, -1], [b, 1]]) + at([[a, -1], [b, -1]])) / (4 * step[a] * step[b]);
      H[a * d + b] = H[b * d + a] = v;
    }
  }
  return H;
}

/**
 * Inverse of a symmetric positive-definite d x d matrix (row-major) by Cholesky factorisation;
 * returns null when the matrix is not positive definite.
 */
export function invertSpd(A: Float64Array, d: number): Float64Array | null {
  const L = new Float64Array(d * d);
  for (let i = 0; i < d; i++) {
    for (let j = 0; j <= i; j++) {
      let s = A[i * d + j];
      for (let k = 0; k < j; k++) s -= L[i * d + k] * L[j * d + k];
      if (i === j) {
        if (!(s > 0)) return null;
        L[i * d + i] = Math.sqrt(s);
      } else L[i * d + j] = s / L[j * d + j];
    }
  }
  // inverse of L, then A^-1 = L^-T L^-1
  const Li = new Float64Array(d * d);
  for (let i = 0; i < d; i++) {
    Li[i * d + i] = 1 / L[i * d + i];
    for (let j = 0; j < i; j++) {
      let s = 0;
      for (let k = j; k < i; k++) s -= L[i * d + k] * Li[k * d + j];
      Li[i * d + j] = s / L[i * d + i];
    }
  }
  const out = new Float64Array(d * d);
  for (let i = 0; i < d; i++) {
    for (let j = 0; j <= i; j++) {
      let s = 0;
      for (let k = i; k < d; k++) s += Li[k * d + i] * Li[k * d + j];
      out[i * d + j] = out[j * d + i] = s;
    }
  }
  return out;
}
