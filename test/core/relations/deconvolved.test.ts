import { describe, expect, it } from 'vitest';
import { deconvolvedLogLikelihood, fitDeconvolved, fitNaive, predictedSlopeBias } from '../../../src/lib/core/relations/deconvolved.ts';
import { credibleBand } from '../../../src/lib/core/relations/linear.ts';
import { PosterityError } from '../../../src/lib/core/problems.ts';
import { describeWithPython, runPython } from '../../helpers/python.ts';
import { gaussianPopulation } from './simulate.ts';

const truth = { a: 1, b: 0.8, s: 0.3, mu: 10, tau: 0.5, pivot: 10 };

describe('fitDeconvolved', () => {
  it('recovers a known relation from 5000 objects within 3 posterior sd', () => {
    const p = gaussianPopulation(5000, truth, 21, { sx: [0.03, 0.08], sy: [0.1, 0.3], rho: 0.4 });
    const f = fitDeconvolved(p, { pivot: 10, seed: 1 });
    for (const [est, t] of [[f.a, truth.a], [f.b, truth.b], [f.s, truth.s]] as const) {
      expect(Math.abs(est.median - t)).toBeLessThan(3 * 0.5 * (est.hi - est.lo));
    }
    expect(f.method).toBe('deconvolved');
    expect(f.draws.length).toBe(3 * 400);
    expect(f.diagnostics.nWalkers).toBe(12);
    expect(f.diagnostics.rhat!.every((r) => r < 1.1)).toBe(true);
    expect(f.warnings.filter((w) => /R-hat|effective sample|acceptance/.test(w))).toEqual([]);
  });

  it('is deterministic for a seed', () => {
    const p = gaussianPopulation(200, truth, 3, { sx: [0.05, 0.1], sy: [0.1, 0.2], rho: 0 });
    const f1 = fitDeconvolved(p, { pivot: 10, seed: 9 });
    const f2 = fitDeconvolved(p, { pivot: 10, seed: 9 });
    expect(Array.from(f1.draws)).toEqual(Array.from(f2.draws));
  });

  it('warns when x errors are large compared with the spread of x (attenuation)', () => {
    const p = gaussianPopulation(300, truth, 4, { sx: [0.3, 0.4], sy: [0.1, 0.2], rho: 0 });
    expect(fitDeconvolved(p, { pivot: 10, seed: 1 }).warnings.join(' ')).toMatch(/biased by about -/);
  });

  it('with correlated errors the flat-x likelihood is biased by the predicted (mean Cxy - b mean Cxx) / Var x (can fail)', () => {
    // errors-in-variables algebra (Fuller 1987, sect. 1.1): here +0.5*0.055*0.2 - 0.8*0.0032 ~ +0.003 over Var x ~ 0.25
    const p = gaussianPopulation(40_000, truth, 14, { sx: [0.03, 0.08], sy: [0.1, 0.3], rho: 0.5 });
    const f = fitDeconvolved(p, { pivot: 10, seed: 1, nSteps: 300 });
    const predicted = predictedSlopeBias(p, f.b.median);
    expect(predicted).toBeGreaterThan(0.008);
    expect(Math.abs(f.b.median - truth.b - predicted)).toBeLessThan(0.35 * predicted + 2 * (f.b.hi - f.b.lo));
    expect(f.b.median - truth.b).toBeGreaterThan(0.5 * predicted);
    expect(f.warnings.join(' ')).toMatch(/prefer the hierarchical fit/);
  });

  it('refuses a covariance that is not positive semi-definite, naming the row', () => {
    const p = gaussianPopulation(20, truth, 5, { sx: [0.05, 0.1], sy: [0.1, 0.2], rho: 0 });
    p.cxy[6] = 1;
    expect(() => fitDeconvolved(p, { pivot: 10, seed: 1 })).toThrow(PosterityError);
    try {
      fitDeconvolved(p, { pivot: 10, seed: 1 });
    } catch (e) {
      expect((e as PosterityError).problems[0].row).toBe(7);
    }
  });

  it('gives a credible band whose median line passes through (pivot, a)', () => {
    const p = gaussianPopulation(500, truth, 6, { sx: [0.05, 0.1], sy: [0.1, 0.2], rho: 0.3 });
    const f = fitDeconvolved(p, { pivot: 10, seed: 1 });
    const band = credibleBand(f, Float64Array.of(9, 10, 11));
    expect(Math.abs(band.mid[1] - f.a.median)).toBeLessThan(0.2 * (f.a.hi - f.a.lo));
    expect(band.hi[0] - band.lo[0]).toBeGreaterThan(band.hi[1] - band.lo[1]); // wider away from the pivot
    expect(band.lo[2]).toBeLessThan(band.mid[2]);
    expect(band.mid[2]).toBeLessThan(band.hi[2]);
  });
});

describe('fitNaive', () => {
  it('equals ordinary least squares with residual scatter as s', () => {
    const x = Float64Array.of(0, 1, 2, 3, 4);
    const y = Float64Array.of(0.1, 0.9, 2.2, 2.8, 4.1);
    const f = fitNaive(x, y, 2);
    // hand computation: xbar = 2, Sxx = 10, Sxy = 9.9 -> b = 0.99, a(2) = ybar = 2.02
    expect(f.b.median).toBeCloseTo(0.99, 12);
    expect(f.a.median).toBeCloseTo(2.02, 12);
    // residuals 0.06, -0.13, 0.18, -0.21, 0.10 -> RSS = 0.107, s = sqrt(0.107 / 3); se(b) = s / sqrt(Sxx)
    expect(f.s.median).toBeCloseTo(Math.sqrt(0.107 / 3), 10);
    expect(f.b.hi - f.b.median).toBeCloseTo(Math.sqrt(0.107 / 3 / 10), 10);
  });
});

describeWithPython('fitDeconvolved against a brute-force numpy grid posterior', ['numpy'], () => {
  it('posterior quantiles of a, b, s agree within 0.15 posterior sd', () => {
    const p = gaussianPopulation(40, truth, 8, { sx: [0.05, 0.15], sy: [0.1, 0.3], rho: 0.5 });
    const f = fitDeconvolved(p, { pivot: 10, seed: 2, nWalkers: 32, nSteps: 2500 });
    // same likelihood (HBL 2010 eq. 32 projected vertically) and priors: flat a, p(b) ∝ (1+b^2)^-1.5, flat s > 0
    const ref = runPython(
      `
import numpy as np
d = json.load(sys.stdin)
x, y, cxx, cyy, cxy = (np.array(d[k]) for k in ('x', 'y', 'cxx', 'cyy', 'cxy'))
A = np.linspace(*d['ra'], 121); B = np.linspace(*d['rb'], 121); S = np.linspace(*d['rs'], 121)
a, b, s = np.meshgrid(A, B, S, indexing='ij')
lp = -1.5 * np.log1p(b**2)
for i in range(len(x)):
    v = s**2 + cyy[i] - 2*b*cxy[i] + b**2*cxx[i]
    lp += -0.5 * (np.log(v) + (y[i] - a - b*(x[i] - 10))**2 / v)
p = np.exp(lp - lp.max())
def q(axis_vals, marg):
    c = np.cumsum(marg); c /= c[-1]
    return [float(np.interp(t, c, axis_vals)) for t in (0.16, 0.5, 0.84)]
print(json.dumps({'a': q(A, p.sum(axis=(1, 2))), 'b': q(B, p.sum(axis=(0, 2))), 's': q(S, p.sum(axis=(0, 1)))}))
`,
      {
        x: Array.from(p.x), y: Array.from(p.y), cxx: Array.from(p.cxx), cyy: Array.from(p.cyy), cxy: Array.from(p.cxy),
        ra: [f.a.median - 6 * (f.a.hi - f.a.lo), f.a.median + 6 * (f.a.hi - f.a.lo)],
        rb: [f.b.median - 6 * (f.b.hi - f.b.lo), f.b.median + 6 * (f.b.hi - f.b.lo)],
        rs: [1e-4, f.s.median + 8 * (f.s.hi - f.s.lo)],
      },
    ) as Record<'a' | 'b' | 's', number[]>;
    for (const k of ['a', 'b', 's'] as const) {
      const sd = 0.5 * (ref[k][2] - ref[k][0]);
      expect(Math.abs(f[k].lo - ref[k][0])).toBeLessThan(0.15 * sd);
      expect(Math.abs(f[k].median - ref[k][1])).toBeLessThan(0.15 * sd);
      expect(Math.abs(f[k].hi - ref[k][2])).toBeLessThan(0.15 * sd);
    }
  });

  it('deconvolvedLogLikelihood equals a scipy.stats.norm sum', () => {
    const p = gaussianPopulation(10, truth, 9, { sx: [0.05, 0.15], sy: [0.1, 0.3], rho: 0.5 });
    const ours = deconvolvedLogLikelihood(p, 10, 1.1, 0.7, 0.25);
    const ref = runPython(
      `
import numpy as np
from scipy.stats import norm
d = json.load(sys.stdin)
x, y, cxx, cyy, cxy = (np.array(d[k]) for k in ('x', 'y', 'cxx', 'cyy', 'cxy'))
v = 0.25**2 + cyy - 2*0.7*cxy + 0.7**2*cxx
print(json.dumps(float(norm.logpdf(y, 1.1 + 0.7*(x - 10), np.sqrt(v)).sum())))
`,
      { x: Array.from(p.x), y: Array.from(p.y), cxx: Array.from(p.cxx), cyy: Array.from(p.cyy), cxy: Array.from(p.cxy) },
    ) as number;
    expect(Math.abs(ours - ref)).toBeLessThan(1e-9);
  });
});
