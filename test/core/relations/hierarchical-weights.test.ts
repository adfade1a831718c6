/**
 * Per-object weights of the hierarchical fit (`objectWeight`: probability of bin membership,
 * a weighted likelihood). The identities checked are algebraic consequences of multiplying
 * each object's log marginal likelihood, normalisation included, by f_i:
 *  - f = 1 for every object is the unweighted fit (bit for bit);
 *  - f_j = 0 is the fit without object j (bit for bit: the object leaves the data first);
 *  - two copies of an object at f = 0.5 are one copy at f = 1 (equal up to rounding);
 *  - the log posterior is affine in f_j, so f_j = 0.5 is the mean of f_j = 1 and f_j = 0.
 */
import { describe, expect, it } from 'vitest';
import { fitHierarchical, hierarchicalLogPosterior, type HierarchicalData } from '../../../src/lib/core/relations/hierarchical.ts';
import { PosterityError } from '../../../src/lib/core/problems.ts';
import { skewedPopulation } from './simulate.ts';

const truth = { a: 1, b: 0.8, s: 0.25, mu: 10, tau: 0.5, pivot: 10 };
const sim = { n: 40, draws: 24, xMin: 9.6, sF: 0.25, sG: 0.15 };
const hev = { c: 1.2, h: 0.25, xLo: sim.xMin, k: 1.5 };
// maxDraws >= draws: no sub-sampling, so adding or removing an object cannot shift the
// sub-sampling random numbers of the others
const opts = { pivot: 10, seed: 3, selection: { xMin: sim.xMin }, maxDraws: 64 };
const thetas = [
  [1, 0.8, Math.log(0.25), 10, Math.log(0.5)],
  [0.9, 1.1, Math.log(0.4), 9.8, Math.log(0.7)],
  [1.2, 0.3, Math.log(0.1), 10.3, Math.log(0.3)],
].map((t) => Float64Array.from(t));

/** The data with object j removed (j < 0: none) and object d appended again (d < 0: none). */
function edit(p: HierarchicalData, drop: number, dup = -1): HierarchicalData {
  const n = p.offsets.length - 1;
  const order = [...Array(n).keys()].filter((i) => i !== drop);
  if (dup >= 0) order.push(dup);
  const x: number[] = [], y: number[] = [], w: number[] = [], lp: number[] = [], dz: number[] = [];
  const offsets = [0];
  for (const i of order) {
    for (let j = p.offsets[i]; j < p.offsets[i + 1]; j++) {
      x.push(p.x[j]);
      y.push(p.y[j]);
      w.push(p.w[j]);
      lp.push(p.logPrior[j]);
    }
    offsets.push(x.length);
    if (p.dz) dz.push(p.dz[i]);
  }
  return {
    x: Float64Array.from(x), y: Float64Array.from(y), w: Float64Array.from(w), logPrior: Float64Array.from(lp), offsets: Int32Array.from(offsets),
    ...(p.dz ? { dz: Float64Array.from(dz) } : {}),
  };
}

const withWeights = (p: HierarchicalData, f: number[]): HierarchicalData => ({ ...p, objectWeight: Float64Array.from(f) });

describe('hierarchical fit with per-object weights', () => {
  for (const [label, ev] of [['without dz', undefined], ['with dz', hev]] as const) {
    const p = skewedPopulation(truth, 17, sim, ev);
    const n = sim.n;
    const dim = ev ? 6 : 5;
    const at = (t: Float64Array) => (dim === 6 ? Float64Array.of(...t, 0.9) : t);

    it(`${label}: weights all 1 give the unweighted log posterior and fit, bit for bit`, () => {
      const plain = hierarchicalLogPosterior(p, opts);
      const ones = hierarchicalLogPosterior(withWeights(p, Array(n).fill(1)), opts);
      for (const t of thetas) expect(ones.logPost(at(t))).toBe(plain.logPost(at(t)));
      const fo = { ...opts, nWalkers: 12, nSteps: 40 };
      const f0 = fitHierarchical(p, fo);
      const f1 = fitHierarchical(withWeights(p, Array(n).fill(1)), fo);
      expect(f1.draws).toEqual(f0.draws);
      expect([f1.a, f1.b, f1.s, f1.xModel.mu, f1.xModel.tau]).toEqual([f0.a, f0.b, f0.s, f0.xModel.mu, f0.xModel.tau]);
      expect(f1.effectiveDraws).toEqual(f0.effectiveDraws);
      expect(f1.n).toBe(f0.n);
    });

    it(`${label}: weight 0 on an object is the same as leaving it out`, () => {
      const j = 7;
      const f = Array(n).fill(1);
      f[j] = 0;
      const zero = hierarchicalLogPosterior(withWeights(p, f), opts);
      const dropped = hierarchicalLogPosterior(edit(p, j), opts);
      const full = hierarchicalLogPosterior(p, opts);
      for (const t of thetas) {
        expect(zero.logPost(at(t))).toBe(dropped.logPost(at(t)));
        expect(zero.logPost(at(t))).not.toBe(full.logPost(at(t))); // the object did count before
      }
      const fo = { ...opts, nWalkers: 12, nSteps: 40 };
      const fz = fitHierarchical(withWeights(p, f), fo);
      const fd = fitHierarchical(edit(p, j), fo);
      expect(fz.draws).toEqual(fd.draws);
      expect(fz.n).toBe(n - 1);
      // effectiveDraws keeps one entry per object given
      expect(fz.effectiveDraws.length).toBe(n);
      expect(Array.from(fz.effectiveDraws).filter((_, i) => i !== j)).toEqual(Array.from(fd.effectiveDraws));
    });

    it(`${label}: weight 0.5 on each of two copies of an object equals weight 1 on one copy; the log posterior is affine in a weight`, () => {
      const j = 11;
      const twice = edit(p, -1, j); // object j also appended at the end
      const f = Array(n + 1).fill(1);
      f[j] = 0.5;
      f[n] = 0.5;
      const halves = hierarchicalLogPosterior(withWeights(twice, f), opts);
      const once = hierarchicalLogPosterior(p, opts);
      const unweightedTwice = hierarchicalLogPosterior(twice, opts);
      const half = Array(n).fill(1);
      half[j] = 0.5;
      const halfJ = hierarchicalLogPosterior(withWeights(p, half), opts);
      const none = hierarchicalLogPosterior(edit(p, j), opts);
      for (const t of thetas) {
        const v1 = once.logPost(at(t));
        // the sums over objects run in a different order, so equal up to rounding only
        expect(Math.abs(halves.logPost(at(t)) - v1)).toBeLessThan(1e-12 * Math.abs(v1));
        expect(Math.abs(unweightedTwice.logPost(at(t)) - v1)).toBeGreaterThan(1e-3); // a plain duplicate counts twice
        const mid = 0.5 * (v1 + none.logPost(at(t)));
        expect(Math.abs(halfJ.logPost(at(t)) - mid)).toBeLessThan(1e-12 * Math.abs(mid));
      }
    });
  }

  it('refuses weights of the wrong length or outside [0, 1], naming the row', () => {
    const p = skewedPopulation(truth, 17, sim);
    const n = sim.n;
    expect(() => hierarchicalLogPosterior(withWeights(p, Array(n - 1).fill(1)), opts)).toThrow(PosterityError);
    expect(() => hierarchicalLogPosterior(withWeights(p, Array(n - 1).fill(1)), opts)).toThrow(/objectWeight must have one value per object/);
    for (const bad of [NaN, -0.1, 1.5, Infinity]) {
      const f = Array(n).fill(1);
      f[4] = bad;
      let err: unknown;
      try {
        hierarchicalLogPosterior(withWeights(p, f), opts);
      } catch (e) {
        err = e;
      }
      expect(err).toBeInstanceOf(PosterityError);
      expect(String((err as Error).message)).toMatch(/objectWeight of object 5 is not a probability in \[0, 1\]/);
      expect((err as PosterityError).problems[0]).toMatchObject({ row: 5, column: 'objectWeight' });
    }
    // all zero leaves too few objects
    expect(() => hierarchicalLogPosterior(withWeights(p, Array(n).fill(0)), opts)).toThrow(/at least 5 objects/);
  });
});
