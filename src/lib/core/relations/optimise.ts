/**
 * Small dense optimisation helpers used to start the samplers at the posterior mode with a
 * Laplace-approximation spread: Nelder–Mead minimisation, a finite-difference Hessian and a
 * Cholesky factor.
 */

export interface Minimum {
  x: Float64Array;
  f: number;
  evaluations: number;
}

/**
 * Minimises f by the Nelder–Mead simplex method (Nelder & Mead 1965, Computer Journal 7, 308)
 * with the standard coefficients reflection 1, expansion 2, contraction 1/2, shrink 1/2
 * (Lagarias et al. 1998, SIAM J. Optim. 9, 112). The initial simplex is x0 plus `step[d]`
 * along each axis. Stops when the spread of f over the simplex is below `fTol` (absolute) or
 * after `maxEval` evaluations. Non-finite f is treated as +Infinity.
 */
export function nelderMead(
  f: (x: Float64Array) => number,
  x0: Float64Array,
  step: Float64Array,
  opts: { maxEval?: number; fTol?: number } = {},
): Minimum {
  const n = x0.length;
  const maxEval = opts.maxEval ?? 200 * n;
  const fTol = opts.fTol ?? 1e-8;
  let evaluations = 0;
  const fx = (x: Float64Array): number => {
    evaluations++;
    const v = f(x);
    return Number.isFinite(v) ? v : Infinity;
  };
  const pts: Float64Array[] = [];
  const vals: number[] = [];
  for (let i = 0; i <= n; i++) {
    const p = Float64Array.from(x0);
    if (i > 0) p[i - 1] += step[i - 1];
    pts.push(p);
    vals.push(fx(p));
  }
  const order = Array.from({ length: n + 1 }, (_, i) => i);
  const centroid = new Float64Array(n);
  const trial = (from: Float64Array, towards: Float64Array, t: number): Float64Array => {
    const p = new Float64Array(n);
    for (let d = 0; d < n; d++) p[d] = from[d] + t * (towards[d] - from[d]);
    return p;
  };
  while (evaluations < maxEval) {
    order.sort((i, j) => vals[i] - vals[j]);
    const best = order[0];
    const worst = order[n];
    const second = order[n - 1];
    if (Math.abs(vals[worst] - vals[best]) <= fTol) break;
    centroid.fill(0);
    for (let k = 0; k < n; k++) {
      const p = pts[order[k]];
      for (let d = 0; d < n; d++) centroid[d] += p[d] / n;
    }
    // points along the line from the worst vertex through the centroid: c + t (c - worst)
    const xr = trial(centroid, pts[worst], -1);
    const fr = fx(xr);
    if (fr < vals[best]) {
      const xe = trial(centroid, pts[worst], -2);
      const fe = fx(xe);
      if (fe < fr) {
        pts[worst] = xe;
        vals[worst] = fe;
      } else {
        pts[worst] = xr;
        vals[worst] = fr;
      }
      continue;
    }
    if (fr < vals[second]) {
      pts[worst] = xr;
      vals[worst] = fr;
      continue;
    }
    const outside = fr < vals[worst];
    const xc = outside ? trial(centroid, pts[worst], -0.5) : trial(centroid, pts[worst], 0.5);
    const fc = fx(xc);
    if (fc < (outside ? fr : vals[worst])) {
      pts[worst] = xc;
      vals[worst] = fc;
      continue;
    }
    for (let k = 1; k <= n; k++) {
      const i = order[k];
      pts[i] = trial(pts[best], pts[i], 0.5);
      vals[i] = fx(pts[i]);
    }
  }
  let bi = 0;
  for (let i = 1; i <= n; i++) if (vals[i] < vals[bi]) bi = i;
  return { x: pts[bi], f: vals[bi], evaluations };
}

/**
 * Hessian of f at x by central differences with steps h[d] (Press et al. 2007, Numerical
 * Recipes 3rd ed., §5.7): diagonal (f(x+h) - 2 f(x) + f(x-h)) / h^2, off-diagonal from the
 * four points x ± h_i e_i ± h_j e_j. Row-major n x n.
 */
export function hessian(f: (x: Float64Array) => number, x: Float64Array, h: Float64Array): Float64Array {
  const n = x.length;
  const out = new Float64Array(n * n);
  const p = Float64Array.from(x);
  const f0 = f(p);
  const at = (i: number, di: number, j: number, dj: number): number => {
    p.set(x);
    p[i] += di;
    if (j >= 0) p[j] += dj;
    return f(p);
  };
  for (let i = 0; i < n; i++) {
    out[i * n + i] = (at(i, h[i], -1, 0) - 2 * f0 + at(i, -h[i], -1, 0)) / (h[i] * h[i]);
    for (let j = 0; j < i; j++) {
      const v =
        (at(i, h[i], j, h[j]) - at(i, h[i], j, -h[j]) - at(i, -h[i], j, h[j]) + at(i, -h[i], j, -h[j])) / (4 * h[i] * h[j]);
      out[i * n + j] = v;
      out[j * n + i] = v;
    }
  }
  return out;
}

/**
 * Lower Cholesky factor L with L L^T = m (row-major n x n), or undefined when m is not
 * symmetric positive definite (Golub & Van Loan 2013, Matrix Computations 4th ed., Alg. 4.2.1).
 */
export function cholesky(m: Float64Array, n: number): Float64Array | undefined {
  const l = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = m[i * n + j];
      for (let k = 0; k < j; k++) s -= l[i * n + k] * l[j * n + k];
      if (i === j) {
        if (!(s > 0)) return undefined;
        l[i * n + i] = Math.sqrt(s);
      } else {
        l[i * n + j] = s / l[j * n + j];
      }
    }
  }
  return l;
}

/** Inverse of a symmetric positive-definite matrix via its Cholesky factor, or undefined if not SPD. */
export function invertSpd(m: Float64Array, n: number): Float64Array | undefined {
  const l = cholesky(m, n);
  if (!l) return undefined;
  // inverse of L by forward substitution, then m^-1 = L^-T L^-1
  const li = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    li[i * n + i] = 1 / l[i * n + i];
    for (let j = 0; j < i; j++) {
      let s = 0;
      for (let k = j; k < i; k++) s -= l[i * n + k] * li[k * n + j];
      li[i * n + j] = s / l[i * n + i];
    }
  }
  const out = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = 0;
      for (let k = i; k < n; k++) s += li[k * n + i] * li[k * n + j];
      out[i * n + j] = s;
      out[j * n + i] = s;
    }
  }
  return out;
}
