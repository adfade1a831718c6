import { describe, expect, it } from 'vitest';
import {
  correlationFromCovariance,
  hdi,
  sortDraws,
  summarise,
  weightedCovariance,
  weightedMean,
  weightedQuantiles,
  weightedStd,
} from '../../../src/lib/core/stats/summary.ts';
import { normalPpf } from '../../../src/lib/core/stats/special.ts';
import { describeWithPython, runPython } from '../../helpers/python.ts';
import { normals, ones, rng, uniforms } from './_random.ts';

/** Hyndman & Fan (1996) definition 5 (Hazen): Q(p) from sorted x with m = 1/2, clamped. */
function hazen(sorted: number[], p: number): number {
  const n = sorted.length;
  const h = n * p + 0.5; // 1-based position
  if (h <= 1) return sorted[0];
  if (h >= n) return sorted[n - 1];
  const j = Math.floor(h);
  const g = h - j;
  return (1 - g) * sorted[j - 1] + g * sorted[j];
}

describe('weightedQuantiles', () => {
  it('worked example: equal weights on 1..4 (Hazen positions 0.125, 0.375, 0.625, 0.875)', () => {
    const q = weightedQuantiles(new Float64Array([4, 2, 1, 3]), ones(4), [0, 0.1, 0.25, 0.5, 0.875, 0.9, 1]);
    // positions (i - 0.5)/n; below 0.125 and above 0.875 clamp to the extremes
    expect(Array.from(q)).toEqual([1, 1, 1.5, 2.5, 4, 4, 4]);
  });

  it('reduces to Hazen type 5 (Hyndman & Fan 1996) with equal weights', () => {
    const x = normals(101, 3);
    const sorted = Array.from(x).sort((a, b) => a - b);
    const probs = [0.001, 0.025, 0.16, 0.3, 0.5, 0.84, 0.975, 0.999];
    const q = weightedQuantiles(x, ones(101), probs);
    probs.forEach((p, k) => expect(q[k]).toBeCloseTo(hazen(sorted, p), 12));
  });

  it('ignores zero-weight draws and is invariant to weight scale', () => {
    const x = new Float64Array([1, 2, 100, 3, 4]);
    const w = new Float64Array([1, 1, 0, 1, 1]);
    const q = weightedQuantiles(x, w, [0.25, 0.5, 0.75]);
    expect(Array.from(q)).toEqual([1.5, 2.5, 3.5]);
    const q2 = weightedQuantiles(x, w.map((v) => v * 1e-6), [0.25, 0.5, 0.75]);
    expect(Array.from(q2)).toEqual(Array.from(q));
  });

  it('weighted example by hand: weights 1:3 on x = 0, 1', () => {
    // positions: x=0 at 0.5/4 = 0.125, x=1 at (1 + 1.5)/4 = 0.625; median at (0.5-0.125)/0.5 = 0.75
    const q = weightedQuantiles(new Float64Array([0, 1]), new Float64Array([1, 3]), [0.5, 0.1, 0.9]);
    expect(q[0]).toBeCloseTo(0.75, 14);
    expect(q[1]).toBe(0);
    expect(q[2]).toBe(1);
  });

  it('recovers analytic quantiles of a standard normal from importance-weighted draws', () => {
    // draws from N(0, 2^2) reweighted to N(0, 1): w = phi(x) / phi(x / 2)
    const x = normals(200_000, 11, 0, 2);
    const w = x.map((v) => Math.exp(-0.5 * v * v + 0.125 * v * v));
    const probs = [0.025, 0.16, 0.5, 0.84, 0.975];
    const q = weightedQuantiles(x, w, probs);
    probs.forEach((p, k) => expect(q[k]).toBeCloseTo(normalPpf(p), 1));
  });
});

describe('weightedMean and weightedStd', () => {
  it('match closed forms on a worked example', () => {
    const x = new Float64Array([1, 2, 3]);
    const w = new Float64Array([1, 2, 1]);
    expect(weightedMean(x, w)).toBe(2);
    // population-style: (1*1 + 0 + 1*1) / 4 = 0.5
    expect(weightedStd(x, w)).toBeCloseTo(Math.sqrt(0.5), 15);
  });
});

describe('hdi', () => {
  it('worked examples on discrete draws', () => {
    const x = new Float64Array([0, 1, 2, 3, 10]);
    expect(hdi(x, ones(5), 0.6)).toEqual([0, 2]); // 3 draws needed, shortest is 0..2
    expect(hdi(x, new Float64Array([1, 1, 1, 1, 6]), 0.6)).toEqual([10, 10]);
    expect(hdi(x, ones(5), 1)).toEqual([0, 10]);
  });

  it('Exp(1): HDI at level L is [0, -ln(1 - L)] (closed form, decreasing density)', () => {
    const u = uniforms(200_000, 5);
    const x = u.map((v) => -Math.log(1 - v));
    const [lo, hi] = hdi(x, ones(x.length), 0.68);
    expect(lo).toBeLessThan(0.002);
    expect(hi).toBeCloseTo(-Math.log(0.32), 1);
    expect(Math.abs(hi + Math.log(0.32))).toBeLessThan(0.02);
  });

  it('standard normal: 95% HDI is +-1.95996 (symmetric unimodal; normal quantile)', () => {
    const x = normals(200_000, 8);
    const [lo, hi] = hdi(x, ones(x.length), 0.95);
    expect(Math.abs(lo + 1.959964)).toBeLessThan(0.03);
    expect(Math.abs(hi - 1.959964)).toBeLessThan(0.03);
  });

  it('spans the gap between two modes when one mode holds less than the level', () => {
    const a = normals(5000, 1, -10, 0.1);
    const b = normals(5000, 2, 10, 0.1);
    const x = new Float64Array([...a, ...b]);
    const [lo, hi] = hdi(x, ones(x.length), 0.68);
    expect(lo).toBeLessThan(-9);
    expect(hi).toBeGreaterThan(9);
  });

  it('rejects a level outside (0, 1]', () => {
    expect(() => hdi(new Float64Array([1]), ones(1), 0)).toThrow(/credible level/);
    expect(() => hdi(new Float64Array([1]), ones(1), 1.5)).toThrow(/credible level/);
  });
});

describe('weightedCovariance and correlationFromCovariance', () => {
  it('perfectly correlated and anti-correlated columns give +-1', () => {
    const x = normals(1000, 4);
    const cov = weightedCovariance([x, x.map((v) => 2 * v + 1), x.map((v) => -v)], uniforms(1000, 9, 0.1, 1));
    const r = correlationFromCovariance(cov, 3);
    expect(r[1]).toBeCloseTo(1, 12);
    expect(r[2]).toBeCloseTo(-1, 12);
    expect(r[5]).toBeCloseTo(-1, 12);
    expect(cov[4]).toBeCloseTo(4 * cov[0], 12); // Var(2x + 1) = 4 Var(x)
  });
});

describe('summarise', () => {
  it('agrees with the separate functions and survives workspace reuse at different sizes', () => {
    for (const n of [3, 2000, 17, 512]) {
      const x = normals(n, n);
      const w = uniforms(n, n + 1);
      const s = summarise(x, w);
      const q = weightedQuantiles(x, w, [0.025, 0.16, 0.5, 0.84, 0.975]);
      expect(s.mean).toBeCloseTo(weightedMean(x, w), 12);
      expect(s.std).toBeCloseTo(weightedStd(x, w), 12);
      expect([s.p025, s.p16, s.p50, s.p84, s.p975]).toEqual(Array.from(q));
      expect(s.hdi68).toEqual(hdi(x, w, 0.68));
      expect(s.hdi95).toEqual(hdi(x, w, 0.95));
    }
  });

  it('sortDraws sorts correctly with many ties and adversarial orders', () => {
    const u = rng(2);
    for (const make of [
      (i: number) => Math.floor(u() * 5),
      (i: number) => i,
      (i: number) => -i,
      (i: number) => (i % 2 ? i : -i),
      () => 7,
    ]) {
      const x = Float64Array.from({ length: 1000 }, (_, i) => make(i));
      const w = Float64Array.from({ length: 1000 }, (_, i) => i + 1);
      const s = sortDraws(x, w);
      for (let i = 1; i < s.n; i++) expect(s.x[i]).toBeGreaterThanOrEqual(s.x[i - 1]);
      // weights travelled with their values
      let wx = 0;
      let wxSorted = 0;
      for (let i = 0; i < 1000; i++) {
        wx += w[i] * x[i];
        wxSorted += s.w[i] * s.x[i];
      }
      expect(wxSorted).toBeCloseTo(wx, 6);
    }
  });

  it('sortDraws is exact for values that differ only in their lowest bits, and for mixed signs and -0', () => {
    const u = rng(5);
    const narrow = Float64Array.from({ length: 600 }, () => 1 + Math.floor(u() * 4000) * 2 ** -52);
    const mixed = Float64Array.from({ length: 300 }, (_, i) => (i % 3 === 0 ? -0 : (u() - 0.5) * 10 ** Math.floor(u() * 20 - 10)));
    for (const x of [narrow, mixed]) {
      const s = sortDraws(x, ones(x.length));
      const ref = Float64Array.from(x).sort();
      expect(Array.from(s.x.subarray(0, s.n))).toEqual(Array.from(ref));
    }
  });
});

describeWithPython('summaries against numpy (equal and unequal weights)', ['numpy'], () => {
  it('equal-weight quantiles equal numpy.quantile(method="hazen"); weighted mean/std/cov equal numpy', () => {
    const n = 257;
    const x = normals(n, 21, 1, 3);
    const y = Float64Array.from(x, (v, i) => 0.5 * v + Math.sin(i));
    const w = uniforms(n, 22, 0, 2);
    const probs = [0.01, 0.025, 0.16, 0.5, 0.84, 0.975, 0.99];
    const ref = runPython(
      `import numpy as np
d = json.load(sys.stdin)
x = np.array(d['x']); y = np.array(d['y']); w = np.array(d['w'])
m = np.average(x, weights=w)
print(json.dumps({
  'q': np.quantile(x, d['p'], method='hazen').tolist(),
  'mean': m, 'std': float(np.sqrt(np.average((x - m) ** 2, weights=w))),
  'cov': np.cov(np.vstack([x, y]), aweights=w, bias=True).ravel().tolist(),
}))`,
      { x: Array.from(x), y: Array.from(y), w: Array.from(w), p: probs },
    ) as { q: number[]; mean: number; std: number; cov: number[] };
    const q = weightedQuantiles(x, ones(n), probs);
    ref.q.forEach((v, k) => expect(q[k]).toBeCloseTo(v, 12));
    expect(weightedMean(x, w)).toBeCloseTo(ref.mean, 12);
    expect(weightedStd(x, w)).toBeCloseTo(ref.std, 12);
    const cov = weightedCovariance([x, y], w);
    ref.cov.forEach((v, k) => expect(cov[k]).toBeCloseTo(v, 11));
  });
});
