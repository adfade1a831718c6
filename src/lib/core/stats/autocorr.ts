/**
 * Effective sample size of correlated (MCMC) draws from their autocorrelation.
 */

/**
 * ESS of MCMC draws by Gelman et al. (2013), Bayesian Data Analysis 3rd ed., §11.5:
 * with m chains of length n, W the mean within-chain variance and B the between-chain
 * variance, var+ = (n-1)/n W + B/n; the lag-t autocorrelation is
 * rho_t = 1 - V_t / (2 var+) with V_t the variogram averaged over chains; and
 * ESS = m n / (1 + 2 sum_{t=1}^{T} rho_t), T the first odd lag with rho_{T+1} + rho_{T+2} < 0.
 * `chain` labels each draw's chain (draws in order within a chain); without it all draws form
 * one chain and B = 0. Chains of unequal length are truncated to the shortest.
 * Returns NaN with fewer than 4 draws per chain or zero variance.
 */
export function autocorrEss(x: Float64Array, chain?: Int32Array): number {
  const chains = splitChains(x, chain);
  const m = chains.length;
  let n = Infinity;
  for (const c of chains) n = Math.min(n, c.length);
  if (!(n >= 4)) return NaN;

  const means = new Float64Array(m);
  let within = 0;
  for (let j = 0; j < m; j++) {
    const c = chains[j];
    let s = 0;
    for (let i = 0; i < n; i++) s += c[i];
    const mu = s / n;
    means[j] = mu;
    let ss = 0;
    for (let i = 0; i < n; i++) ss += (c[i] - mu) * (c[i] - mu);
    within += ss / (n - 1);
  }
  within /= m;
  let between = 0; // B / n
  if (m > 1) {
    let grand = 0;
    for (let j = 0; j < m; j++) grand += means[j];
    grand /= m;
    for (let j = 0; j < m; j++) between += (means[j] - grand) * (means[j] - grand);
    between /= m - 1;
  }
  const varPlus = ((n - 1) / n) * within + between;
  if (!(varPlus > 0)) return NaN;

  const rho = (t: number): number => {
    let v = 0;
    for (let j = 0; j < m; j++) {
      const c = chains[j];
      for (let i = t; i < n; i++) {
        const d = c[i] - c[i - t];
        v += d * d;
      }
    }
    v /= m * (n - t);
    return 1 - v / (2 * varPlus);
  };

  let sum = 0;
  let rhoNext = rho(1);
  for (let t = 1; t + 2 < n; t += 2) {
    // rho_t and rho_{t+1} are summed; stop after odd t when rho_{t+1} + rho_{t+2} < 0
    const r1 = rhoNext;
    const r2 = rho(t + 1);
    const r3 = rho(t + 2);
    sum += r1;
    if (r2 + r3 < 0) break;
    sum += r2;
    rhoNext = r3;
  }
  return (m * n) / (1 + 2 * sum);
}

function splitChains(x: Float64Array, chain?: Int32Array): Float64Array[] {
  if (!chain) return [x];
  const order = new Map<number, number[]>();
  for (let i = 0; i < x.length; i++) {
    let list = order.get(chain[i]);
    if (!list) order.set(chain[i], (list = []));
    list.push(x[i]);
  }
  const labels = [...order.keys()].sort((a, b) => a - b);
  return labels.map((l) => Float64Array.from(order.get(l) as number[]));
}
