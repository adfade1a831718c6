/**
 * The within-bin redshift term: y = a + b (x - pivot) + c dz + N(0, s^2), dz = z - zc, in every
 * relation fit. The likelihood is that of Hogg, Bovy & Lang (2010, arXiv:1008.4686, eq. 32,
 * projected vertically) with the mean shifted by c dz; the covariate itself is a plain linear
 * term (common practice). Omitting it when x and dz are correlated biases the slope by the
 * omitted-variable amount c Cov(x, dz) / Var(x) (e.g. Wooldridge, Introductory Econometrics,
 * ch. 3), which the tests below check, together with exact identities of the new likelihoods.
 * Coverage over many populations is in coverage-covariate.test.ts.
 */
import { describe, expect, it } from 'vitest';
import {
  deconvolvedLogLikelihood,
  fitDeconvolved,
  fitNaive,
  marginalPosteriorWithCovariate,
} from '../../../src/lib/core/relations/deconvolved.ts';
import { fitHierarchical, fitHierarchicalLaplace, hierarchicalLogPosterior } from '../../../src/lib/core/relations/hierarchical.ts';
import { leastSquaresWithCovariate } from '../../../src/lib/core/relations/leastsquares.ts';
import { credibleBand } from '../../../src/lib/core/relations/linear.ts';
import { fitMixture } from '../../../src/lib/core/relations/mixture.ts';
import { relationOffsets } from '../../../src/lib/core/relations/outliers.ts';
import { PosterityError } from '../../../src/lib/core/problems.ts';
import { makeRng } from '../../../src/lib/core/random.ts';
import { describeWithPython, runPython } from '../../helpers/python.ts';
import { gaussianPopulation, skewedPopulation } from './simulate.ts';

const truth = { a: 1, b: 0.8, s: 0.3, mu: 10, tau: 0.5, pivot: 10 };
/** Strong mass-redshift correlation: at the low-z edge x > 9.3, at the high-z edge x > 10.3. */
const ev = { c: 1.2, h: 0.25, xLo: 9.3, k: 2 };
const errs = { sx: [0.01, 0.03] as [number, number], sy: [0.1, 0.3] as [number, number], rho: 0 };

const sd = (e: { lo: number; hi: number }) => 0.5 * (e.hi - e.lo);

describe('least squares with a covariate', () => {
  it('recovers an exact plane y = a + b (x - pivot) + c dz to rounding, with zero residuals', () => {
    const x = Float64Array.of(9, 9.5, 10, 10.5, 11, 9.7);
    const dz = Float64Array.of(-0.2, 0.1, 0, 0.2, -0.1, 0.15);
    const y = x.map((xi, i) => 0.3 + 1.1 * (xi - 10) - 2 * dz[i]);
    const f = leastSquaresWithCovariate(x, y, 10, dz);
    expect(f.a).toBeCloseTo(0.3, 12);
    expect(f.b).toBeCloseTo(1.1, 12);
    expect(f.c).toBeCloseTo(-2, 12);
    expect(f.chi2).toBeLessThan(1e-24);
    const naive = fitNaive(x, y, 10, 1, dz);
    expect(naive.c!.median).toBeCloseTo(-2, 12);
    expect(naive.drawsC!.length).toBe(naive.draws.length / 3);
  });

  it('refuses a constant or collinear dz', () => {
    const x = Float64Array.of(9, 9.5, 10, 10.5, 11);
    const y = Float64Array.of(1, 2, 3, 4, 5);
    expect(() => fitNaive(x, y, 10, 1, new Float64Array(5))).toThrow(/dz \(z - zc\) is the same for every object/);
    expect(() => leastSquaresWithCovariate(x, y, 10, x.map((v) => 2 * v - 3))).toThrow(/collinear/);
    const p = gaussianPopulation(20, truth, 1, errs, ev);
    expect(() => fitDeconvolved({ ...p, dz: p.dz!.subarray(0, 19) }, { pivot: 10, seed: 1 })).toThrow(PosterityError);
  });
});

describeWithPython('least squares with a covariate against numpy', ['numpy'], () => {
  it('a, b, c and their covariance equal numpy.linalg.lstsq with (X^T X)^-1 RSS / (n - 3) to 1e-9', () => {
    const p = gaussianPopulation(60, truth, 2, errs, ev);
    const f = leastSquaresWithCovariate(p.x, p.y, 10, p.dz!);
    const ref = runPython(
      `
import numpy as np
d = json.load(sys.stdin)
x, y, z = (np.array(d[k]) for k in ('x', 'y', 'z'))
X = np.column_stack([np.ones_like(x), x - 10, z])
beta, rss, *_ = np.linalg.lstsq(X, y, rcond=None)
cov = np.linalg.inv(X.T @ X) * rss[0] / (len(x) - 3)
print(json.dumps({'beta': beta.tolist(), 'cov': cov.ravel().tolist()}))
`,
      { x: Array.from(p.x), y: Array.from(p.y), z: Array.from(p.dz!) },
    ) as { beta: number[]; cov: number[] };
    expect(Math.abs(f.a - ref.beta[0])).toBeLessThan(1e-9);
    expect(Math.abs(f.b - ref.beta[1])).toBeLessThan(1e-9);
    expect(Math.abs(f.c - ref.beta[2])).toBeLessThan(1e-9);
    for (let k = 0; k < 9; k++) expect(Math.abs(f.cov[k] - ref.cov[k])).toBeLessThan(1e-9 * Math.abs(ref.cov[0]));
  });
});

describe('fitDeconvolved with dz', () => {
  it('marginalises (a, c) exactly: the log posterior of (b, ln s) equals ln of the (a, c) integral of the likelihood, plus the priors', () => {
    const p = gaussianPopulation(30, truth, 3, { sx: [0.05, 0.1], sy: [0.1, 0.3], rho: 0.4 }, ev);
    const lp = marginalPosteriorWithCovariate(p, 10);
    const blob = new Float64Array(5);
    const diffs: number[] = [];
    for (const [b, s] of [[0.8, 0.3], [0.6, 0.2], [1.0, 0.45]]) {
      const v = lp(Float64Array.of(b, Math.log(s)), blob);
      // the integrand is Gaussian in (a, c): a 2-D trapezoid over +/- 8 sd is exact to ~1e-12
      const [ma, mc, l11, l21, l22] = blob;
      const sa = l11, sc = Math.hypot(l21, l22);
      const G = 161;
      let max = -Infinity;
      const vals = new Float64Array(G * G);
      for (let i = 0; i < G; i++) {
        for (let j = 0; j < G; j++) {
          const a = ma + sa * (-8 + (16 * i) / (G - 1));
          const c = mc + sc * (-8 + (16 * j) / (G - 1));
          vals[i * G + j] = deconvolvedLogLikelihood(p, 10, a, b, s, c);
          if (vals[i * G + j] > max) max = vals[i * G + j];
        }
      }
      let acc = 0;
      for (let i = 0; i < G; i++) for (let j = 0; j < G; j++) acc += Math.exp(vals[i * G + j] - max) * (i % (G - 1) ? 1 : 0.5) * (j % (G - 1) ? 1 : 0.5);
      const logInt = max + Math.log(acc * ((16 * sa) / (G - 1)) * ((16 * sc) / (G - 1)));
      // priors of the fit: (1 + b^2)^(-3/2), flat in s (so + ln s in ln s coordinates)
      diffs.push(v - (logInt - 1.5 * Math.log1p(b * b) + Math.log(s)));
    }
    // equal up to the constant the analytic marginal drops (n/2 ln 2 pi - ln 2 pi)
    expect(Math.abs(diffs[1] - diffs[0])).toBeLessThan(1e-8);
    expect(Math.abs(diffs[2] - diffs[0])).toBeLessThan(1e-8);
  });

  it('without dz the slope is biased by the omitted-variable amount c Cov(x, dz) / Var(x) (> 3 SE); with dz a, b, c are recovered', () => {
    const p = gaussianPopulation(1500, truth, 31, errs, ev);
    const { dz: _, ...noDz } = p;
    const f0 = fitDeconvolved(noDz, { pivot: 10, seed: 1, nSteps: 300 });
    const f1 = fitDeconvolved(p, { pivot: 10, seed: 1, nSteps: 300 });
    const n = p.x.length;
    let mx = 0, mz = 0;
    for (let i = 0; i < n; i++) {
      mx += p.x[i];
      mz += p.dz![i];
    }
    mx /= n;
    mz /= n;
    let sxz = 0, sxx = 0;
    for (let i = 0; i < n; i++) {
      sxz += (p.x[i] - mx) * (p.dz![i] - mz);
      sxx += (p.x[i] - mx) ** 2;
    }
    const predicted = (ev.c * sxz) / sxx;
    const z0 = (f0.b.median - truth.b) / sd(f0.b);
    console.log(
      `without dz b = ${f0.b.median.toFixed(3)} +/- ${sd(f0.b).toFixed(3)} (${z0.toFixed(1)} sd; omitted-variable bias predicted ${predicted.toFixed(3)}); ` +
        `with dz b = ${f1.b.median.toFixed(3)} +/- ${sd(f1.b).toFixed(3)}, c = ${f1.c!.median.toFixed(3)} +/- ${sd(f1.c!).toFixed(3)}, a = ${f1.a.median.toFixed(3)} +/- ${sd(f1.a).toFixed(3)}`,
    );
    expect(z0).toBeGreaterThan(3);
    expect(Math.abs(f0.b.median - truth.b - predicted)).toBeLessThan(3 * sd(f0.b));
    for (const [e, t] of [[f1.a, truth.a], [f1.b, truth.b], [f1.s, truth.s], [f1.c!, ev.c]] as const) {
      expect(Math.abs(e.median - t)).toBeLessThan(3 * sd(e));
    }
    expect(f0.c).toBeUndefined();
    expect(f0.drawsC).toBeUndefined();
    expect(f1.diagnostics.ess!.length).toBe(4);
    expect(f1.diagnostics.rhat!.length).toBe(4);
    expect(f1.draws.length).toBe(3 * 400);
    expect(f1.drawsC!.length).toBe(400);

    // the credible band is at the bin centre unless asked for another dz
    const band0 = credibleBand(f1, Float64Array.of(10));
    const band1 = credibleBand(f1, Float64Array.of(10), [0.16, 0.5, 0.84], 0.2);
    expect(Math.abs(band0.mid[0] - f1.a.median)).toBeLessThan(0.2 * sd(f1.a));
    expect(Math.abs(band1.mid[0] - (f1.a.median + 0.2 * f1.c!.median))).toBeLessThan(0.3 * sd(f1.a));
    expect(() => credibleBand(f0, Float64Array.of(10), [0.16, 0.5, 0.84], 0.2)).toThrow(PosterityError);

    // offsets from the plane need each object's dz
    const off = relationOffsets(f1, p.x, p.y, p.cxx, p.cyy, p.cxy, p.dz);
    const i = 7;
    expect(off.offset[i]).toBeCloseTo(p.y[i] - (f1.a.median + f1.b.median * (p.x[i] - 10) + f1.c!.median * p.dz![i]), 12);
    expect(() => relationOffsets(f1, p.x, p.y, p.cxx, p.cyy, p.cxy)).toThrow(/redshift term/);
  });

  it('names c in the convergence warnings of a too-short run', () => {
    const p = gaussianPopulation(200, truth, 4, errs, ev);
    const f = fitDeconvolved(p, { pivot: 10, seed: 2, nSteps: 12, nWalkers: 6 });
    expect(f.warnings.join(' ')).toMatch(/ of c is /);
  });
});

describe('fitHierarchical with dz', () => {
  const ht = { a: 1, b: 0.8, s: 0.25, mu: 10, tau: 0.5, pivot: 10 };
  const sim = { n: 120, draws: 64, xMin: 9.6, sF: 0.25, sG: 0.15 };
  const hev = { c: 1.2, h: 0.25, xLo: sim.xMin, k: 1.5 };

  it('its log posterior at c = c0 equals the one without dz on y - c0 dz (exact shift identity)', () => {
    const p = skewedPopulation(ht, 5, { ...sim, n: 40, draws: 80 }, hev);
    const opts = { pivot: 10, seed: 1, selection: { xMin: sim.xMin }, maxDraws: 64 };
    const withC = hierarchicalLogPosterior(p, opts);
    const shifted = Float64Array.from(p.y);
    for (let i = 0; i < 40; i++) for (let j = p.offsets[i]; j < p.offsets[i + 1]; j++) shifted[j] -= 0.7 * p.dz![i];
    const { dz: _, ...rest } = p;
    const without = hierarchicalLogPosterior({ ...rest, y: shifted }, opts);
    expect(withC.dim).toBe(6);
    expect(without.dim).toBe(5);
    const v1 = withC.logPost(Float64Array.of(1.05, 0.75, Math.log(0.3), 9.9, Math.log(0.45), 0.7));
    const v0 = without.logPost(Float64Array.of(1.05, 0.75, Math.log(0.3), 9.9, Math.log(0.45)));
    expect(Math.abs(v1 - v0)).toBeLessThan(1e-9 * Math.abs(v0));
  });

  it('MCMC on two evolving, mass-redshift correlated populations agrees with the Laplace fit and the truth', () => {
    for (const seed of [21, 22]) {
      const p = skewedPopulation(ht, seed, sim, hev);
      const opts = { pivot: 10, seed, selection: { xMin: sim.xMin } };
      const f = fitHierarchical(p, { ...opts, nSteps: 300 });
      const L = fitHierarchicalLaplace(p, opts);
      const est = [f.a, f.b, f.s, f.xModel.mu, f.xModel.tau, f.c!];
      const tv = [ht.a, ht.b, ht.s, ht.mu, ht.tau, hev.c];
      console.log(`seed ${seed}: ` + est.map((e, d) => `${['a', 'b', 's', 'mu', 'tau', 'c'][d]} ${e.median.toFixed(3)} +/- ${sd(e).toFixed(3)} (Laplace ${L.mode[d].toFixed(3)} +/- ${L.sd[d].toFixed(3)})`).join(', '));
      for (const d of [0, 1, 2, 5]) expect(Math.abs(est[d].median - tv[d])).toBeLessThan(3.5 * sd(est[d]));
      // the linear parameters have near-Gaussian posteriors (s is skewed at this n, mu and tau by the cut)
      for (const d of [0, 1, 5]) {
        expect(Math.abs(est[d].median - L.mode[d])).toBeLessThan(0.35 * sd(est[d]));
        expect(Math.abs(sd(est[d]) / L.sd[d] - 1)).toBeLessThan(0.25);
      }
      expect(L.mode.length).toBe(6);
      expect(f.diagnostics.ess!.length).toBe(6);
      expect(f.draws.length).toBe(3 * 400);
      expect(f.drawsC!.length).toBe(400);
    }
  });
});

describe('fitMixture with dz', () => {
  it('fits c dz on the sequence mean and recovers a, b, c, s beside a broad component', () => {
    const rng = makeRng(18);
    const n = 800;
    const x = new Float64Array(n), y = new Float64Array(n), dz = new Float64Array(n);
    const cxx = new Float64Array(n).fill(0.0025), cyy = new Float64Array(n).fill(0.01), cxy = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      x[i] = 9.5 + rng.next() * 1.5;
      // flux limit: the low-x objects only at the low-z end of the bin
      dz[i] = -0.25 + Math.min(0.5, (x[i] - 9.5) / 1) * rng.next();
      const seq = rng.next() < 0.75;
      y[i] = (seq ? 0.3 + 0.8 * (x[i] - 10) + 1.2 * dz[i] + 0.25 * rng.normal() : -1 + 0.8 * rng.normal()) + 0.1 * rng.normal();
    }
    const f = fitMixture({ x, y, cxx, cyy, cxy, dz }, { pivot: 10, seed: 1, nSteps: 300 });
    for (const [est, t] of [[f.a, 0.3], [f.b, 0.8], [f.s, 0.25], [f.c!, 1.2], [f.sequenceFraction, 0.75]] as const) {
      expect(Math.abs(est.median - t)).toBeLessThan(4 * sd(est));
    }
    expect(f.diagnostics.ess!.length).toBe(7);
    expect(f.drawsC!.length).toBe(f.draws.length / 3);
  });
});
