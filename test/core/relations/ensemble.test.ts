import { describe, expect, it } from 'vitest';
import { makeRng } from '../../../src/lib/core/random.ts';
import {
  chainDiagnostics,
  integratedAutocorrTime,
  sampleEnsemble,
  summariseChain,
} from '../../../src/lib/core/relations/ensemble.ts';
import { parameterDraws, splitRhat } from '../../../src/lib/core/relations/diagnostics.ts';
import { PosterityError } from '../../../src/lib/core/problems.ts';
import { describeWithPython, runPython } from '../../helpers/python.ts';

// Target: a correlated 3-D Gaussian with known mean and covariance (analytic posterior).
const MEAN = [1, -2, 0.5];
const SD = [1, 0.5, 2];
const CORR = [
  [1, 0.8, -0.3],
  [0.8, 1, 0.2],
  [-0.3, 0.2, 1],
];
const COV = CORR.map((row, i) => row.map((r, j) => r * SD[i] * SD[j]));

function invert3(m: number[][]): number[][] {
  const [[a, b, c], [d, e, f], [g, h, k]] = m;
  const A = e * k - f * h, B = -(d * k - f * g), C = d * h - e * g;
  const det = a * A + b * B + c * C;
  return [
    [A / det, -(b * k - c * h) / det, (b * f - c * e) / det],
    [B / det, (a * k - c * g) / det, -(a * f - c * d) / det],
    [C / det, -(a * h - b * g) / det, (a * e - b * d) / det],
  ];
}
const PREC = invert3(COV);

function gaussLogProb(t: Float64Array): number {
  let q = 0;
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) q += (t[i] - MEAN[i]) * PREC[i][j] * (t[j] - MEAN[j]);
  return -0.5 * q;
}

function ar1(n: number, rho: number, seed: number): Float64Array {
  const rng = makeRng(seed);
  const x = new Float64Array(n);
  x[0] = rng.normal() / Math.sqrt(1 - rho * rho);
  for (let i = 1; i < n; i++) x[i] = rho * x[i - 1] + rng.normal();
  return x;
}

describe('sampleEnsemble on a correlated 3-D Gaussian', () => {
  const nWalkers = 32;
  const nSteps = 3000;
  const burn = 500;
  const rng = makeRng(11);
  const init = new Float64Array(nWalkers * 3);
  for (let i = 0; i < init.length; i++) init[i] = MEAN[i % 3] + 0.1 * rng.normal();
  const run = sampleEnsemble(gaussLogProb, init, { nWalkers, dim: 3, nSteps, seed: 5 });
  const diag = chainDiagnostics(run.chain, nSteps, nWalkers, 3, burn);

  it('is deterministic for a seed and has a sensible acceptance', () => {
    const again = sampleEnsemble(gaussLogProb, init, { nWalkers, dim: 3, nSteps: 50, seed: 5 });
    expect(Array.from(again.chain.subarray(0, 50 * nWalkers * 3))).toEqual(Array.from(run.chain.subarray(0, 50 * nWalkers * 3)));
    // Goodman & Weare (2010) / Foreman-Mackey et al. (2013): a = 2 on a Gaussian accepts a few tens of per cent
    expect(run.acceptance).toBeGreaterThan(0.2);
    expect(run.acceptance).toBeLessThan(0.8);
  });

  it('gives the same chain when each half of the ensemble is evaluated as one batch', () => {
    let batches = 0;
    const batched = sampleEnsemble(gaussLogProb, init, {
      nWalkers, dim: 3, nSteps: 50, seed: 5,
      logProbBatch: (thetas, m, out) => {
        batches++;
        expect(m).toBe(nWalkers / 2);
        for (let k = 0; k < m; k++) out[k] = gaussLogProb(thetas.subarray(3 * k, 3 * k + 3));
      },
    });
    expect(batches).toBe(2 * 50);
    expect(Array.from(batched.chain)).toEqual(Array.from(run.chain.subarray(0, 50 * nWalkers * 3)));
    expect(Array.from(batched.logProb)).toEqual(Array.from(run.logProb.subarray(0, 50 * nWalkers)));
  });

  it('with until, doubles the chain while split R-hat is above the target, continuing the same random stream', () => {
    // walkers started in a tight ball 5 sd away: short chains have not forgotten the start
    const far = Float64Array.from(init, (v, i) => MEAN[i % 3] + 5 * SD[i % 3] + 0.01 * (v - MEAN[i % 3]));
    const short = sampleEnsemble(gaussLogProb, far, { nWalkers, dim: 3, nSteps: 40, seed: 9 });
    expect(Math.max(...chainDiagnostics(short.chain, 40, nWalkers, 3, 8).rhat)).toBeGreaterThan(1.05);
    const grown = sampleEnsemble(gaussLogProb, far, { nWalkers, dim: 3, nSteps: 40, seed: 9, until: { rhat: 1.05, maxSteps: 2000 } });
    expect([80, 160, 320, 640, 1280, 2000]).toContain(grown.nSteps);
    const burn = Math.floor(grown.nSteps / 5);
    expect(Math.max(...chainDiagnostics(grown.chain, grown.nSteps, nWalkers, 3, burn).rhat)).toBeLessThanOrEqual(1.05);
    // the same as asking for that many steps in the first place
    const plain = sampleEnsemble(gaussLogProb, far, { nWalkers, dim: 3, nSteps: grown.nSteps, seed: 9 });
    expect(Array.from(grown.chain)).toEqual(Array.from(plain.chain));
    expect(grown.acceptance).toBe(plain.acceptance);
    // a converged chain is not extended; the cap is respected
    const done = sampleEnsemble(gaussLogProb, init, { nWalkers, dim: 3, nSteps: 1000, seed: 5, until: { rhat: 1.2, maxSteps: 4000 } });
    expect(done.nSteps).toBe(1000);
    const capped = sampleEnsemble(gaussLogProb, far, { nWalkers, dim: 3, nSteps: 40, seed: 9, until: { rhat: 1.0001, maxSteps: 100 } });
    expect(capped.nSteps).toBe(100);
    expect(capped.chain.length).toBe(100 * nWalkers * 3);
    expect(() => sampleEnsemble(gaussLogProb, init, { nWalkers, dim: 3, nSteps: 50, seed: 5, until: { rhat: 1.05, maxSteps: 10 } })).toThrow(/invalid until/);
  });

  it('recovers the mean within 4 Monte Carlo standard errors (analytic mean)', () => {
    for (let d = 0; d < 3; d++) {
      const x = parameterDraws(run.chain, nSteps, nWalkers, 3, burn, d);
      const m = x.reduce((s, v) => s + v, 0) / x.length;
      const mcse = SD[d] / Math.sqrt(diag.ess[d]);
      expect(Math.abs(m - MEAN[d])).toBeLessThan(4 * mcse);
    }
  });

  it('recovers the covariance within 10% of sqrt(S_ii S_jj) (analytic covariance)', () => {
    const cols = [0, 1, 2].map((d) => parameterDraws(run.chain, nSteps, nWalkers, 3, burn, d));
    const n = cols[0].length;
    const means = cols.map((c) => c.reduce((s, v) => s + v, 0) / n);
    for (let i = 0; i < 3; i++) {
      for (let j = 0; j <= i; j++) {
        let c = 0;
        for (let k = 0; k < n; k++) c += (cols[i][k] - means[i]) * (cols[j][k] - means[j]);
        c /= n - 1;
        expect(Math.abs(c - COV[i][j])).toBeLessThan(0.1 * SD[i] * SD[j]);
      }
    }
  });

  it('summarises medians and 16/84% quantiles near the Gaussian values mean -/+ 1 sd', () => {
    const est = summariseChain(run.chain, nSteps, nWalkers, 3, burn);
    for (let d = 0; d < 3; d++) {
      expect(Math.abs(est[d].median - MEAN[d])).toBeLessThan(0.1 * SD[d]);
      // Phi(-1) = 0.1587, so the 16% and 84% points sit 0.994 sd from the mean (standard normal table)
      expect(Math.abs(est[d].hi - est[d].lo - 2 * 0.9945 * SD[d])).toBeLessThan(0.12 * SD[d]);
    }
  });

  it('reports converged diagnostics: split R-hat < 1.02, finite tau', () => {
    // 64 half-walker chains of 1250 steps with tau ~ 30 hold ~40 effective draws each, so even a
    // converged ensemble has R-hat ~ 1 + 1/(2 x 40) ~ 1.01; Vehtari et al.'s 1.01 assumes long chains.
    for (let d = 0; d < 3; d++) {
      expect(diag.rhat[d]).toBeLessThan(1.02);
      expect(diag.tau[d]).toBeGreaterThan(1);
      expect(diag.tau[d]).toBeLessThan(200);
      expect(diag.ess[d]).toBeCloseTo((nWalkers * (nSteps - burn)) / diag.tau[d], 6);
    }
  });

  it('refuses bad settings with a PosterityError', () => {
    expect(() => sampleEnsemble(gaussLogProb, init, { nWalkers: 4, dim: 3, nSteps: 10, seed: 1 })).toThrow(PosterityError);
    expect(() => sampleEnsemble(gaussLogProb, init.subarray(0, 5), { nWalkers, dim: 3, nSteps: 10, seed: 1 })).toThrow(PosterityError);
    expect(() => sampleEnsemble(() => NaN, init, { nWalkers, dim: 3, nSteps: 10, seed: 1 })).toThrow(/NaN/);
  });
});

describe('integratedAutocorrTime', () => {
  // AR(1) x_t = rho x_{t-1} + e_t has rho_k = rho^k, so tau = 1 + 2 sum rho^k = (1 + rho) / (1 - rho)
  // (standard result, e.g. Sokal 1997, sect. 3; from memory, follows from the geometric series).
  for (const [rho, n] of [
    [0.5, 50_000],
    [0.9, 200_000],
  ] as const) {
    it(`matches (1 + rho)/(1 - rho) = ${((1 + rho) / (1 - rho)).toFixed(1)} for AR(1) with rho = ${rho}`, () => {
      const truth = (1 + rho) / (1 - rho);
      for (const seed of [1, 2, 3]) {
        const tau = integratedAutocorrTime(ar1(n, rho, seed));
        // windowed-estimator standard error ~ tau sqrt(2 (2M + 1) / n) with M ~ 5 tau (Sokal 1997): ~3-5% here
        expect(Math.abs(tau / truth - 1)).toBeLessThan(0.12);
      }
    });
  }

  it('is about 1 for white noise and fails the truth when the series is strongly correlated (can fail)', () => {
    const white = ar1(20_000, 0, 4);
    expect(integratedAutocorrTime(white)).toBeGreaterThan(0.85);
    expect(integratedAutocorrTime(white)).toBeLessThan(1.15);
    // rho = 0.95 has tau = 39, far from the rho = 0.5 value 3
    expect(integratedAutocorrTime(ar1(50_000, 0.95, 5))).toBeGreaterThan(25);
  });

  it('walker-averaged tau in chainDiagnostics matches AR(1) walkers', () => {
    const nSteps = 20_000;
    const nWalkers = 8;
    const rho = 0.8; // tau = 9
    const chain = new Float64Array(nSteps * nWalkers);
    for (let w = 0; w < nWalkers; w++) {
      const s = ar1(nSteps, rho, 100 + w);
      for (let t = 0; t < nSteps; t++) chain[t * nWalkers + w] = s[t];
    }
    const d = chainDiagnostics(chain, nSteps, nWalkers, 1, 0);
    expect(Math.abs(d.tau[0] / 9 - 1)).toBeLessThan(0.08);
    expect(d.rhat[0]).toBeLessThan(1.01);
  });
});

describe('split R-hat', () => {
  it('flags walkers stuck in different places (R-hat well above 1.01)', () => {
    const series = [0, 1, 2, 3].map((k) => {
      const s = ar1(2000, 0.5, 200 + k);
      if (k >= 2) for (let i = 0; i < s.length; i++) s[i] += 1.5;
      return s;
    });
    expect(splitRhat(series)).toBeGreaterThan(1.1);
  });

  it('flags a walker whose spread differs (folded, tail R-hat)', () => {
    const series = [0, 1, 2, 3].map((k) => {
      const s = ar1(2000, 0, 300 + k);
      if (k === 0) for (let i = 0; i < s.length; i++) s[i] *= 4;
      return s;
    });
    expect(splitRhat(series)).toBeGreaterThan(1.05);
  });
});

describeWithPython('split R-hat against an independent numpy/scipy transcription of Vehtari et al. (2021)', ['numpy', 'scipy'], () => {
  it('agrees to 1e-9', () => {
    const series = [0, 1, 2, 3, 4, 5].map((k) => {
      const s = ar1(301, 0.7, 400 + k);
      if (k === 5) for (let i = 0; i < s.length; i++) s[i] = 0.3 + 1.3 * s[i];
      return s;
    });
    const ours = splitRhat(series);
    const ref = runPython(
      `
import numpy as np
from scipy.stats import rankdata, norm
x = np.array(json.load(sys.stdin))
n = x.shape[1] // 2
chains = np.concatenate([x[:, :n], x[:, -n:]])   # split each chain in halves (odd middle draw dropped)
def rhat(c):
    m, n = c.shape
    W = c.var(axis=1, ddof=1).mean()
    B = n * c.mean(axis=1).var(ddof=1)
    return np.sqrt(((n - 1) / n * W + B / n) / W)
def z(c):
    r = rankdata(c, method='average').reshape(c.shape)
    return norm.ppf((r - 3/8) / (c.size + 1/4))
bulk = rhat(z(chains))
tail = rhat(z(np.abs(chains - np.median(chains))))
print(json.dumps(max(bulk, tail)))
`,
      series.map((s) => Array.from(s)),
    ) as number;
    expect(Math.abs(ours - ref)).toBeLessThan(1e-9);
  });
});
