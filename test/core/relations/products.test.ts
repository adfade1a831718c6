import { describe, expect, it } from 'vitest';
import { makeCosmology } from '../../../src/lib/core/cosmology.ts';
import { makeRng } from '../../../src/lib/core/random.ts';
import { fitMixture } from '../../../src/lib/core/relations/mixture.ts';
import { relationOffsets } from '../../../src/lib/core/relations/outliers.ts';
import { IMF_FACTORS, referenceRelation } from '../../../src/lib/core/relations/reference.ts';
import { runningMedian, runningMedianPoints } from '../../../src/lib/core/relations/running.ts';
import { PosterityError } from '../../../src/lib/core/problems.ts';

describe('relationOffsets', () => {
  it('offset = y - (a + b (x - pivot)), tension = offset / sqrt(s^2 + Cyy - 2 b Cxy + b^2 Cxx) (hand values)', () => {
    const fit = { a: { median: 1, lo: 0, hi: 2 }, b: { median: 2, lo: 0, hi: 0 }, s: { median: 0.3, lo: 0, hi: 0 }, pivot: 10 };
    const r = relationOffsets(fit, Float64Array.of(10.5), Float64Array.of(2.5), Float64Array.of(0.01), Float64Array.of(0.04), Float64Array.of(0.005));
    // 2.5 - (1 + 2 * 0.5) = 0.5; variance 0.09 + 0.04 - 0.02 + 0.04 = 0.15
    expect(r.offset[0]).toBeCloseTo(0.5, 12);
    expect(r.tension[0]).toBeCloseTo(0.5 / Math.sqrt(0.15), 12);
  });
});

describe('referenceRelation (Speagle et al. 2014, from memory)', () => {
  const cosmo = makeCosmology({ H0: 70, Om0: 0.3, Ode0: 0.7 });
  it('in its own Kroupa IMF reproduces the formula at t(z) of the cosmology', () => {
    const r = referenceRelation('speagle2014', 'Kroupa', cosmo);
    // flat LCDM (70, 0.3, 0.7) is 13.47 Gyr old today (standard value, from memory)
    const t = 13.47;
    expect(Math.abs(r.evaluate(10, 0) - ((0.84 - 0.026 * t) * 10 - (6.51 - 0.11 * t)))).toBeLessThan(0.01);
    expect(r.validity).toEqual({ xMin: 9.7, xMax: 11.1, zMin: 0, zMax: 6 });
    expect(r.citation).toMatch(/Speagle/);
  });
  it('converts to Chabrier with the Madau & Dickinson (2014) factors 0.61/0.66 (mass) and 0.63/0.67 (SFR)', () => {
    const k = referenceRelation('speagle2014', 'Kroupa', cosmo);
    const c = referenceRelation('speagle2014', 'Chabrier', cosmo);
    const dM = Math.log10(0.66 / 0.61);
    // a Chabrier galaxy of log M is a Kroupa galaxy of log M + dM; its SFR scales by 0.63 / 0.67
    expect(c.evaluate(10, 1)).toBeCloseTo(k.evaluate(10 + dM, 1) + Math.log10(0.63 / 0.67), 12);
    expect(c.validity.xMin).toBeCloseTo(9.7 - dM, 12);
    expect(c.note).toMatch(/Madau & Dickinson/);
    expect(IMF_FACTORS.Salpeter).toEqual({ mass: 1, sfr: 1 });
  });
  it('refuses unknown relations', () => {
    expect(() => referenceRelation('nope', 'Kroupa', cosmo)).toThrow(PosterityError);
  });
});

describe('runningMedian', () => {
  it('on point estimates finds the median of a known line and a bootstrap interval of about 1.2533 sd / sqrt(n)', () => {
    const rng = makeRng(3);
    const n = 4000;
    const x = new Float64Array(n), y = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      x[i] = 9 + 2 * rng.next();
      y[i] = 0.5 * x[i] + 0.2 * rng.normal();
    }
    const r = runningMedianPoints(x, y, { edges: Float64Array.of(9, 10, 11), nBoot: 300, seed: 1 });
    expect(Array.from(r.n)).toEqual([r.n[0], n - r.n[0]]);
    // the bin's median is the line at the bin centre; the y spread adds the line's slope over the bin
    expect(Math.abs(r.median[0] - 0.5 * 9.5)).toBeLessThan(0.03);
    // asymptotic sd of a sample median: sqrt(pi / 2) sigma / sqrt(n) (standard result); half-width of the 16-84% interval
    const spread = Math.sqrt(0.2 ** 2 + 0.5 ** 2 / 12);
    const expected = 1.2533 * spread / Math.sqrt(r.n[0]);
    expect(Math.abs(0.5 * (r.medianHi[0] - r.medianLo[0]) / expected - 1)).toBeLessThan(0.35);
  });

  it('from draws resamples objects and draws: wider posteriors widen the median interval', () => {
    const rng = makeRng(4);
    const n = 800, K = 16;
    const make = (err: number) => {
      const x = new Float64Array(n * K), y = new Float64Array(n * K), w = new Float64Array(n * K).fill(1), offsets = new Int32Array(n + 1);
      for (let i = 0; i < n; i++) {
        const xt = 9.2 + 0.6 * rng.next();
        const yt = 0.5 * xt + 0.1 * rng.normal();
        offsets[i] = i * K;
        for (let k = 0; k < K; k++) {
          x[i * K + k] = xt;
          y[i * K + k] = yt + err * rng.normal();
        }
      }
      offsets[n] = n * K;
      return runningMedian({ x, y, w, offsets }, { edges: Float64Array.of(9, 10), nBoot: 200, seed: 2 });
    };
    const narrow = make(0.01);
    const wide = make(0.5);
    expect(narrow.n[0]).toBeCloseTo(n, 9);
    expect(wide.medianHi[0] - wide.medianLo[0]).toBeGreaterThan(2 * (narrow.medianHi[0] - narrow.medianLo[0]));
    expect(wide.p84[0] - wide.p16[0]).toBeGreaterThan(narrow.p84[0] - narrow.p16[0]);
  });
});

describe('fitMixture', () => {
  it('separates a sequence from a broad component and recovers the sequence', () => {
    const rng = makeRng(8);
    const n = 1500;
    const x = new Float64Array(n), y = new Float64Array(n), cxx = new Float64Array(n).fill(0.0025), cyy = new Float64Array(n).fill(0.01), cxy = new Float64Array(n);
    const onSeq: boolean[] = [];
    for (let i = 0; i < n; i++) {
      x[i] = 9.5 + rng.next() * 1.5;
      const seq = rng.next() < 0.75;
      onSeq.push(seq);
      y[i] = (seq ? 0.3 + 0.8 * (x[i] - 10) + 0.25 * rng.normal() : -1 + 0.8 * rng.normal()) + 0.1 * rng.normal();
    }
    const f = fitMixture({ x, y, cxx, cyy, cxy }, { pivot: 10, seed: 1 });
    for (const [est, t] of [[f.a, 0.3], [f.b, 0.8], [f.s, 0.25], [f.sequenceFraction, 0.75]] as const) {
      expect(Math.abs(est.median - t)).toBeLessThan(4 * 0.5 * (est.hi - est.lo));
    }
    let mSeq = 0, mOff = 0;
    for (let i = 0; i < n; i++) (onSeq[i] ? (mSeq += f.membership[i]) : (mOff += f.membership[i]));
    expect(mSeq / onSeq.filter(Boolean).length).toBeGreaterThan(0.8);
    expect(mOff / onSeq.filter((v) => !v).length).toBeLessThan(0.45);
  });

  it('keeps a proper posterior when the broad component is nearly empty: bounded, and the chains converge', () => {
    // a sequence alone (f near 1): the data say little about the broad component, whose mean and
    // width then follow their priors, bounded by the range of y (without the bounds they drift off)
    const rng = makeRng(21);
    const n = 280;
    const x = new Float64Array(n), y = new Float64Array(n), cxx = new Float64Array(n).fill(0.01), cyy = new Float64Array(n).fill(0.02), cxy = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      x[i] = 9 + 2 * rng.next();
      y[i] = 0.5 + 0.8 * (x[i] - 10) + 0.25 * rng.normal() + 0.14 * rng.normal();
    }
    const yLo = Math.min(...y), yHi = Math.max(...y);
    const f = fitMixture({ x, y, cxx, cyy, cxy }, { pivot: 10, seed: 3, nSteps: 1500, converge: { rhat: 1.05, maxSteps: 6000 } });
    expect(f.sequenceFraction.median).toBeGreaterThan(0.85);
    expect(f.broad.mean.lo).toBeGreaterThanOrEqual(yLo);
    expect(f.broad.mean.hi).toBeLessThanOrEqual(yHi);
    expect(f.broad.sd.hi).toBeLessThanOrEqual(yHi - yLo);
    expect(Math.max(...f.diagnostics.rhat!)).toBeLessThan(1.1);
    expect(f.diagnostics.nSteps).toBeLessThanOrEqual(6000);
    for (const [est, t] of [[f.a, 0.5], [f.b, 0.8]] as const) expect(Math.abs(est.median - t)).toBeLessThan(4 * 0.5 * (est.hi - est.lo));
  });
});
