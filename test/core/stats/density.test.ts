import { describe, expect, it } from 'vitest';
import {
  contourPaths,
  creditLevels,
  density2d,
  histogram,
  kde,
  kdeBandwidth,
  kdeDirect,
  kdeErrorBound,
  kdeUniform,
  sampleMoments,
  simplifyPath,
  type Density2d,
} from '../../../src/lib/core/stats/density.ts';
import { describeWithPython, runPython } from '../../helpers/python.ts';
import { normals, ones, uniforms } from './_random.ts';

const phi = (x: number) => Math.exp(-0.5 * x * x) / Math.sqrt(2 * Math.PI);

describe('histogram', () => {
  it('Freedman-Diaconis width 2 IQR n^(-1/3) on a worked example', () => {
    // x = 0..99, equal weights: Hazen IQR = 74.5 - 24.5 = 50, n = 100 -> h = 100 / 100^(1/3) = 21.54,
    // span 99 -> ceil(99 / 21.54) = 5 bins (Freedman & Diaconis 1981 rule)
    const x = Float64Array.from({ length: 100 }, (_, i) => i);
    const h = histogram(x, ones(100));
    expect(h.rule).toBe('fd');
    expect(h.density.length).toBe(5);
    expect(h.edges[0]).toBe(0);
    expect(h.edges[5]).toBe(99);
    const width = 99 / 5;
    let integral = 0;
    for (const d of h.density) integral += d * width;
    expect(integral).toBeCloseTo(1, 12);
  });

  it('Scott rule and fixed bins; weights move mass; integral is the fraction in range', () => {
    const x = normals(10_000, 1);
    const s = histogram(x, ones(x.length), { rule: 'scott' });
    expect(s.rule).toBe('scott');
    // h = 3.49 sigma n^(-1/3) = 0.162 for sigma = 1, n = 1e4 (Scott 1979)
    const width = s.edges[1] - s.edges[0];
    expect(width).toBeGreaterThan(0.15);
    expect(width).toBeLessThan(0.175);
    const f = histogram(new Float64Array([0.1, 0.9, 0.6, 5]), new Float64Array([1, 3, 0, 4]), { bins: 2, range: [0, 1] });
    expect(f.rule).toBe('fixed');
    // total weight 8; bin [0, 0.5) holds 1, [0.5, 1] holds 3 (the zero weight adds nothing); width 0.5
    expect(Array.from(f.density)).toEqual([1 / 4, 3 / 4]);
  });

  it('a standard normal sample matches phi at bin centres within sampling noise', () => {
    const x = normals(200_000, 2);
    const h = histogram(x, ones(x.length), { bins: 40, range: [-4, 4] });
    for (let b = 0; b < 40; b++) {
      const lo = h.edges[b];
      const hi = h.edges[b + 1];
      // exact bin average of phi by Simpson's rule
      const avg = (phi(lo) + 4 * phi((lo + hi) / 2) + phi(hi)) / 6;
      // 4 binomial standard deviations of the bin's density estimate
      const sd = Math.sqrt((avg * (hi - lo) * (1 - avg * (hi - lo))) / 200_000) / (hi - lo);
      expect(Math.abs(h.density[b] - avg)).toBeLessThan(4 * sd + 1e-12);
    }
  });
});

describe('kde', () => {
  it('binned estimate equals direct summation within 1e-3 of the peak', () => {
    const x = new Float64Array([...normals(300, 3, -2, 0.5), ...normals(200, 4, 1.5, 1)]);
    const w = uniforms(500, 5, 0.2, 1);
    const grid = Float64Array.from({ length: 301 }, (_, i) => -5 + (i * 10) / 300);
    for (const bw of ['scott', 'silverman', 0.05] as const) {
      const { density, bandwidth } = kde(x, w, grid, { bandwidth: bw });
      const ref = kdeDirect(x, w, grid, bandwidth);
      const peak = Math.max(...ref);
      for (let g = 0; g < grid.length; g++) expect(Math.abs(density[g] - ref[g])).toBeLessThan(1e-3 * peak);
    }
  });

  it('bandwidth rules use the Kish ESS: h = sigma n^(-1/5) (Scott) and 0.9 min(sigma, IQR/1.34) n^(-1/5) (Silverman)', () => {
    // two distinct values with equal weight: sigma = 1, Hazen IQR = 2 (quartiles clamp to -1, 1), ESS = 2
    const x = new Float64Array([-1, 1, 1, -1]);
    const w = new Float64Array([1, 1, 0, 0]);
    expect(kdeBandwidth(x, w, 'scott')).toBeCloseTo(Math.pow(2, -0.2), 14);
    expect(kdeBandwidth(x, w, 'silverman')).toBeCloseTo(0.9 * Math.pow(2, -0.2), 14);
  });

  it('KDE of N(0,1) draws approaches the N(0, 1 + h^2) density (Gaussian convolution, closed form)', () => {
    const x = normals(100_000, 6);
    const grid = Float64Array.from({ length: 81 }, (_, i) => -4 + i * 0.1);
    const h = 0.5;
    const { density } = kde(x, ones(x.length), grid, { bandwidth: h });
    const s = Math.sqrt(1 + h * h);
    for (let g = 0; g < grid.length; g++) expect(Math.abs(density[g] - phi(grid[g] / s) / s)).toBeLessThan(0.004);
  });
});

describe('binned KDE against direct summation (linear binning: Silverman 1982; Wand 1994)', () => {
  // |binned - direct| <= ((delta / h)^2 / 8 + exp(-cut^2 / 2)) phi(0) / h with delta <= h / 8 and
  // cut = 5: the linear-interpolation error bound delta^2 / 8 max|K''| (textbook numerical
  // analysis), max|K''| = phi(0) / h^3 for the Gaussian kernel, plus the dropped kernel tail.
  it('stays within the guaranteed bound kdeErrorBound(h) on weighted, skewed and heavy-tailed samples', () => {
    const cases: Array<[Float64Array, Float64Array]> = [
      [normals(512, 41), uniforms(512, 42, 0.1, 1)],
      [normals(512, 43).map((v) => Math.exp(v)), ones(512)], // log-normal: long right tail
      [normals(512, 44).map((v, i) => (i % 7 === 0 ? 5 * v : v)), uniforms(512, 45)], // outliers
      [new Float64Array([...normals(300, 46, -3, 0.3), ...normals(212, 47, 2, 1)]), uniforms(512, 48, 0.5, 1)],
    ];
    for (const [x, w] of cases) {
      for (const G of [64, 256, 301]) {
        const m = sampleMoments(x, w);
        const grid = Float64Array.from({ length: G }, (_, g) => m.lo - 1 + ((m.hi - m.lo + 2) * g) / (G - 1));
        for (const bw of ['silverman', 'scott'] as const) {
          const { density, bandwidth } = kde(x, w, grid, { bandwidth: bw });
          const ref = kdeDirect(x, w, grid, bandwidth);
          let worst = 0;
          for (let g = 0; g < G; g++) worst = Math.max(worst, Math.abs(density[g] - ref[g]));
          expect(worst).toBeLessThanOrEqual(kdeErrorBound(bandwidth));
        }
      }
    }
  });

  it('the bound is tight: one draw half-way between nodes h / 8 apart errs by 0.99 of it', () => {
    // h = 1 and spacing 1/8 (both exact in binary): the draw at 1/16 is split evenly between the
    // nodes 0 and 1/8, so at node 0 the estimate is (phi(0) + phi(1/8)) / 2 instead of phi(1/16),
    // an error of 1.94e-3 phi(0) against the bound's 1.95e-3 phi(0) (closed form).
    const x = new Float64Array([1 / 16]);
    const d = kdeUniform(x, ones(1), -1, 1 / 8, 17, 1);
    const err = Math.abs(d[8] - phi(1 / 16));
    expect(Math.abs(d[8] - (phi(0) + phi(1 / 8)) / 2)).toBeLessThan(1e-15);
    expect(err).toBeGreaterThan(0.99 * kdeErrorBound(1));
    expect(err).toBeLessThanOrEqual(kdeErrorBound(1));
  });

  it('sums directly on a non-uniform grid', () => {
    const x = normals(200, 49);
    const grid = new Float64Array([-3, -1, -0.5, 0, 0.1, 2, 3.5]);
    const { density, bandwidth } = kde(x, ones(200), grid, { bandwidth: 'silverman' });
    expect(Array.from(density)).toEqual(Array.from(kdeDirect(x, ones(200), grid, bandwidth)));
  });

  it('shares a sort: moments from sortDraws give the same bandwidth and histogram', () => {
    const x = normals(512, 50);
    const w = uniforms(512, 51);
    const m = sampleMoments(x, w);
    expect(kdeBandwidth(x, w, 'silverman', m)).toBe(kdeBandwidth(x, w, 'silverman'));
    expect(histogram(x, w, { moments: m })).toEqual(histogram(x, w));
  });
});

describe('binned 2-D density', () => {
  it('linear binning splits a draw between the four nearest cell centres and keeps in-range mass', () => {
    // 2 x 2 cells on [0, 2]^2, centres at 0.5 and 1.5; a draw at (1, 0.75) is half-way in x, a quarter in y
    const g = density2d(new Float64Array([1]), new Float64Array([0.75]), ones(1), { nx: 2, ny: 2, xRange: [0, 2], yRange: [0, 2], binning: 'linear' });
    expect(Array.from(g.z)).toEqual([0.375, 0.375, 0.125, 0.125]);
    // beyond the outermost centres (but inside the range) the weight goes to the outermost cells
    const e = density2d(new Float64Array([0.1, 1.9]), new Float64Array([0.2, 1.99]), ones(2), { nx: 2, ny: 2, xRange: [0, 2], yRange: [0, 2], binning: 'linear' });
    expect(Array.from(e.z)).toEqual([0.5, 0, 0, 0.5]);
  });

  it('linear binning plus smoothing is the 2-D product-kernel KDE at the cell centres within its binning bound', () => {
    // bound per axis (delta / h)^2 / 8 of the kernel peak, as in 1-D; here delta / h = 1 / 4
    const n = 3000;
    const x = normals(n, 52);
    const y = normals(n, 53).map((v, i) => 0.6 * x[i] + 0.8 * v);
    const w = uniforms(n, 54, 0.2, 1);
    const cells = 32;
    const g = density2d(x, y, w, { nx: cells, ny: cells, xRange: [-5, 5], yRange: [-5, 5], smooth: [4, 4], binning: 'linear' });
    const h = 4 * g.dx;
    let total = 0;
    for (let k = 0; k < n; k++) total += w[k];
    let worst = 0;
    let peak = 0;
    for (let j = 0; j < cells; j++) {
      for (let i = 0; i < cells; i++) {
        const cx = -5 + (i + 0.5) * g.dx;
        const cy = -5 + (j + 0.5) * g.dy;
        let s = 0;
        for (let k = 0; k < n; k++) s += w[k] * phi((cx - x[k]) / h) * phi((cy - y[k]) / h);
        const direct = s / (total * h * h);
        peak = Math.max(peak, direct);
        worst = Math.max(worst, Math.abs(g.z[j * cells + i] - direct));
      }
    }
    const bound = (2 * (1 / 16) / 8 + 2 * Math.exp(-8)) * (phi(0) * phi(0)) / (h * h);
    expect(worst).toBeLessThanOrEqual(bound);
    expect(worst).toBeLessThan(0.01 * peak); // in practice far inside the bound
  });

  it('one smoothing width for both axes equals the same width given per axis', () => {
    const x = normals(500, 55);
    const y = normals(500, 56);
    const o = { nx: 20, ny: 20, xRange: [-4, 4] as [number, number], yRange: [-4, 4] as [number, number], binning: 'linear' as const };
    expect(density2d(x, y, ones(500), { ...o, smooth: 1.5 }).z).toEqual(density2d(x, y, ones(500), { ...o, smooth: [1.5, 1.5] }).z);
  });

  it('creditLevels finds the same cell as sorting every cell (its definition)', () => {
    const bySort = (z: Float64Array, m: number) => {
      const s = Array.from(z, (v) => (v > 0 ? v : 0)).sort((a, b) => b - a);
      const total = s.reduce((a, b) => a + b, 0);
      let acc = 0;
      for (const v of s) if ((acc += v) >= m * total) return v;
      return s[s.length - 1];
    };
    for (let t = 0; t < 20; t++) {
      const z = uniforms(1024, 60 + t).map((u, i) => (i % 5 === 0 ? 0 : u * u * u));
      const levels = creditLevels(z, [0.68, 0.95, 0.5]);
      expect(levels).toEqual([bySort(z, 0.68), bySort(z, 0.95), bySort(z, 0.5)]);
    }
  });
});

describe('simplifyPath (Douglas & Peucker 1973)', () => {
  it('drops collinear points, keeps a corner and keeps a closed path closed', () => {
    const line: Array<[number, number]> = Array.from({ length: 11 }, (_, i) => [i, 2 * i]);
    expect(simplifyPath(line, 1e-9)).toEqual([[0, 0], [10, 20]]);
    const corner: Array<[number, number]> = [[0, 0], [1, 0], [2, 0], [2, 1], [2, 2]];
    expect(simplifyPath(corner, 0.1)).toEqual([[0, 0], [2, 0], [2, 2]]);
    // a bump of 0.05 survives a tolerance of 0.01 and goes at 0.1
    const bump: Array<[number, number]> = [[0, 0], [1, 0.05], [2, 0]];
    expect(simplifyPath(bump, 0.01).length).toBe(3);
    expect(simplifyPath(bump, 0.1).length).toBe(2);
  });

  it('a finely sampled circle keeps about as many points as the sagitta allows, all within the tolerance', () => {
    // a chord of angle t leaves the circle by r (1 - cos(t / 2)), so tolerance e needs at least
    // 2 pi / (2 acos(1 - e / r)) chords (plane geometry); DP is not optimal, so allow up to twice that
    const r = 3;
    const e = 1e-3 * r;
    const n = 2000;
    const circle: Array<[number, number]> = Array.from({ length: n }, (_, i) => [r * Math.cos((2 * Math.PI * i) / n), r * Math.sin((2 * Math.PI * i) / n)]);
    circle.push(circle[0]); // closed: the last point repeats the first
    const out = simplifyPath(circle, e);
    const least = Math.ceil(Math.PI / Math.acos(1 - e / r));
    expect(out[0]).toEqual(out[out.length - 1]);
    expect(out.length - 1).toBeGreaterThanOrEqual(least);
    expect(out.length - 1).toBeLessThanOrEqual(2 * least);
    // every original point lies within e of the simplified polygon
    const segDist = (p: [number, number], a: [number, number], b: [number, number]) => {
      const ex = b[0] - a[0], ey = b[1] - a[1];
      const t = Math.max(0, Math.min(1, ((p[0] - a[0]) * ex + (p[1] - a[1]) * ey) / (ex * ex + ey * ey)));
      return Math.hypot(p[0] - a[0] - t * ex, p[1] - a[1] - t * ey);
    };
    for (const p of circle) {
      let d = Infinity;
      for (let k = 0; k + 1 < out.length; k++) d = Math.min(d, segDist(p, out[k], out[k + 1]));
      expect(d).toBeLessThanOrEqual(e * (1 + 1e-9));
    }
  });

  it('measures the tolerance in units of each axis', () => {
    const path: Array<[number, number]> = [[0, 0], [0.5, 50], [1, 0]];
    expect(simplifyPath(path, 0.1, 1, 1000).length).toBe(2); // 50 / 1000 = 0.05 < 0.1
    expect(simplifyPath(path, 0.1, 1, 100).length).toBe(3); // 0.5 > 0.1
  });
});

describe('credible levels and contours of a standard bivariate normal', () => {
  // Mass inside radius r is 1 - exp(-r^2 / 2), so the mass-m contour is the circle of radius
  // sqrt(-2 ln(1 - m)) at density (1 - m) / (2 pi) (closed form of the Rayleigh distribution).
  const radius = (m: number) => Math.sqrt(-2 * Math.log(1 - m));

  function analyticGrid(n: number, half: number): Density2d {
    const d = (2 * half) / n;
    const z = new Float64Array(n * n);
    for (let j = 0; j < n; j++)
      for (let i = 0; i < n; i++) {
        const x = -half + (i + 0.5) * d;
        const y = -half + (j + 0.5) * d;
        z[j * n + i] = Math.exp(-0.5 * (x * x + y * y)) / (2 * Math.PI);
      }
    return { nx: n, ny: n, x0: -half, dx: d, y0: -half, dy: d, z };
  }

  it('creditLevels matches (1 - m) / (2 pi) within 1% on a fine analytic grid', () => {
    const g = analyticGrid(240, 6);
    const levels = creditLevels(g.z, [0.68, 0.95]);
    expect(levels[0] / (0.32 / (2 * Math.PI))).toBeCloseTo(1, 2);
    expect(levels[1] / (0.05 / (2 * Math.PI))).toBeCloseTo(1, 2);
    expect(levels[0]).toBeGreaterThan(levels[1]);
  });

  it('the 68% and 95% contours are closed circles of radius sqrt(-2 ln(1 - m)) within 1%', () => {
    const g = analyticGrid(240, 6);
    for (const m of [0.68, 0.95]) {
      const [level] = creditLevels(g.z, [m]);
      const paths = contourPaths(g, level);
      expect(paths.length).toBe(1);
      const p = paths[0];
      expect(p[0]).toEqual(p[p.length - 1]);
      expect(p.length).toBeGreaterThan(50);
      for (const [x, y] of p) expect(Math.hypot(x, y) / radius(m)).toBeCloseTo(1, 2);
    }
  });

  it('from 200k weighted draws with smoothing, the 68% contour radius is within 3%', () => {
    // draws from N(0, 1.5^2) importance-weighted to N(0, 1) in each coordinate
    const x = normals(200_000, 7, 0, 1.5);
    const y = normals(200_000, 8, 0, 1.5);
    const w = Float64Array.from(x, (v, i) => Math.exp(-0.5 * (v * v + y[i] * y[i]) * (1 - 1 / 2.25)));
    const g = density2d(x, y, w, { nx: 60, ny: 60, xRange: [-4, 4], yRange: [-4, 4], smooth: 1 });
    const [level] = creditLevels(g.z, [0.68]);
    const paths = contourPaths(g, level);
    const longest = paths.reduce((a, b) => (b.length > a.length ? b : a));
    const r = longest.map(([px, py]) => Math.hypot(px, py));
    const mean = r.reduce((a, b) => a + b, 0) / r.length;
    expect(Math.abs(mean / radius(0.68) - 1)).toBeLessThan(0.03);
  });

  it('density2d normalises to a density and ignores draws outside the ranges in the cells', () => {
    const g = density2d(new Float64Array([0.25, 0.75, 5]), new Float64Array([0.25, 0.75, 5]), ones(3), {
      nx: 2,
      ny: 2,
      xRange: [0, 1],
      yRange: [0, 1],
    });
    // each in-range draw holds 1/3 of the weight in a cell of area 1/4
    expect(Array.from(g.z)).toEqual([4 / 3, 0, 0, 4 / 3]);
  });

  it('contours closed by the grid border run along the outermost cell centres', () => {
    const g: Density2d = { nx: 3, ny: 3, x0: 0, dx: 1, y0: 0, dy: 1, z: new Float64Array(9).fill(1) };
    const paths = contourPaths(g, 0.5);
    expect(paths.length).toBe(1);
    for (const [x, y] of paths[0]) {
      expect([0.5, 2.5]).toContain(x === 0.5 || x === 2.5 ? x : y);
    }
    expect(contourPaths(g, 2)).toEqual([]);
  });

  it('two separated blobs give two closed contours; saddles are resolved consistently', () => {
    const n = 80;
    const z = new Float64Array(n * n);
    for (let j = 0; j < n; j++)
      for (let i = 0; i < n; i++) {
        const x = -4 + (i + 0.5) * 0.1;
        const y = -4 + (j + 0.5) * 0.1;
        z[j * n + i] = Math.exp(-0.5 * ((x - 2) ** 2 + y * y) / 0.25) + Math.exp(-0.5 * ((x + 2) ** 2 + y * y) / 0.25);
      }
    const paths = contourPaths({ nx: n, ny: n, x0: -4, dx: 0.1, y0: -4, dy: 0.1, z }, 0.5);
    expect(paths.length).toBe(2);
    for (const p of paths) expect(p[0]).toEqual(p[p.length - 1]);
  });
});

describeWithPython('weighted KDE against scipy.stats.gaussian_kde', ['scipy', 'numpy'], () => {
  it('agrees at a fixed bandwidth to 1e-3 of the peak', () => {
    const x = new Float64Array([...normals(400, 31, 0, 1), ...normals(100, 32, 3, 0.3)]);
    const w = uniforms(500, 33, 0.1, 1);
    const grid = Float64Array.from({ length: 121 }, (_, i) => -3 + i * 0.06);
    const h = 0.2;
    // scipy's kernel sd is factor * sqrt(weighted cov); pick the factor that gives sd = h
    const ref = runPython(
      `import numpy as np
from scipy.stats import gaussian_kde
d = json.load(sys.stdin)
x = np.array(d['x']); w = np.array(d['w'])
k = gaussian_kde(x, weights=w)
k.set_bandwidth(d['h'] / np.sqrt(k.covariance[0, 0] / k.factor ** 2))
print(json.dumps(k(np.array(d['g'])).tolist()))`,
      { x: Array.from(x), w: Array.from(w), g: Array.from(grid), h },
    ) as number[];
    const { density } = kde(x, w, grid, { bandwidth: h });
    const peak = Math.max(...ref);
    ref.forEach((v, g) => expect(Math.abs(density[g] - v)).toBeLessThan(1e-3 * peak));
  });
});
