import { describe, expect, it } from 'vitest';
import { kishEss, normaliseWeights } from '../../../src/lib/core/stats/weights.ts';
import { PosterityError } from '../../../src/lib/core/problems.ts';

function problemOf(fn: () => unknown) {
  try {
    fn();
  } catch (e) {
    expect(e).toBeInstanceOf(PosterityError);
    return (e as PosterityError).problems[0];
  }
  throw new Error('expected a PosterityError');
}

describe('normaliseWeights', () => {
  it('normalises linear weights to sum 1, keeping zero weights', () => {
    const w = normaliseWeights({ weights: new Float64Array([1, 3, 0, 4]) }, 'g1');
    expect(Array.from(w)).toEqual([0.125, 0.375, 0, 0.5]);
  });

  it('exponentiates log weights after subtracting the maximum (no overflow)', () => {
    // exp(1000) overflows a double; differences (rounded near 1000, hence 1e-12) of 0, -ln 2, -ln 4 give ratios 4:2:1
    const lw = new Float64Array([1000, 1000 - Math.LN2, 1000 - 2 * Math.LN2, -Infinity]);
    const w = normaliseWeights({ logWeights: lw }, 'g1');
    expect(w[0]).toBeCloseTo(4 / 7, 12);
    expect(w[1]).toBeCloseTo(2 / 7, 12);
    expect(w[2]).toBeCloseTo(1 / 7, 12);
    expect(w[3]).toBe(0);
    const sum = w.reduce((a, b) => a + b, 0);
    expect(sum).toBeCloseTo(1, 15);
  });

  it('does not overflow with huge finite linear weights', () => {
    const w = normaliseWeights({ weights: new Float64Array([1e308, 1e308, 1e308]) }, 'g1');
    for (const v of w) expect(v).toBeCloseTo(1 / 3, 15);
  });

  it.each([
    [-1, 'weight'],
    [NaN, 'weight'],
    [Infinity, 'weight'],
  ])('rejects a linear weight of %s naming the object and the 1-based draw', (bad, column) => {
    const p = problemOf(() => normaliseWeights({ weights: new Float64Array([0.5, 0.2, bad]) }, 'obj-7'));
    expect(p.object).toBe('obj-7');
    expect(p.column).toBe(column);
    expect(p.message).toContain('draw 3');
    expect(p.got).toBe(String(bad));
  });

  it.each([[NaN], [Infinity]])('rejects a log weight of %s', (bad) => {
    const p = problemOf(() => normaliseWeights({ logWeights: new Float64Array([bad, 0]) }, 'x'));
    expect(p.message).toContain('draw 1');
    expect(p.column).toBe('log_weight');
  });

  it('rejects all-zero weights, all -Infinity log weights and empty draws', () => {
    expect(problemOf(() => normaliseWeights({ weights: new Float64Array(3) }, 'a')).object).toBe('a');
    expect(
      problemOf(() => normaliseWeights({ logWeights: new Float64Array([-Infinity, -Infinity]) }, 'b')).message,
    ).toContain('zero weight');
    expect(problemOf(() => normaliseWeights({ weights: new Float64Array(0) }, 'c')).message).toContain('no posterior draws');
    expect(problemOf(() => normaliseWeights({}, 'd')).object).toBe('d');
  });
});

describe('kishEss', () => {
  it('equals n for equal weights and 1 for a single non-zero weight (closed form)', () => {
    expect(kishEss(new Float64Array(512).fill(0.3))).toBeCloseTo(512, 9);
    expect(kishEss(new Float64Array([0, 0, 5, 0]))).toBeCloseTo(1, 12);
  });
  it('matches (sum w)^2 / sum w^2 on a worked example (Kish 1965 definition)', () => {
    // w = 1,2,3,4: (10)^2 / (1+4+9+16) = 100/30
    expect(kishEss(new Float64Array([1, 2, 3, 4]))).toBeCloseTo(100 / 30, 12);
  });
  it('returns 0 for all-zero weights', () => {
    expect(kishEss(new Float64Array(4))).toBe(0);
  });
});
