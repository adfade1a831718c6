/**
 * Starting an ensemble at the posterior mode: walkers drawn from the Laplace approximation,
 * a Gaussian with the inverse Hessian of -log p at the mode as its covariance.
 */
import { PosterityError, problem } from '../problems.ts';
import type { Rng } from '../random.ts';
import { hessian, invertSpd, cholesky, nelderMead } from './optimise.ts';

export interface ModeStart {
  /** nWalkers x dim starting positions. */
  init: Float64Array;
  mode: Float64Array;
  /** Laplace covariance at the mode (row-major), or undefined when the Hessian was not positive definite. */
  cov: Float64Array | undefined;
  evaluations: number;
}

/**
 * Finds the mode of `logPost` by Nelder–Mead from `x0` (initial simplex steps `step`), takes
 * the Laplace covariance H^-1 from a central-difference Hessian with steps `h`, and draws
 * nWalkers starting points from N(mode, H^-1) (Laplace's method; e.g. MacKay 2003,
 * Information Theory, Inference and Learning Algorithms, ch. 27). Without a positive-definite
 * Hessian the walkers start in a ball of radius `step` per axis. Points with non-finite
 * log-probability are redrawn closer to the mode.
 */
export function startAtMode(
  logPost: (theta: Float64Array) => number,
  x0: Float64Array,
  step: Float64Array,
  h: Float64Array,
  nWalkers: number,
  rng: Rng,
  opts: { maxEval?: number } = {},
): ModeStart {
  const dim = x0.length;
  const neg = (t: Float64Array): number => -logPost(t);
  const min = nelderMead(neg, x0, step, { maxEval: opts.maxEval ?? 150 * dim, fTol: 1e-7 });
  let evaluations = min.evaluations;
  const mode = min.x;
  if (!Number.isFinite(min.f)) {
    throw new PosterityError(problem({ message: 'could not find a starting point with finite posterior density', got: `mode search ended at (${Array.from(mode).join(', ')})` }));
  }
  const hess = hessian(neg, mode, h);
  evaluations += 1 + 2 * dim * dim;
  const cov = invertSpd(hess, dim);
  const l = cov ? cholesky(cov, dim) : undefined;
  const init = new Float64Array(nWalkers * dim);
  const z = new Float64Array(dim);
  const p = new Float64Array(dim);
  for (let k = 0; k < nWalkers; k++) {
    let scale = 1;
    for (let attempt = 0; ; attempt++) {
      for (let d = 0; d < dim; d++) z[d] = rng.normal();
      for (let i = 0; i < dim; i++) {
        let v = 0;
        if (l) for (let j = 0; j <= i; j++) v += l[i * dim + j] * z[j];
        else v = step[i] * z[i];
        p[i] = mode[i] + scale * v;
      }
      evaluations++;
      if (Number.isFinite(logPost(p))) break;
      if (attempt > 50) {
        throw new PosterityError(problem({ message: 'could not place the walkers where the posterior density is finite' }));
      }
      scale *= 0.5;
    }
    init.set(p, k * dim);
  }
  return { init, mode, cov, evaluations };
}
