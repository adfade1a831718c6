/**
 * The corner-plot data of one object (`chartsFor`): the published schema, coordinates rounded
 * to the plot's resolution, contours that enclose their stated mass, and the same bytes whether
 * the kernel shares its sort or not.
 */
import { describe, expect, it } from 'vitest';
import { binLinear, cellCoords, creditLevels, gaussianHalfTaps, sampleMoments, smoothedContours, smoothedGrid, type Density2d } from '../../src/lib/core/stats/density.ts';
import { alloc, release } from '../../src/lib/core/stats/simd.ts';
import { chartsFor, MASS_LEVELS, SCATTER_POINTS } from '../../src/lib/pipeline/summarise-kernel.ts';
import { chartsOf, cornerData, writeChartsJson, CORNER_GRID } from '../../src/lib/pipeline/summarise-charts.ts';
import { JsonWriter } from '../../src/lib/pipeline/json-writer.ts';
import { normals, uniforms } from '../core/stats/_random.ts';

/** k correlated Gaussian parameters (each correlated 0.5 with the first), n weighted draws. */
function draws(k: number, n: number, seed: number) {
  const base = normals(n, seed);
  const xs = Array.from({ length: k }, (_, j) => (j === 0 ? base : normals(n, seed + j, 0, 1).map((v, i) => 10 * j + (0.5 * base[i] + 0.866 * v) * (j + 1) * 0.1)));
  return { xs, w: uniforms(n, seed + 100, 0.2, 1), names: Array.from({ length: k }, (_, j) => `p${j}`) };
}

/** Even-odd rule point-in-polygon (the classic crossing test). */
function inside(p: [number, number], poly: [number, number][]): boolean {
  let c = false;
  for (let i = 0, j = poly.length - 1; i < poly.length; j = i++) {
    const [xi, yi] = poly[i];
    const [xj, yj] = poly[j];
    if (yi > p[1] !== yj > p[1] && p[0] < ((xj - xi) * (p[1] - yi)) / (yj - yi) + xi) c = !c;
  }
  return c;
}

describe('chartsFor', () => {
  const { xs, w, names } = draws(8, 512, 7);
  const charts = chartsFor(names, xs, w, 12345);

  it('keeps the published schema: 64-point KDEs, every pair, both mass levels, 50 scatter points', () => {
    expect(charts.marginals.map((m) => Object.keys(m))).toEqual(names.map(() => ['param', 'edges', 'density', 'kdeX', 'kdeY', 'rule']));
    for (const m of charts.marginals) {
      expect(m.kdeX.length).toBe(64);
      expect(m.kdeY.length).toBe(64);
      expect(m.edges.length).toBe(m.density.length + 1);
      expect(m.rule).toMatch(/KDE bandwidth .* \(Silverman\)$/);
    }
    expect(charts.contours.length).toBe((8 * 7) / 2);
    for (const c of charts.contours) {
      expect(Object.keys(c)).toEqual(['x', 'y', 'levels', 'points']);
      expect(c.levels.map((l) => l.mass)).toEqual([...MASS_LEVELS]);
      expect(c.points.length).toBe(SCATTER_POINTS);
      for (const l of c.levels) for (const p of l.paths) for (const pt of p) expect(pt.length).toBe(2);
    }
  });

  it('rounds coordinates to a power of ten at most 1/500 of the parameter range', () => {
    for (const c of charts.contours) {
      for (const [axis, name] of [[0, c.x], [1, c.y]] as const) {
        const m = charts.marginals.find((mm) => mm.param === name)!;
        const span = m.edges[m.edges.length - 1] - m.edges[0];
        const q = 10 ** Math.floor(Math.log10(span / 500));
        const values = [...c.points.map((p) => p[axis]), ...c.levels.flatMap((l) => l.paths.flat().map((p) => p[axis]))];
        for (const v of values) expect(Math.abs(v / q - Math.round(v / q))).toBeLessThan(1e-6);
      }
    }
  });

  it('the 68% and 95% contours enclose about that fraction of the draws', () => {
    // 4000 draws of a correlated pair: the enclosed weight fraction should match the level to a
    // few per cent (sampling noise ~1%, smoothing by the KDE bandwidth widens the regions slightly)
    const d = draws(2, 4000, 21);
    const c = chartsFor(d.names, d.xs, d.w, 1).contours[0];
    let total = 0;
    for (const v of d.w) total += v;
    for (const level of c.levels) {
      let mass = 0;
      for (let i = 0; i < d.w.length; i++) {
        const p: [number, number] = [d.xs[0][i], d.xs[1][i]];
        if (level.paths.some((path) => inside(p, path))) mass += d.w[i];
      }
      expect(Math.abs(mass / total - level.mass)).toBeLessThan(0.03);
    }
  });

  it('is deterministic and the same with the kernel-shared moments', () => {
    const again = chartsFor(names, xs, w, 12345);
    const shared = chartsFor(names, xs, w, 12345, xs.map((x) => sampleMoments(x, w)));
    expect(JSON.stringify(again)).toBe(JSON.stringify(charts));
    expect(JSON.stringify(shared)).toBe(JSON.stringify(charts));
  });

  it('writes the JSON text of the published object byte for byte (JSON.stringify), for odd names and counts', () => {
    for (const [k, n, seed] of [[8, 512, 3], [3, 200, 4], [2, 64, 5]]) {
      const d = draws(k, n, seed);
      const names = d.names.map((nm, j) => (j === 1 ? 'lög "SFR" \\ μ' : nm));
      const c = cornerData(names, d.xs, d.w, 99);
      const correlation = Array.from({ length: k }, (_, a) => Array.from({ length: k }, (_, b) => (a === b ? 1 : Math.round(0.5 * 1000 * (a - b) / k) / 1000)));
      const jw = new JsonWriter();
      writeChartsJson(jw, c, correlation);
      expect(new TextDecoder().decode(jw.take())).toBe(JSON.stringify({ ...chartsOf(c), correlation }));
    }
  });

  it('levels of a panel from its buckets are those of creditLevels (cells taken densest first) on the same smoothed grid', () => {
    const d = draws(2, 512, 31);
    const N = CORNER_GRID;
    const [lx, hx] = [Math.min(...d.xs[0]), Math.max(...d.xs[0])];
    const [ly, hy] = [Math.min(...d.xs[1]), Math.max(...d.xs[1])];
    const cx = new Int32Array(512), cy = new Int32Array(512), fx = new Float64Array(512), fy = new Float64Array(512);
    cellCoords(d.xs[0], lx, hx, N, cx, fx);
    cellCoords(d.xs[1], ly, hy, N, cy, fy);
    const kx = gaussianHalfTaps(1.4), ky = gaussianHalfTaps(2.1);
    const fill = (m: Float64Array, origin: number, stride: number) => binLinear(cx, fx, cy, fy, d.w, 512, m, origin, stride);
    const z = new Float64Array(N * N);
    smoothedGrid(N, N, kx, ky, fill, z);
    const panel: Density2d = { nx: N, ny: N, x0: lx, dx: (hx - lx) / N, y0: ly, dy: (hy - ly) / N, z };
    const mark = alloc(0);
    const fast = smoothedContours(panel, kx, ky, fill, MASS_LEVELS);
    release(mark);
    const slow = creditLevels(z, MASS_LEVELS);
    // the same cell (the sums differ in rounding only)
    for (let q = 0; q < 2; q++) expect(Math.abs(fast[q] - slow[q]) / slow[q]).toBeLessThan(1e-12);
  });

  it('with 512 draws (a bench object), each contour holds its mass of the smoothed density and few paths', () => {
    let paths = 0, levels = 0, worst = 0, bias = 0;
    for (let seed = 0; seed < 12; seed++) {
      const d = draws(4, 512, 100 + seed);
      const c = chartsFor(d.names, d.xs, d.w, seed);
      for (const panel of c.contours) {
        const ja = d.names.indexOf(panel.x), jb = d.names.indexOf(panel.y);
        // mass of the draws inside each level's paths: the contour of a KDE smoothed by its
        // bandwidth holds a little more than the level of the draws themselves (common practice)
        let total = 0;
        for (const v of d.w) total += v;
        for (const level of panel.levels) {
          let mass = 0;
          for (let i = 0; i < d.w.length; i++) if (level.paths.some((path) => inside([d.xs[ja][i], d.xs[jb][i]], path))) mass += d.w[i];
          worst = Math.max(worst, Math.abs(mass / total - level.mass));
          bias += mass / total - level.mass;
          paths += level.paths.length;
          levels++;
        }
      }
    }
    // The contours hold their mass of the smoothed density (cells taken densest first). Of the
    // draws they hold a little more: a KDE is the draws convolved with the kernel, whose
    // variance adds to the posterior's, so its regions are wider (here by 2.7% of the mass on
    // average, all outward; 4000 draws, above, bring it within 3%); and the enclosed fraction of
    // 512 draws has a binomial sampling noise of sqrt(0.68 x 0.32 / 512) = 2%.
    expect(bias / levels).toBeGreaterThan(0);
    expect(bias / levels).toBeLessThan(0.035);
    expect(worst).toBeLessThan(0.07);
    expect(paths / levels).toBeLessThan(1.5);
  });

  it('stays within our size budget of 80 kB of JSON for 8 parameters and 512 draws', () => {
    // our budget; the previous full-precision, 150-point, unsimplified data was about 200 kB for such an object
    expect(JSON.stringify(charts).length).toBeLessThan(80_000);
  });
});
