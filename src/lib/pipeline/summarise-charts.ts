/**
 * Corner-plot data of one object: the 1-D marginals (histogram and KDE curve) of every
 * parameter and, for every pair, the contours enclosing 68% and 95% of the posterior mass with
 * a light scatter of equal-weight draws. `cornerData` computes it into flat arrays; from those
 * `chartsOf` builds the published `ObjectCharts` and `writeChartsJson` writes the same as JSON
 * text (byte for byte `JSON.stringify(chartsOf(...))`), which is what worker threads hand back.
 *
 * The corner plot (src/lib/charts/corner.ts) draws each panel 70 to 150 pixels wide over the
 * parameter's range plus 6% padding, so one pixel is at least 1/134 of a parameter's range
 * (the extent of the draws, which the histogram spans). What we publish is sized to that
 * resolution rather than to double precision:
 * - coordinates are rounded to a decimal quantum of at most 1/500 of the range (the largest
 *   power of ten not above it), i.e. about three significant digits relative to the plotted
 *   range and at most a quarter of a pixel on the widest panel; densities likewise to at most
 *   1/500 of the panel's highest density;
 * - contour polylines are simplified by Douglas-Peucker with a tolerance of 1/300 of each
 *   axis's range (under half a pixel on the widest panel);
 * - 50 scatter points per panel (the corner plot's default `maxPoints`).
 *
 * The 2-D densities are binned on a fixed grid per parameter: every parameter's range is cut
 * into 32 cells once, and each draw's linear-binning coordinates on those cells (`cellCoords`)
 * serve all the panels the parameter is in, so a panel costs one pass over the draws to bin
 * them (four additions each) and a separable Gaussian smoothing of its 32 x 32 cells (two
 * SIMD passes, `smoothedGrid`) of the diagonal's 1-D Silverman bandwidth on each axis, at
 * least one and at most six cells: the binned 2-D product-kernel KDE with the bandwidths of the
 * KDE curves drawn on the diagonal. The contours come from that grid: the density level whose
 * superlevel set holds each mass (`creditLevels`, cells taken densest first), traced by
 * marching squares on the cell centres into flat arrays (`traceContours`), simplified and
 * rounded there. Densities are left unnormalised on the panels (levels and contours do not
 * depend on the scale). 32 cells (2 to 5 pixels each) resolve a density smoothed over at least
 * a cell, and give about one path per level and panel.
 */
import { cellCoords, binLinear, clearPaths, gaussianHalfTaps, histogram, kde, kdeBandwidth, kdeScratchSlots, newPathSet, sampleMoments, simplifyPoints, smoothedContours, traceContours, type Density2d, type SampleMoments } from '../core/stats/density.ts';
import { alloc, int32At, memory, release, reserve } from '../core/stats/simd.ts';
import { makeRng } from '../core/random.ts';
import type { Contour2d, Marginal } from './content.ts';
import { JsonWriter } from './json-writer.ts';

export interface ObjectCharts {
  marginals: Marginal[];
  contours: Contour2d[];
  correlation: number[][] | null;
}

export const MASS_LEVELS = [0.68, 0.95] as const;
/** Scatter points per 2-D panel: the corner plot's default `maxPoints`. */
export const SCATTER_POINTS = 50;
/** Quantum of published coordinates, as a fraction of the plotted range (at most). */
const COORD_FRACTION = 1 / 500;
/** Douglas-Peucker tolerance of contour paths, as a fraction of each axis's range. */
const CONTOUR_TOLERANCE = 1 / 300;
export const CORNER_GRID = 32;
/** Scratch slots (`simd.ts`) `cornerData` may allocate: a binned KDE curve and a smoothed panel (taps of at most 6 cells, L = 24). */
export const CORNER_SCRATCH_SLOTS = (n: number, k: number) => k * (n + Math.ceil(n / 2) + 1) + Math.max(2 * n + kdeScratchSlots(64), 6 * (CORNER_GRID + 48) * (CORNER_GRID + 48) + 512);
/** Bounds of the 2-D smoothing in cells (our choice): at least one cell, at most 6 (cost grows with it). */
const MAX_SMOOTH_CELLS = 6;
const KDE_POINTS = 64;

export function round(v: number, digits = 5): number {
  if (!Number.isFinite(v)) return v;
  return Number(v.toPrecision(digits));
}

/**
 * Rounding to the largest power of ten 10^e at most `span` x COORD_FRACTION: e, or null (5
 * significant digits) when the span is not usable.
 */
function quantumExponent(span: number): number | null {
  if (!(span > 0) || !Number.isFinite(span)) return null;
  return Math.floor(Math.log10(span * COORD_FRACTION));
}

/** Rounding to 10^e (see `quantumExponent`): f = 10^e for e >= 0, 10^-e for e < 0. */
interface Rounding {
  e: number | null;
  f: number;
}

function rounding(e: number | null): Rounding {
  return { e, f: e === null ? 1 : 10 ** Math.abs(e) };
}

/** `v` rounded as `r` says; an integer over a power of ten is the double nearest that decimal. */
function roundTo(v: number, r: Rounding): number {
  if (r.e === null) return round(v);
  if (!Number.isFinite(v)) return v;
  return r.e >= 0 ? Math.round(v / r.f) * r.f : Math.round(v * r.f) / r.f;
}

/** `src` rounded in place (and returned). */
function roundAll(src: Float64Array, r: Rounding): Float64Array {
  for (let i = 0; i < src.length; i++) src[i] = roundTo(src[i], r);
  return src;
}

/** One parameter's marginal, rounded as published. */
interface MarginalData {
  edges: Float64Array;
  density: Float64Array;
  kdeX: Float64Array;
  kdeY: Float64Array;
  rule: string;
  /** Rounding exponents of coordinates and densities. */
  ex: number | null;
  ey: number | null;
}

/** The corner data of one object in flat arrays (rounded as published). */
export interface CornerData {
  names: string[];
  marginals: MarginalData[];
  /** Scatter points: per parameter, the rounded values of the picked draws. */
  points: Float64Array[];
  /** Contour points (x, y interleaved, rounded), paths in panel, level, path order. */
  xy: Float64Array;
  /** Points per path. */
  pathPoints: Int32Array;
  /** Paths per panel and level, [panel][level]; panels (a, b), a < b, in row order. */
  levelPaths: Int32Array;
}

// Reused across objects (one thread each).
const traced = newPathSet();
let keep = new Uint8Array(256);
const out = { xy: new Float64Array(4096), points: 0, pathPoints: new Int32Array(256), paths: 0 };

function pushPoint(x: number, y: number): void {
  if (2 * out.points + 2 > out.xy.length) {
    const bigger = new Float64Array(2 * out.xy.length);
    bigger.set(out.xy);
    out.xy = bigger;
  }
  out.xy[2 * out.points] = x;
  out.xy[2 * out.points + 1] = y;
  out.points++;
}

function pushPath(points: number): void {
  if (out.paths === out.pathPoints.length) {
    const bigger = new Int32Array(2 * out.pathPoints.length);
    bigger.set(out.pathPoints);
    out.pathPoints = bigger;
  }
  out.pathPoints[out.paths++] = points;
}

/**
 * Corner-plot data (see the module comment). `moments` (per parameter, from `sampleMoments` of
 * the same draws) saves sorting each parameter again; `seed` picks the scatter points.
 */
export function cornerData(names: string[], xs: Float64Array[], w: Float64Array, seed: number, moments?: SampleMoments[]): CornerData {
  const k = xs.length;
  const n = w.length;
  // each draw's cell coordinates on every parameter's grid, in simd.ts memory (the 2-D binning
  // reads them there), with room for everything below first, so the views made now stay valid
  reserve(CORNER_SCRATCH_SLOTS(n, k));
  const mark = alloc(k * (n + Math.ceil(n / 2) + 1));
  const cells: Int32Array[] = [];
  const fracs: Float64Array[] = [];
  for (let j = 0; j < k; j++) {
    const at = mark + j * (n + Math.ceil(n / 2) + 1);
    fracs.push(memory().subarray(at, at + n));
    cells.push(int32At(at + n, n));
  }
  const marginals: MarginalData[] = [];
  const lo = new Float64Array(k);
  const hi = new Float64Array(k);
  const taps: Float64Array[] = [];
  for (let j = 0; j < k; j++) {
    const m = moments?.[j] ?? sampleMoments(xs[j], w);
    const h = histogram(xs[j], w, { rule: 'fd', moments: m });
    const a = h.edges[0], b = h.edges[h.edges.length - 1];
    lo[j] = a;
    hi[j] = b;
    const ex = quantumExponent(b - a);
    const rx = rounding(ex);
    const gridX = new Float64Array(KDE_POINTS);
    for (let g = 0; g < KDE_POINTS; g++) gridX[g] = a + ((b - a) * g) / (KDE_POINTS - 1);
    const dens = kde(xs[j], w, gridX, { bandwidth: kdeBandwidth(xs[j], w, 'silverman', m) });
    let top = 0;
    for (const v of h.density) if (v > top) top = v;
    for (const v of dens.density) if (v > top) top = v;
    const ey = quantumExponent(top);
    const ry = rounding(ey);
    taps.push(gaussianHalfTaps(Math.min(MAX_SMOOTH_CELLS, Math.max(1, (dens.bandwidth * CORNER_GRID) / (b - a))) || 1));
    marginals.push({
      edges: roundAll(h.edges, rx),
      density: roundAll(h.density, ry),
      kdeX: roundAll(gridX, rx),
      kdeY: roundAll(dens.density, ry),
      rule: `${h.rule}; KDE bandwidth ${round(dens.bandwidth, 3)} (Silverman)`,
      ex,
      ey,
    });
    cellCoords(xs[j], a, b, CORNER_GRID, cells[j], fracs[j]);
  }

  // a light scatter of equal-weight points under the contours (the same draws in every panel)
  const rng = makeRng(seed);
  const cdf = new Float64Array(n);
  let acc = 0;
  for (let i = 0; i < n; i++) cdf[i] = acc += w[i];
  const nPts = Math.min(SCATTER_POINTS, n);
  const picks = new Int32Array(nPts);
  for (let p = 0; p < nPts; p++) {
    const u = rng.next() * acc;
    let a = 0, b = n - 1;
    while (a < b) {
      const mid = (a + b) >> 1;
      if (cdf[mid] < u) a = mid + 1;
      else b = mid;
    }
    picks[p] = a;
  }
  const rounders = marginals.map((m) => rounding(m.ex));
  const points = xs.map((x, j) => Float64Array.from(picks, (i) => roundTo(x[i], rounders[j])));

  const N = CORNER_GRID;
  const panel: Density2d = { nx: N, ny: N, x0: 0, dx: 0, y0: 0, dy: 0, z: new Float64Array(0) };
  const levelPaths = new Int32Array(((k * (k - 1)) / 2) * MASS_LEVELS.length);
  out.points = 0;
  out.paths = 0;
  let slot = 0;
  for (let a = 0; a < k; a++) {
    const ca = cells[a], fa = fracs[a];
    const ex = rounders[a];
    const sa = hi[a] - lo[a];
    for (let b = a + 1; b < k; b++) {
      const cb = cells[b], fb = fracs[b];
      const ey = rounders[b];
      const sb = hi[b] - lo[b];
      panel.x0 = lo[a];
      panel.dx = sa / N;
      panel.y0 = lo[b];
      panel.dy = sb / N;
      const panelMark = alloc(0);
      const levels = smoothedContours(panel, taps[a], taps[b], (m, origin, stride) => binLinear(ca, fa, cb, fb, w, n, m, origin, stride), MASS_LEVELS);
      for (let li = 0; li < MASS_LEVELS.length; li++) {
        clearPaths(traced);
        traceContours(panel, levels[li], traced);
        let kept = 0;
        for (let p = 0; p < traced.paths; p++) {
          const first = traced.start[p];
          const count = traced.start[p + 1] - first;
          if (keep.length < count) keep = new Uint8Array(2 * count);
          simplifyPoints(traced.xy, first, count, CONTOUR_TOLERANCE, sa, sb, keep);
          // rounded, without the repeats rounding creates (a closed path stays closed)
          const before = out.points;
          let lx = NaN, ly = NaN;
          for (let q = 0; q < count; q++) {
            if (!keep[q]) continue;
            const qx = roundTo(traced.xy[2 * (first + q)], ex);
            const qy = roundTo(traced.xy[2 * (first + q) + 1], ey);
            if (qx === lx && qy === ly) continue;
            pushPoint(qx, qy);
            lx = qx;
            ly = qy;
          }
          if (out.points - before > 1) {
            pushPath(out.points - before);
            kept++;
          } else out.points = before;
        }
        levelPaths[slot++] = kept;
      }
      release(panelMark);
    }
  }
  release(mark);
  return { names, marginals, points, xy: out.xy.slice(0, 2 * out.points), pathPoints: out.pathPoints.slice(0, out.paths), levelPaths };
}

/** The published corner data (`ObjectCharts`, correlation left null for the caller). */
export function chartsOf(c: CornerData): ObjectCharts {
  const k = c.names.length;
  const marginals: Marginal[] = c.marginals.map((m, j) => ({
    param: c.names[j],
    edges: Array.from(m.edges),
    density: Array.from(m.density),
    kdeX: Array.from(m.kdeX),
    kdeY: Array.from(m.kdeY),
    rule: m.rule,
  }));
  const contours: Contour2d[] = [];
  let slot = 0, path = 0, point = 0;
  for (let a = 0; a < k; a++)
    for (let b = a + 1; b < k; b++) {
      contours.push({
        x: c.names[a],
        y: c.names[b],
        levels: MASS_LEVELS.map((mass) => {
          const paths: [number, number][][] = [];
          for (let p = c.levelPaths[slot++]; p > 0; p--) {
            const pts: [number, number][] = [];
            for (let q = c.pathPoints[path++]; q > 0; q--, point++) pts.push([c.xy[2 * point], c.xy[2 * point + 1]]);
            paths.push(pts);
          }
          return { mass, paths };
        }),
        points: Array.from(c.points[a], (x, p) => [x, c.points[b][p]] as [number, number]),
      });
    }
  return { marginals, contours, correlation: null };
}

/**
 * Corner-plot data as `ObjectCharts` (see the module comment; correlation left null for the
 * caller). `moments` (per parameter, from `sampleMoments` of the same draws) saves sorting
 * each parameter again.
 */
export function chartsFor(names: string[], xs: Float64Array[], w: Float64Array, seed: number, moments?: SampleMoments[]): ObjectCharts {
  return chartsOf(cornerData(names, xs, w, seed, moments));
}

function decimals(jw: JsonWriter, a: Float64Array, e: number | null): void {
  jw.byte(91);
  const p = e !== null && e < 0 ? 10 ** -e : 1;
  for (let i = 0; i < a.length; i++) {
    if (i) jw.byte(44);
    if (e === null) jw.number(a[i]);
    else jw.decimal(a[i], e, p);
  }
  jw.byte(93);
}

function value(jw: JsonWriter, v: number, e: number | null, p: number): void {
  if (e === null) jw.number(v);
  else jw.decimal(v, e, p);
}

const pointWriter = new JsonWriter();
let pointEnds = new Int32Array(0);

/**
 * The text of each parameter's scatter values, each written once and used in k - 1 panels:
 * value q of parameter j is bytes [ends[j m + q - 1], ends[j m + q]) of the returned view (m
 * values per parameter; valid until the next call).
 */
function pointTexts(c: CornerData): { bytes: Uint8Array; ends: Int32Array } {
  const m = c.points[0]?.length ?? 0;
  if (pointEnds.length < c.points.length * m) pointEnds = new Int32Array(c.points.length * m);
  pointWriter.reset();
  c.points.forEach((pts, j) => {
    const e = c.marginals[j].ex;
    const p = e !== null && e < 0 ? 10 ** -e : 1;
    for (let q = 0; q < m; q++) {
      value(pointWriter, pts[q], e, p);
      pointEnds[j * m + q] = pointWriter.length;
    }
  });
  return { bytes: pointWriter.view(), ends: pointEnds };
}

/**
 * `JSON.stringify({ ...chartsOf(c), correlation })` written into `jw` (the same text; tested),
 * without building the objects.
 */
export function writeChartsJson(jw: JsonWriter, c: CornerData, correlation: number[][] | null): void {
  const k = c.names.length;
  jw.ascii('{"marginals":[');
  for (let j = 0; j < k; j++) {
    const m = c.marginals[j];
    if (j) jw.byte(44);
    jw.ascii('{"param":');
    jw.string(c.names[j]);
    jw.ascii(',"edges":');
    decimals(jw, m.edges, m.ex);
    jw.ascii(',"density":');
    decimals(jw, m.density, m.ey);
    jw.ascii(',"kdeX":');
    decimals(jw, m.kdeX, m.ex);
    jw.ascii(',"kdeY":');
    decimals(jw, m.kdeY, m.ey);
    jw.ascii(',"rule":');
    jw.string(m.rule);
    jw.byte(125);
  }
  jw.ascii('],"contours":[');
  let slot = 0, path = 0, point = 0;
  let first = true;
  const texts = pointTexts(c);
  for (let a = 0; a < k; a++) {
    const ex = c.marginals[a].ex;
    const px = ex !== null && ex < 0 ? 10 ** -ex : 1;
    for (let b = a + 1; b < k; b++) {
      const ey = c.marginals[b].ex;
      const py = ey !== null && ey < 0 ? 10 ** -ey : 1;
      if (!first) jw.byte(44);
      first = false;
      jw.ascii('{"x":');
      jw.string(c.names[a]);
      jw.ascii(',"y":');
      jw.string(c.names[b]);
      jw.ascii(',"levels":[');
      for (let li = 0; li < MASS_LEVELS.length; li++) {
        if (li) jw.byte(44);
        jw.ascii('{"mass":');
        jw.number(MASS_LEVELS[li]);
        jw.ascii(',"paths":[');
        for (let p = c.levelPaths[slot++], pi = 0; pi < p; pi++) {
          if (pi) jw.byte(44);
          const count = c.pathPoints[path++];
          jw.points(c.xy, point, count, ex, px, ey, py);
          point += count;
        }
        jw.ascii(']}');
      }
      jw.ascii('],"points":[');
      const m = c.points[a].length;
      const tb = texts.bytes, te = texts.ends;
      for (let p = 0; p < m; p++) {
        const qa = a * m + p, qb = b * m + p;
        if (p) jw.byte(44);
        jw.byte(91);
        jw.bytesRange(tb, qa ? te[qa - 1] : 0, te[qa]);
        jw.byte(44);
        jw.bytesRange(tb, qb ? te[qb - 1] : 0, te[qb]);
        jw.byte(93);
      }
      jw.ascii(']}');
    }
  }
  jw.ascii('],"correlation":');
  if (!correlation) jw.ascii('null');
  else {
    jw.byte(91);
    correlation.forEach((row, r) => {
      if (r) jw.byte(44);
      jw.byte(91);
      row.forEach((v, q) => {
        if (q) jw.byte(44);
        jw.number(v);
      });
      jw.byte(93);
    });
    jw.byte(93);
  }
  jw.byte(125);
}
