import { describe, expect, it } from 'vitest';
import { countModes, DEFAULT_THRESHOLDS, isMultimodal, modeAnalysis, priorEdgeMass } from '../../../src/lib/core/stats/diagnostics.ts';
import { sampleMoments } from '../../../src/lib/core/stats/density.ts';
import { sortDraws } from '../../../src/lib/core/stats/summary.ts';
import { normals, ones, uniforms } from './_random.ts';

/** Equal mixture of N(-d/2, 1) and N(d/2, 1): bimodal exactly when d > 2 (closed form; Robertson & Fryer 1969). */
function mixtureDensity(d: number): Float64Array {
  const n = 4001;
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const x = -8 + (16 * i) / (n - 1);
    out[i] = Math.exp(-0.5 * (x - d / 2) ** 2) + Math.exp(-0.5 * (x + d / 2) ** 2);
  }
  return out;
}

function mixtureDraws(d: number, n: number, seed: number): Float64Array {
  const a = normals(n / 2, seed, -d / 2);
  const b = normals(n / 2, seed + 1, d / 2);
  return new Float64Array([...a, ...b]);
}

describe('countModes', () => {
  it.each([
    [1.8, 1],
    [1.95, 1],
    [2.05, 2],
    [2.5, 2],
  ])('equal two-Gaussian mixture at separation %f sigma has %i mode(s)', (d, modes) => {
    expect(countModes(mixtureDensity(d))).toBe(modes);
  });

  it('handles plateaus, end peaks and prominence', () => {
    expect(countModes(new Float64Array([0, 1, 1, 0]))).toBe(1);
    expect(countModes(new Float64Array([3, 1, 2]))).toBe(2);
    expect(countModes(new Float64Array([2, 2, 2]))).toBe(1);
    expect(countModes(new Float64Array([0, 10, 9.9, 10, 0]))).toBe(2);
    expect(countModes(new Float64Array([0, 10, 9.9, 10, 0]), { minProminence: 0.05 })).toBe(1);
    expect(countModes(new Float64Array([0, 10, 2, 8, 0]), { minProminence: 0.05 })).toBe(2);
  });
});

describe('isMultimodal (KDE at half the Silverman bandwidth, basins of at least 10% mass)', () => {
  it('is false for a single Gaussian and for a 1-sigma mixture, true at 4 sigma', () => {
    expect(isMultimodal(normals(5000, 1), ones(5000))).toBe(false);
    expect(isMultimodal(mixtureDraws(1, 5000, 3), ones(5000))).toBe(false);
    expect(isMultimodal(mixtureDraws(4, 5000, 5), ones(5000))).toBe(true);
  });

  it('is false with the draws of a typical posterior (512 draws, many seeds)', () => {
    let falsePositives = 0;
    for (let s = 0; s < 40; s++) if (isMultimodal(normals(512, 100 + s), ones(512))) falsePositives++;
    expect(falsePositives).toBeLessThanOrEqual(1);
  });

  it('works on importance-weighted draws and ignores a minor mode below the mass threshold', () => {
    // uniform proposal on [-6, 6] weighted to the 4-sigma mixture
    const x = uniforms(20_000, 9, -6, 6);
    const w = x.map((v) => Math.exp(-0.5 * (v - 2) ** 2) + Math.exp(-0.5 * (v + 2) ** 2));
    const a = modeAnalysis(x, w);
    expect(a.modes).toBe(2);
    expect(a.secondaryMass).toBeGreaterThan(0.45);
    const small = new Float64Array([...normals(4750, 11, 0), ...normals(250, 12, 6)]); // 5% at +6 sigma
    expect(isMultimodal(small, ones(5000))).toBe(false);
    expect(isMultimodal(small, ones(5000), { minMass: 0.02 })).toBe(true);
  });
});

describe('modeAnalysis with a shared sort', () => {
  it('gives the same result with moments from sortDraws as on its own', () => {
    for (let s = 0; s < 10; s++) {
      const x = s % 2 ? mixtureDraws(3, 512, 200 + s) : normals(512, 200 + s);
      const w = uniforms(512, 300 + s, 0.05, 1);
      const opts = { minMass: 0.1, bandwidthFactor: 1, maxValleyRatio: 0.5 };
      expect(modeAnalysis(x, w, { ...opts, moments: sampleMoments(x, w, sortDraws(x, w)) })).toEqual(modeAnalysis(x, w, opts));
    }
  });

  it('counts the two modes of a 4-sigma mixture of 512 draws and one for a Gaussian (the kernel rule)', () => {
    // equal mixture of N(-2, 1) and N(2, 1): valley 2 phi(2) / (phi(0) + phi(4)) = 0.27 of the
    // peaks (closed form), well below the rule's 0.5 even after the KDE's smoothing
    const opts = { minMass: 0.1, bandwidthFactor: 1, maxValleyRatio: 0.5 };
    expect(modeAnalysis(mixtureDraws(4, 512, 400), ones(512), opts).modes).toBe(2);
    expect(modeAnalysis(normals(512, 401), ones(512), opts).modes).toBe(1);
  });
});

describe('priorEdgeMass', () => {
  it('counts the weight within widthFraction of the prior range at either bound', () => {
    const x = new Float64Array([0.01, 0.5, 0.99, 0.3, 0.015]);
    const w = new Float64Array([1, 1, 2, 1, 0]);
    // range [0, 1], band 0.02: draws 0.01 (w 1) and 0.99 (w 2) of total 5
    expect(priorEdgeMass(x, w, { min: 0, max: 1 }, 0.02)).toBeCloseTo(3 / 5, 15);
    expect(priorEdgeMass(x, w, { min: 0, max: 1 }, 0.005)).toBe(0);
    // only a lower bound: range from 0 to the farthest draw (0.99), band 0.0198
    expect(priorEdgeMass(x, w, { min: 0 }, 0.02)).toBeCloseTo(1 / 5, 15);
    expect(priorEdgeMass(x, w, {}, 0.02)).toBe(0);
  });

  it('a posterior piled at a bound exceeds the default threshold; a central one does not', () => {
    const piled = uniforms(2000, 3).map((u) => -Math.log(1 - u) * 0.02); // exponential, scale 0.02, at bound 0
    expect(priorEdgeMass(piled, ones(2000), { min: 0, max: 1 }, DEFAULT_THRESHOLDS.priorEdgeWidth)).toBeGreaterThan(
      DEFAULT_THRESHOLDS.priorEdgeMass,
    );
    const central = normals(2000, 4, 0.5, 0.1);
    expect(priorEdgeMass(central, ones(2000), { min: 0, max: 1 }, DEFAULT_THRESHOLDS.priorEdgeWidth)).toBe(0);
  });

  it('DEFAULT_THRESHOLDS holds the documented values and is frozen', () => {
    expect(DEFAULT_THRESHOLDS).toEqual({ minEss: 50, minChi2Pvalue: 0.001, priorEdgeWidth: 0.02, priorEdgeMass: 0.2, multimodalMinMass: 0.1 });
    expect(Object.isFrozen(DEFAULT_THRESHOLDS)).toBe(true);
  });
});
