import { describe, expect, it } from 'vitest';
import {
  contourPaths,
  creditLevels,
  density2d,
  histogram,
  kde,
  kdeBandwidth,
  kdeDirect,
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
