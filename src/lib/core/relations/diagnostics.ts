/**
 * Convergence diagnostics and summaries of ensemble-sampler chains laid out as
 * chain[(step * nWalkers + walker) * dim + d].
 */
import { PosterityError, problem } from '../problems.ts';
import { normalPpf } from '../stats/special.ts';
import { weightedQuantiles } from '../stats/summary.ts';
import type { Estimate } from './linear.ts';

export interface ChainDiagnostics {
  /** Integrated autocorrelation time per parameter, in steps (walker-averaged ACF). */
  tau: number[];
  /** Effective sample size per parameter: nWalkers x (nSteps - burn) / tau. */
  ess: number[];
  /** Rank-normalised split R-hat per parameter (Vehtari et al. 2021), max of bulk and folded. */
  rhat: number[];
}

/**
 * Integrated autocorrelation time tau = 1 + 2 sum_{t=1}^{M} rho_t with Sokal's (1997)
 * automatic window: M is the smallest lag with M >= c tau(M) (Goodman & Weare 2010 sect. 3;
 * c = 5 by default as in Foreman-Mackey et al. 2013). rho_t is averaged over the given series
 * (one per walker) before windowing; each rho_t uses the biased estimator
 * sum_{i} (x_i - m)(x_{i+t} - m) / sum_i (x_i - m)^2. If no lag satisfies the rule the
 * estimate at the longest lag is returned (the chain is too short to trust it).
 * Returns NaN for series shorter than 2 or with zero variance.
 */
export function autocorrTimeOfSeries(series: readonly Float64Array[], c = 5): number {
  const m = series.length;
  if (m === 0) return NaN;
  let n = Infinity;
  for (const s of series) n = Math.min(n, s.length);
  if (!(n >= 2)) return NaN;
  const centred: Float64Array[] = [];
  const c0: number[] = [];
  for (const s of series) {
    let mean = 0;
    for (let i = 0; i < n; i++) mean += s[i];
    mean /= n;
    const y = new Float64Array(n);
    let v = 0;
    for (let i = 0; i < n; i++) {
      y[i] = s[i] - mean;
      v += y[i] * y[i];
    }
    if (!(v > 0)) return NaN;
    centred.push(y);
    c0.push(v);
  }
  let tau = 1;
  for (let t = 1; t < n; t++) {
    let rho = 0;
    for (let j = 0; j < m; j++) {
      const y = centred[j];
      let acc = 0;
      for (let i = 0; i + t < n; i++) acc += y[i] * y[i + t];
      rho += acc / c0[j];
    }
    tau += (2 * rho) / m;
    if (t >= c * tau) return tau;
  }
  return tau;
}

/** Integrated autocorrelation time of one series (see `autocorrTimeOfSeries`; Sokal 1997 window, c = 5). */
export function integratedAutocorrTime(series: Float64Array, c = 5): number {
  return autocorrTimeOfSeries([series], c);
}

function checkLayout(chain: Float64Array, nSteps: number, nWalkers: number, dim: number, burn: number): void {
  if (chain.length !== nSteps * nWalkers * dim) {
    throw new PosterityError(
      problem({ message: 'chain has the wrong length', expected: `nSteps x nWalkers x dim = ${nSteps * nWalkers * dim}`, got: String(chain.length) }),
    );
  }
  if (!(Number.isInteger(burn) && burn >= 0 && burn < nSteps)) {
    throw new PosterityError(problem({ message: 'invalid burn-in', expected: `an integer in [0, ${nSteps})`, got: String(burn) }));
  }
}

/** Post-burn series of parameter d for each walker. */
function walkerSeries(chain: Float64Array, nSteps: number, nWalkers: number, dim: number, burn: number, d: number): Float64Array[] {
  const n = nSteps - burn;
  const out: Float64Array[] = [];
  for (let w = 0; w < nWalkers; w++) {
    const s = new Float64Array(n);
    for (let i = 0; i < n; i++) s[i] = chain[((burn + i) * nWalkers + w) * dim + d];
    out.push(s);
  }
  return out;
}

/** Ranks (1-based, ties averaged) of all values. */
function ranks(values: Float64Array): Float64Array {
  const n = values.length;
  const idx = Array.from({ length: n }, (_, i) => i).sort((i, j) => values[i] - values[j]);
  const r = new Float64Array(n);
  let i = 0;
  while (i < n) {
    let j = i;
    while (j + 1 < n && values[idx[j + 1]] === values[idx[i]]) j++;
    const avg = (i + j) / 2 + 1;
    for (let k = i; k <= j; k++) r[idx[k]] = avg;
    i = j + 1;
  }
  return r;
}

/** Classic R-hat sqrt(var+ / W) of equal-length chains stored consecutively in `z` (Gelman et al. 2013, BDA3 §11.4). */
function rhatOfChains(z: Float64Array, m: number, n: number): number {
  const means = new Float64Array(m);
  let within = 0;
  for (let j = 0; j < m; j++) {
    let s = 0;
    for (let i = 0; i < n; i++) s += z[j * n + i];
    const mu = s / n;
    means[j] = mu;
    let ss = 0;
    for (let i = 0; i < n; i++) ss += (z[j * n + i] - mu) ** 2;
    within += ss / (n - 1);
  }
  within /= m;
  let grand = 0;
  for (let j = 0; j < m; j++) grand += means[j];
  grand /= m;
  let b = 0;
  for (let j = 0; j < m; j++) b += (means[j] - grand) ** 2;
  b = (b * n) / (m - 1);
  if (!(within > 0)) return NaN;
  const varPlus = ((n - 1) / n) * within + b / n;
  return Math.sqrt(varPlus / within);
}

/** Rank-normalises pooled draws: z = Phi^-1((r - 3/8) / (S + 1/4)) (Vehtari et al. 2021, eq. 14). */
function rankNormalise(values: Float64Array): Float64Array {
  const r = ranks(values);
  const s = values.length;
  const z = new Float64Array(s);
  for (let i = 0; i < s; i++) z[i] = normalPpf((r[i] - 0.375) / (s + 0.25));
  return z;
}

/**
 * Rank-normalised split R-hat (Vehtari, Gelman, Simpson, Carpenter & Bürkner 2021, Bayesian
 * Analysis 16, 667): each walker's post-burn series is split in halves, the pooled draws are
 * rank-normalised, and R-hat is the larger of the bulk value (on the draws) and the tail value
 * (on |draw - median|). Walkers of an ensemble are not independent chains, so treat the
 * value as a screen (the paper suggests < 1.01). NaN with fewer than 4 post-burn steps.
 */
export function splitRhat(series: readonly Float64Array[]): number {
  const n0 = Math.min(...series.map((s) => s.length));
  const half = Math.floor(n0 / 2);
  if (!(half >= 2)) return NaN;
  const m = 2 * series.length;
  const pooled = new Float64Array(m * half);
  let o = 0;
  for (const s of series) {
    for (let i = 0; i < half; i++) pooled[o++] = s[i];
    for (let i = n0 - half; i < n0; i++) pooled[o++] = s[i];
  }
  const bulk = rhatOfChains(rankNormalise(pooled), m, half);
  const sorted = Float64Array.from(pooled).sort();
  const med = sorted.length % 2 ? sorted[(sorted.length - 1) / 2] : 0.5 * (sorted[sorted.length / 2 - 1] + sorted[sorted.length / 2]);
  const folded = new Float64Array(pooled.length);
  for (let i = 0; i < pooled.length; i++) folded[i] = Math.abs(pooled[i] - med);
  const tail = rhatOfChains(rankNormalise(folded), m, half);
  return Math.max(bulk, tail);
}

/**
 * Per-parameter diagnostics of an ensemble chain after discarding `burn` steps: integrated
 * autocorrelation time (walker-averaged ACF, Sokal window c = 5; Goodman & Weare 2010,
 * Foreman-Mackey et al. 2013), ESS = nWalkers (nSteps - burn) / tau, and rank-normalised
 * split R-hat (Vehtari et al. 2021).
 */
export function chainDiagnostics(
  chain: Float64Array,
  nSteps: number,
  nWalkers: number,
  dim: number,
  burn: number,
): ChainDiagnostics {
  checkLayout(chain, nSteps, nWalkers, dim, burn);
  const tau: number[] = [];
  const ess: number[] = [];
  const rhat: number[] = [];
  const n = nSteps - burn;
  for (let d = 0; d < dim; d++) {
    const s = walkerSeries(chain, nSteps, nWalkers, dim, burn, d);
    const t = autocorrTimeOfSeries(s);
    tau.push(t);
    ess.push((nWalkers * n) / t);
    rhat.push(splitRhat(s));
  }
  return { tau, ess, rhat };
}

/** Post-burn draws of parameter d, pooled over walkers. */
export function parameterDraws(chain: Float64Array, nSteps: number, nWalkers: number, dim: number, burn: number, d: number): Float64Array {
  const n = (nSteps - burn) * nWalkers;
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = chain[(burn * nWalkers + i) * dim + d];
  return out;
}

/**
 * Per-parameter median and central 68% interval (16th and 84th percentiles) of the post-burn
 * draws, by the quantile rule of `weightedQuantiles` (Hazen's with equal weights).
 */
export function summariseChain(chain: Float64Array, nSteps: number, nWalkers: number, dim: number, burn: number): Estimate[] {
  checkLayout(chain, nSteps, nWalkers, dim, burn);
  const out: Estimate[] = [];
  for (let d = 0; d < dim; d++) {
    const x = parameterDraws(chain, nSteps, nWalkers, dim, burn, d);
    const q = weightedQuantiles(x, new Float64Array(x.length).fill(1), [0.16, 0.5, 0.84]);
    out.push({ median: q[1], lo: q[0], hi: q[2] });
  }
  return out;
}

/**
 * At most `max` post-burn draws (rows of dim values) taken at evenly spaced positions of the
 * pooled post-burn chain, for credible bands.
 */
export function thinChain(chain: Float64Array, nSteps: number, nWalkers: number, dim: number, burn: number, max: number): Float64Array {
  const total = (nSteps - burn) * nWalkers;
  const k = Math.min(max, total);
  const out = new Float64Array(k * dim);
  for (let i = 0; i < k; i++) {
    const src = burn * nWalkers + Math.floor(((i + 0.5) * total) / k);
    for (let d = 0; d < dim; d++) out[i * dim + d] = chain[src * dim + d];
  }
  return out;
}
