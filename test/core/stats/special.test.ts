import { describe, expect, it } from 'vitest';
import { chi2Sf, erf, erfc, gammainc, gammaincc, logGamma, normalCdf, normalPpf } from '../../../src/lib/core/stats/special.ts';
import { describeWithPython, runPython } from '../../helpers/python.ts';

describe('logGamma', () => {
  it('matches closed forms', () => {
    expect(logGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 14); // Gamma(1/2) = sqrt(pi)
    expect(logGamma(1)).toBeCloseTo(0, 14);
    expect(logGamma(2)).toBeCloseTo(0, 14);
    let lf = 0;
    for (let k = 2; k < 30; k++) lf += Math.log(k);
    expect(logGamma(30) / lf).toBeCloseTo(1, 14); // Gamma(30) = 29!
    expect(logGamma(0)).toBeNaN();
    expect(logGamma(-1)).toBeNaN();
  });
});

describe('chi2Sf against published percentage points', () => {
  // [dof, upper-tail probability alpha, chi-square value with P(X > value) = alpha].
  // Lower critical values (alpha = 0.90 ... 0.999): NIST/SEMATECH e-Handbook of Statistical
  // Methods, section 1.3.6.7.4, looked up. Upper values (alpha = 0.05, 0.01, 0.001): the same
  // table; the 5-decimal entries for dof 1, 2, 10 were looked up in a printed table, the dof 30,
  // 50 and 100 entries are from memory (also cross-checked against scipy below).
  const table: Array<[number, number, number]> = [
    [1, 0.9, 0.01579],
    [1, 0.05, 3.84146],
    [1, 0.01, 6.6349],
    [2, 0.05, 5.99146],
    [2, 0.01, 9.21034],
    [3, 0.05, 7.81473],
    [5, 0.05, 11.0705],
    [10, 0.95, 3.94],
    [10, 0.05, 18.30704],
    [10, 0.01, 23.20925],
    [20, 0.9, 12.443],
    [20, 0.999, 5.921],
    [30, 0.05, 43.773],
    [50, 0.95, 34.764],
    [50, 0.05, 67.505],
    [100, 0.9, 82.358],
    [100, 0.99, 70.065],
    [100, 0.999, 61.918],
    [100, 0.05, 124.342],
    [100, 0.001, 149.449],
  ];
  it.each(table)('dof %i, alpha %f: tabulated point %f brackets alpha', (dof, alpha, x) => {
    // the table is rounded in its last digit: the exact point lies within half a unit of it
    const digits = (String(x).split('.')[1] ?? '').length;
    const half = 0.5 * 10 ** -digits;
    expect(chi2Sf(x - half, dof)).toBeGreaterThanOrEqual(alpha);
    expect(chi2Sf(x + half, dof)).toBeLessThanOrEqual(alpha);
  });

  it('closed forms: dof 2 gives exp(-x/2); edge cases', () => {
    // chi-square with 2 dof is exponential with mean 2 (Abramowitz & Stegun 1964, 26.4.21)
    for (const x of [0.1, 1, 5, 40, 700]) expect(chi2Sf(x, 2) / Math.exp(-x / 2)).toBeCloseTo(1, 12);
    expect(chi2Sf(0, 3)).toBe(1);
    expect(chi2Sf(-1, 3)).toBe(1);
    expect(chi2Sf(Infinity, 3)).toBe(0);
    expect(chi2Sf(1, 0)).toBeNaN();
    expect(gammaincc(1, 2) + gammainc(1, 2)).toBeCloseTo(1, 15);
  });
});

describe('erf, normalCdf, normalPpf', () => {
  it('match well-known values', () => {
    // Phi^-1(0.975) = 1.959963984540054, Phi^-1(0.75) = 0.6744897501960817 (from memory; scipy check below)
    expect(normalPpf(0.975)).toBeCloseTo(1.959963984540054, 13);
    expect(normalPpf(0.75)).toBeCloseTo(0.6744897501960817, 13);
    expect(normalPpf(0.5)).toBeCloseTo(0, 15);
    expect(normalPpf(0)).toBe(-Infinity);
    expect(normalPpf(1)).toBe(Infinity);
    expect(normalPpf(1.1)).toBeNaN();
    // erf(1) = 0.8427007929497149 (Abramowitz & Stegun 1964 Table 7.1, from memory)
    expect(erf(1)).toBeCloseTo(0.8427007929497149, 14);
    expect(erf(-1)).toBeCloseTo(-0.8427007929497149, 14);
    expect(normalCdf(1) - normalCdf(-1)).toBeCloseTo(0.6826894921370859, 14); // 68.27% within 1 sigma
  });

  it('round-trips Phi(Phi^-1(p)) = p to near double precision, including far tails', () => {
    for (const p of [1e-300, 1e-100, 1e-20, 1e-8, 0.001, 0.02425, 0.1, 0.3, 0.5, 0.7, 0.97575, 0.999, 1 - 1e-10]) {
      expect(Math.abs(normalCdf(normalPpf(p)) - p) / Math.min(p, 1 - p)).toBeLessThan(1e-12);
    }
  });
});

describeWithPython('special functions against scipy', ['scipy'], () => {
  it('chi2Sf, gammaincc, logGamma, erfc, normalPpf agree with scipy to 1e-12 relative', () => {
    const dofs = [1, 2, 3, 4, 5, 7, 10, 15, 20, 30, 50, 75, 100, 250];
    const cases: Array<[number, number]> = [];
    for (const k of dofs) for (const f of [0.01, 0.2, 0.5, 0.9, 1, 1.1, 1.5, 2, 3, 5]) cases.push([k * f + 0.3 * f, k]);
    const as = [0.05, 0.5, 1.5, 7.25, 33, 120];
    const xs = [1e-3, 0.5, 2, 9, 40, 200];
    const ps = [1e-15, 1e-6, 0.01, 0.2, 0.5, 0.8, 0.99, 0.999999];
    const ref = runPython(
      `from scipy import stats, special
d = json.load(sys.stdin)
print(json.dumps({
  'sf': [float(stats.chi2.sf(x, k)) for x, k in d['cases']],
  'q': [[float(special.gammaincc(a, x)) for x in d['xs']] for a in d['as']],
  'lg': [float(special.gammaln(a)) for a in d['as']],
  'erfc': [float(special.erfc(x)) for x in d['xs'][:5]],
  'ppf': [float(stats.norm.ppf(p)) for p in d['ps']],
}))`,
      { cases, as, xs, ps },
    ) as { sf: number[]; q: number[][]; lg: number[]; erfc: number[]; ppf: number[] };
    const rel = (a: number, b: number) => (b === 0 ? Math.abs(a) : Math.abs(a - b) / Math.abs(b));
    cases.forEach(([x, k], i) => expect(rel(chi2Sf(x, k), ref.sf[i])).toBeLessThan(1e-12));
    as.forEach((a, i) => xs.forEach((x, j) => expect(rel(gammaincc(a, x), ref.q[i][j])).toBeLessThan(1e-11)));
    as.forEach((a, i) => expect(rel(logGamma(a), ref.lg[i])).toBeLessThan(1e-13));
    xs.slice(0, 5).forEach((x, i) => expect(rel(erfc(x), ref.erfc[i])).toBeLessThan(1e-12));
    ps.forEach((p, i) => expect(rel(normalPpf(p), ref.ppf[i])).toBeLessThan(1e-13));
  });
});
