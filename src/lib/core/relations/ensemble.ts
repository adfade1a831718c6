/**
 * Affine-invariant ensemble MCMC sampler (Goodman & Weare 2010, CAMCoS 5, 65) with the
 * stretch move, updated in two halves as in Foreman-Mackey et al. (2013, PASP 125, 306),
 * so each half moves against the other's current positions. Seeded and deterministic.
 */
import { PosterityError, problem } from '../problems.ts';
import { makeRng } from '../random.ts';
import { chainDiagnostics } from './diagnostics.ts';

export { integratedAutocorrTime, chainDiagnostics, summariseChain } from './diagnostics.ts';
export type { ChainDiagnostics } from './diagnostics.ts';

export interface EnsembleOptions {
  nWalkers: number;
  dim: number;
  nSteps: number;
  seed: number;
  /** Stretch scale a > 1 of g(z) ∝ 1/sqrt(z) on [1/a, a]; Goodman & Weare recommend 2. */
  a?: number;
  /**
   * Length of an optional per-position side result ("blob", as in Foreman-Mackey et al. 2013)
   * that `logProb` writes into its second argument; kept for accepted positions.
   */
  blobDim?: number;
  /**
   * Optional: evaluates m positions at once (thetas[k dim + d], k < m) into out[k], with their
   * blobs at blobs[k blobDim ..]; must give what m calls of `logProb` give. The m proposals of
   * one half of the ensemble are independent of each other, so they are evaluated together.
   */
  logProbBatch?: (thetas: Float64Array, m: number, out: Float64Array, blobs: Float64Array) => void;
  /**
   * Optional: after nSteps, while the largest split R-hat (rank-normalised, walkers as chains,
   * the first fifth discarded) exceeds `rhat`, the chain is doubled in length, up to maxSteps
   * steps in all. The same random stream continues, so the result is still fixed by the seed.
   */
  until?: { rhat: number; maxSteps: number };
}

export interface EnsembleResult {
  /** Positions after each step: chain[(step * nWalkers + walker) * dim + d]. */
  chain: Float64Array;
  /** Log-probability of each stored position: logProb[step * nWalkers + walker]. */
  logProb: Float64Array;
  /** Fraction of proposals accepted over all steps and walkers. */
  acceptance: number;
  /** Steps run: nSteps, or more with `until`. */
  nSteps: number;
  /** Side results of the stored positions: blobs[(step * nWalkers + walker) * blobDim + j]. */
  blobs?: Float64Array;
}

function fail(message: string, expected?: string, got?: string): never {
  throw new PosterityError(problem({ message, expected, got }));
}

/**
 * Samples `logProb` (an unnormalised log density; -Infinity outside the support) with the
 * stretch move of Goodman & Weare (2010, eq. 7): walker X_k moves to Y = X_j + z (X_k - X_j),
 * X_j a random walker of the complementary half, z = ((a - 1) u + 1)^2 / a drawn from
 * g(z) ∝ 1/sqrt(z) on [1/a, a], accepted with probability min(1, z^(dim-1) p(Y) / p(X_k))
 * (Foreman-Mackey et al. 2013, Algorithm 3). Each half's proposals are drawn first (partner and
 * z per walker), evaluated together (`logProbBatch` when given), then accepted or rejected in
 * walker order, one uniform draw each. `init` holds nWalkers x dim starting positions,
 * which must have finite log-probability and should not lie in a lower-dimensional subspace.
 * `logProb` receives scratch buffers it must not keep; returning NaN is an error.
 */
export function sampleEnsemble(
  logProb: (theta: Float64Array, blob: Float64Array) => number,
  init: Float64Array,
  opts: EnsembleOptions,
): EnsembleResult {
  const { nWalkers, dim, nSteps, seed } = opts;
  const a = opts.a ?? 2;
  if (!(Number.isInteger(dim) && dim >= 1)) fail('ensemble sampler: invalid dimension', 'an integer >= 1', String(dim));
  if (!(Number.isInteger(nWalkers) && nWalkers >= 2 * dim && nWalkers >= 4)) {
    fail('ensemble sampler: too few walkers', `an integer >= max(4, 2 x dim = ${2 * dim})`, String(nWalkers));
  }
  if (!(Number.isInteger(nSteps) && nSteps >= 1)) fail('ensemble sampler: invalid number of steps', 'an integer >= 1', String(nSteps));
  if (!(a > 1)) fail('ensemble sampler: invalid stretch scale a', 'a number > 1', String(a));
  if (init.length !== nWalkers * dim) {
    fail('ensemble sampler: initial positions have the wrong length', `nWalkers x dim = ${nWalkers * dim}`, String(init.length));
  }

  const rng = makeRng(seed);
  const pos = Float64Array.from(init);
  const lp = new Float64Array(nWalkers);
  const blobDim = opts.blobDim ?? 0;
  const theta = new Float64Array(dim);
  const blob = new Float64Array(blobDim);
  const curBlob = new Float64Array(nWalkers * blobDim);
  const notNaN = (v: number, at: ArrayLike<number>): number => {
    if (Number.isNaN(v)) fail('ensemble sampler: log-probability is NaN', 'a number or -Infinity', `NaN at (${Array.from(at).join(', ')})`);
    return v;
  };
  const evaluate = (): number => notNaN(logProb(theta, blob), theta);
  for (let k = 0; k < nWalkers; k++) {
    for (let d = 0; d < dim; d++) theta[d] = pos[k * dim + d];
    lp[k] = evaluate();
    curBlob.set(blob, k * blobDim);
    if (!Number.isFinite(lp[k])) {
      fail(`ensemble sampler: walker ${k} starts where the log-probability is not finite`, 'a finite log-probability', String(lp[k]));
    }
  }

  const until = opts.until;
  if (until && !(until.rhat > 1 && Number.isInteger(until.maxSteps) && until.maxSteps >= nSteps)) {
    fail('ensemble sampler: invalid until', 'rhat > 1 and a whole maxSteps >= nSteps', JSON.stringify(until));
  }
  const capacity = until ? until.maxSteps : nSteps;
  const chain = new Float64Array(capacity * nWalkers * dim);
  const chainLp = new Float64Array(capacity * nWalkers);
  const blobs = blobDim ? new Float64Array(capacity * nWalkers * blobDim) : undefined;
  let target = nSteps;
  const half = nWalkers >> 1;
  const sqrtA = Math.sqrt(a);
  const invSqrtA = 1 / sqrtA;
  let accepted = 0;
  const props = new Float64Array((nWalkers - half) * dim);
  const zs = new Float64Array(nWalkers - half);
  const lpNew = new Float64Array(nWalkers - half);
  const blobNew = new Float64Array((nWalkers - half) * blobDim);
  const evalBatch =
    opts.logProbBatch ??
    ((thetas: Float64Array, m: number, out: Float64Array, blobs: Float64Array): void => {
      for (let k = 0; k < m; k++) {
        theta.set(thetas.subarray(k * dim, (k + 1) * dim));
        out[k] = logProb(theta, blob);
        if (blobDim) blobs.set(blob, k * blobDim);
      }
    });
  for (let step = 0; step < target; step++) {
    for (let h = 0; h < 2; h++) {
      const start = h === 0 ? 0 : half;
      const end = h === 0 ? half : nWalkers;
      const otherStart = h === 0 ? half : 0;
      const otherN = h === 0 ? nWalkers - half : half;
      const m = end - start;
      for (let k = start; k < end; k++) {
        const j = otherStart + rng.int(otherN);
        // z = ((a-1)u + 1)^2 / a  =  (u (sqrt a - 1/sqrt a) + 1/sqrt a)^2
        const r = rng.next() * (sqrtA - invSqrtA) + invSqrtA;
        const z = r * r;
        zs[k - start] = z;
        for (let d = 0; d < dim; d++) {
          const xj = pos[j * dim + d];
          props[(k - start) * dim + d] = xj + z * (pos[k * dim + d] - xj);
        }
      }
      evalBatch(props, m, lpNew, blobNew);
      for (let k = start; k < end; k++) {
        const q = k - start;
        const v = notNaN(lpNew[q], props.subarray(q * dim, (q + 1) * dim));
        const logRatio = (dim - 1) * Math.log(zs[q]) + v - lp[k];
        const u = rng.next();
        if (v > -Infinity && Math.log(u) < logRatio) {
          for (let d = 0; d < dim; d++) pos[k * dim + d] = props[q * dim + d];
          lp[k] = v;
          if (blobDim) curBlob.set(blobNew.subarray(q * blobDim, (q + 1) * blobDim), k * blobDim);
          accepted++;
        }
      }
    }
    chain.set(pos, step * nWalkers * dim);
    chainLp.set(lp, step * nWalkers);
    if (blobs) blobs.set(curBlob, step * nWalkers * blobDim);
    if (until && step + 1 === target && target < until.maxSteps) {
      const { rhat } = chainDiagnostics(chain.subarray(0, target * nWalkers * dim), target, nWalkers, dim, Math.floor(target / 5));
      if (rhat.some((r) => r > until.rhat)) target = Math.min(2 * target, until.maxSteps);
    }
  }
  const cut = <T extends Float64Array>(a: T, per: number): Float64Array => (target === capacity ? a : a.slice(0, target * nWalkers * per));
  return {
    chain: cut(chain, dim),
    logProb: cut(chainLp, 1),
    acceptance: accepted / (target * nWalkers),
    nSteps: target,
    ...(blobs ? { blobs: cut(blobs, blobDim) } : {}),
  };
}
