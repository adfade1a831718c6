/**
 * Per-object weights (membership probabilities) in the deconvolved and mixture fits, and the
 * per-draw mask of the running median; without them the fits are unchanged to the last bit.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { deconvolvedLogLikelihood, fitDeconvolved, marginalPosterior, marginalPosteriorWithCovariate } from '../../../src/lib/core/relations/deconvolved.ts';
import { fitMixture } from '../../../src/lib/core/relations/mixture.ts';
import { runningMedian } from '../../../src/lib/core/relations/running.ts';
import { PosterityError } from '../../../src/lib/core/problems.ts';
import { makeRng } from '../../../src/lib/core/random.ts';
import { gaussianPopulation } from './simulate.ts';
import { unweightedOutputs } from './unweighted-golden.ts';

const truth = { a: 1, b: 0.8, s: 0.3, mu: 10, tau: 0.5, pivot: 10 };
const golden = JSON.parse(readFileSync(new URL('./fixtures/unweighted-golden.json', import.meta.url), 'utf8'));

describe('fits without object weights', () => {
  it('reproduce the outputs computed before weights were added, to the last bit', () => {
    // the fixture was written by `unweightedOutputs` with the code as it was before weights were added, and
    // written again when the ensemble sampler began drawing each half's proposals before evaluating them
    // together (a new order of its random numbers, so new chains; the weights were not touched), and the
    // mixture parts again when the broad component got bounded priors (its mean within the range of y, its
    // width below that range)
    expect(JSON.parse(JSON.stringify(unweightedOutputs()))).toEqual(golden);
  });
});

describe('deconvolved fit with objectWeight', () => {
  const p = gaussianPopulation(60, truth, 12, { sx: [0.05, 0.1], sy: [0.1, 0.3], rho: 0.3 });
  const rng = makeRng(3);
  const w = Float64Array.from(p.x, () => rng.next());
  const dz = Float64Array.from(p.x, () => rng.next() - 0.5);

  it('multiplies each object term of the log-likelihood by its weight (can fail)', () => {
    // direct sum of f_i times the Gaussian term of object i, against the function
    let direct = 0;
    const [a, b, s, c] = [1.1, 0.7, 0.25, 0.3];
    for (let i = 0; i < p.x.length; i++) {
      const v = s * s + p.cyy[i] - 2 * b * p.cxy[i] + b * b * p.cxx[i];
      const r = p.y[i] - a - b * (p.x[i] - 10) - c * dz[i];
      direct += -0.5 * w[i] * (Math.log(2 * Math.PI * v) + (r * r) / v);
    }
    expect(deconvolvedLogLikelihood({ ...p, dz, objectWeight: w }, 10, a, b, s, c)).toBeCloseTo(direct, 10);
  });

  it('weight 0 is the same as leaving the object out, weight 1 the same as no weight', () => {
    const keep = Array.from({ length: p.x.length }, (_, i) => i).filter((i) => i % 3 !== 0);
    const sub = (col: Float64Array) => Float64Array.from(keep, (i) => col[i]);
    const w01 = Float64Array.from(p.x, (_, i) => (i % 3 === 0 ? 0 : 1));
    const theta = Float64Array.of(0.75, Math.log(0.28));
    const blobA = new Float64Array(5), blobB = new Float64Array(5);
    // differences of the marginal log posterior between two points (the analytic a, c marginal):
    // the centring constants differ between the two data sets, the differences do not
    const theta2 = Float64Array.of(0.9, Math.log(0.33));
    for (const mk of [marginalPosterior, marginalPosteriorWithCovariate]) {
      const full = mk({ ...p, dz, objectWeight: w01 }, 10);
      const part = mk({ x: sub(p.x), y: sub(p.y), cxx: sub(p.cxx), cyy: sub(p.cyy), cxy: sub(p.cxy), dz: sub(dz) }, 10);
      expect(full(theta, blobA) - full(theta2, blobA)).toBeCloseTo(part(theta, blobB) - part(theta2, blobB), 9);
      full(theta, blobA);
      part(theta, blobB);
      expect(blobA[0]).toBeCloseTo(blobB[0], 9); // conditional mean of a
      const ones = mk({ ...p, dz, objectWeight: new Float64Array(p.x.length).fill(1) }, 10);
      const none = mk({ ...p, dz }, 10);
      expect(ones(theta, blobA)).toBeCloseTo(none(theta, blobB), 9);
    }
  });

  it('refuses a weight outside [0, 1], naming the row', () => {
    const bad = Float64Array.from(w);
    bad[4] = 1.5;
    let err: unknown;
    try {
      fitDeconvolved({ ...p, objectWeight: bad }, { pivot: 10, seed: 1, nSteps: 50 });
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(PosterityError);
    expect((err as PosterityError).problems[0].row).toBe(5);
    expect((err as PosterityError).problems[0].column).toBe('objectWeight');
    bad[4] = NaN;
    expect(() => fitDeconvolved({ ...p, objectWeight: bad }, { pivot: 10, seed: 1, nSteps: 50 })).toThrow(/not in \[0, 1\]/);
    expect(() => fitDeconvolved({ ...p, objectWeight: new Float64Array(59) }, { pivot: 10, seed: 1, nSteps: 50 })).toThrow(/one value per object/);
    expect(() => fitDeconvolved({ ...p, objectWeight: new Float64Array(60) }, { pivot: 10, seed: 1, nSteps: 50 })).toThrow(/every object weight is zero/);
  });

  it('the mixture fit refuses bad weights too, and ignores objects of weight 0 (can fail)', () => {
    const bad = Float64Array.from(w);
    bad[9] = -0.1;
    expect(() => fitMixture({ ...p, objectWeight: bad }, { pivot: 10, seed: 1, nSteps: 50 })).toThrow(PosterityError);
    // an absurd object with weight 0 must not move the fit; with weight 1 it would
    const q = { x: Float64Array.from(p.x), y: Float64Array.from(p.y), cxx: p.cxx, cyy: p.cyy, cxy: p.cxy };
    for (let i = 0; i < 8; i++) q.y[i] += 4;
    const w0 = Float64Array.from(p.x, (_, i) => (i < 8 ? 0 : 1));
    const clean = fitMixture({ x: p.x.subarray(8), y: p.y.subarray(8), cxx: p.cxx.subarray(8), cyy: p.cyy.subarray(8), cxy: p.cxy.subarray(8) }, { pivot: 10, seed: 2, nSteps: 300 });
    const weighted = fitMixture({ ...q, objectWeight: w0 }, { pivot: 10, seed: 2, nSteps: 300 });
    const polluted = fitMixture(q, { pivot: 10, seed: 2, nSteps: 300 });
    const sd = 0.5 * (clean.a.hi - clean.a.lo);
    expect(Math.abs(weighted.sequenceFraction.median - clean.sequenceFraction.median)).toBeLessThan(0.05);
    expect(Math.abs(weighted.a.median - clean.a.median)).toBeLessThan(sd);
    expect(clean.sequenceFraction.median - polluted.sequenceFraction.median).toBeGreaterThan(0.05);
  });
});

describe('running median with a draw mask', () => {
  it('bins only the kept draws and counts each object with the weight of its kept draws (can fail)', () => {
    // two objects, four equal-weight draws each; object 1 keeps 1 of its 4 draws
    const d = {
      x: Float64Array.of(0.5, 0.5, 0.5, 0.5, 1.5, 1.5, 1.5, 1.5),
      y: Float64Array.of(1, 2, 3, 4, 10, 20, 30, 40),
      w: new Float64Array(8).fill(1),
      offsets: Int32Array.of(0, 4, 8),
    };
    const drawMask = Uint8Array.of(1, 1, 1, 1, 0, 0, 1, 0);
    const r = runningMedian(d, { edges: Float64Array.of(0, 1, 2), nBoot: 200, seed: 4, drawMask });
    expect(Array.from(r.n)).toEqual([1, 0.25]); // sum of kept shares: 4/4 and 1/4
    expect(r.median[1]).toBe(30); // only the kept draw of object 1 is in its bin
    // replicates pick draws in proportion to weight; a masked pick leaves the object out, so the
    // second bin's replicate median is always 30 or undefined (NaN, skipped)
    expect(r.medianLo[1]).toBe(30);
    expect(r.medianHi[1]).toBe(30);
    expect(() => runningMedian(d, { edges: Float64Array.of(0, 1, 2), nBoot: 0, seed: 4, drawMask: new Uint8Array(3) })).toThrow(PosterityError);
  });
});
