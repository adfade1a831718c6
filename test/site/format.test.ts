/**
 * Decimals of a column of numbers (src/site/format.ts, columnDecimals and cell): one count per
 * column so it aligns, from the values' uncertainties (two significant digits of the typical
 * uncertainty: common practice for quoting a value with its error) or else their precision.
 * Check values are worked by hand from the rule.
 */
import { describe, expect, it } from 'vitest';
import { cell, columnDecimals, intervalDecimals, paramDecimals } from '../../src/site/format.ts';

describe('columnDecimals', () => {
  it('the mixed column of the report (1.035, 0.83665, 10.54) gets one count: 2 decimals', () => {
    // no uncertainties: 3 significant digits of the median magnitude 1.035 -> 2 decimals
    const d = columnDecimals([1.035, 0.83665, 10.54]);
    expect(d).toBe(2);
    expect([1.035, 0.83665, 10.54].map((x) => cell(x, d))).toEqual(['1.03', '0.84', '10.54']);
  });

  it('with uncertainties: two significant digits of their median', () => {
    // median of 0.07, 0.08, 0.12 is 0.08: two digits are 0.080, 3 decimals
    expect(columnDecimals([10.42, 9.8, 11.1], { spreads: [0.07, 0.08, 0.12] })).toBe(3);
    // median 0.25 -> 0.25, 2 decimals; NaN and zero spreads are left out
    expect(columnDecimals([1, 2, 3], { spreads: [0.2, NaN, 0.25, 0, 0.3] })).toBe(2);
    // a spread of 3 -> 3.0, 1 decimal; of 40 -> 40, none
    expect(columnDecimals([100], { spreads: [3] })).toBe(1);
    expect(columnDecimals([100], { spreads: [40] })).toBe(0);
  });

  it('never more decimals than the values carry, none for whole numbers', () => {
    expect(columnDecimals([0.512, 1.2, 0.8])).toBe(3);
    expect(columnDecimals([0.5, 1.25, 0.75])).toBe(2);
    expect(columnDecimals([12, 40, 7, NaN])).toBe(0);
    expect(columnDecimals([])).toBe(0);
  });

  it('degrees at 6 decimals; at most 6 in any case', () => {
    expect(columnDecimals([150.1, 2.2], { unit: 'deg' })).toBe(6);
    expect(columnDecimals([1e-9, 3e-8])).toBe(6);
    expect(columnDecimals([1], { spreads: [1e-9] })).toBe(6);
  });

  it('samples long columns evenly and gives the same answer each time', () => {
    const v = Float64Array.from({ length: 200_001 }, (_, i) => 1 + (i % 1000) / 997);
    expect(columnDecimals(v)).toBe(columnDecimals(v));
    expect(columnDecimals(v)).toBe(2);
  });

  it('intervals and parameter rows use the smaller half-width', () => {
    expect(intervalDecimals([{ median: 0.8, lo: 0.75, hi: 0.9 }, { median: 0.82, lo: 0.8, hi: 0.83 }])).toBe(3);
    expect(paramDecimals({ p16: 10.35, p50: 10.42, p84: 10.5, std: 0.07 })).toBe(3);
    expect(paramDecimals({ p16: 1, p50: 1, p84: 1, std: 0.2 })).toBe(2);
  });
});

describe('cell', () => {
  it('fixed decimals with a true minus sign, no negative zero', () => {
    expect(cell(-1.5, 2)).toBe('−1.50');
    expect(cell(-0.0001, 2)).toBe('−1.0 × 10⁻⁴');
    expect(cell(0, 3)).toBe('0.000');
    expect(cell(NaN, 3)).toBe('—');
  });

  it('a value that would print as zero keeps two significant digits', () => {
    expect(cell(1.23e-9, 3)).toBe('1.2 × 10⁻⁹');
    expect(cell(0.0004, 3)).toBe('4.0 × 10⁻⁴');
    expect(cell(0.0005, 3)).toBe('0.001');
  });
});
