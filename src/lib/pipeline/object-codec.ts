/**
 * The compact form of object content in the viewer's shards (pure: the pipeline encodes, the
 * browser decodes). Everything but the posterior-matrix data is kept as it is; the matrix data,
 * most of an object's bytes, is stored at the resolution it is drawn at:
 *
 * - each parameter's plotted span [lo, hi] (its histogram's edges) is the frame of reference;
 *   histogram edges and the KDE grid, both equally spaced, become (lo, hi, count);
 * - densities become integers 0..1000 of the panel's highest density, coordinates integers
 *   0..1000 of the span (a step is 1/1000 of a panel, a sixth of a pixel on the widest one),
 *   with each outline delta-encoded (small numbers, which the shard's gzip packs well);
 * - the scatter points are dropped (the posterior matrix does not draw them).
 *
 * `decodeObject(encodeObject(o))` draws the same figures as `o` to within a fifth of a pixel.
 */
import type { Contour2d, Marginal, ObjectContent } from './content.ts';

const Q = 1000;

/**
 * Version of a shard file, `{ v, objects: EncodedObject[] }` gzipped (`objects/shards/<NNNNNN>.json.gz`);
 * a reader refuses other versions rather than draw wrong figures.
 */
export const SHARD_FORMAT = 1;

export interface Shard {
  v: number;
  objects: EncodedObject[];
}

/** A sequence of more than three values as (lo, hi, n) when it is equally spaced to within 1e-6 of its span, else as it is. */
type Grid = [number, number, number] | number[];

export interface EncodedMarginal {
  p: string;
  e: Grid;
  /** Densities, 0..Q of `s`. */
  d: number[];
  /** The highest density (histogram or KDE). */
  s: number;
  kx: Grid;
  ky: number[];
  rule: string;
}

export interface EncodedContour {
  x: string;
  y: string;
  /** [mass, paths]: each path flattened and delta-encoded, x then y, in units of 1/Q of each span. */
  l: [number, number[][]][];
}

export type EncodedObject = Omit<ObjectContent, 'marginals' | 'contours'> & { m: EncodedMarginal[]; c: EncodedContour[] };

function grid(v: number[]): Grid {
  const n = v.length;
  if (n <= 3) return v;
  const lo = v[0], hi = v[n - 1], span = hi - lo;
  if (!(span > 0)) return v;
  for (let i = 1; i < n - 1; i++) if (Math.abs(v[i] - (lo + (span * i) / (n - 1))) > 1e-6 * span + 1e-12) return v;
  return [lo, hi, n];
}

/** The sequence of `n` values a `grid` stands for (a triple only ever stands for more than three). */
function ungrid(g: Grid, n: number): number[] {
  if (g.length === 3 && n > 3) {
    const [lo, hi, m] = g;
    return Array.from({ length: m }, (_, i) => lo + ((hi - lo) * i) / (m - 1));
  }
  return g as number[];
}

const sig = (v: number) => (Number.isFinite(v) && v !== 0 ? Number(v.toPrecision(6)) : v);

export function encodeObject(o: ObjectContent): EncodedObject {
  const span = new Map<string, [number, number]>();
  const m: EncodedMarginal[] = o.marginals.map((g) => {
    const lo = g.edges[0], hi = g.edges[g.edges.length - 1];
    span.set(g.param, [lo, hi]);
    let s = 0;
    for (const v of g.density) if (v > s) s = v;
    for (const v of g.kdeY) if (v > s) s = v;
    const q = (v: number) => (s > 0 ? Math.round((v / s) * Q) : 0);
    return { p: g.param, e: grid(g.edges), d: g.density.map(q), s: sig(s), kx: grid(g.kdeX), ky: g.kdeY.map(q), rule: g.rule };
  });
  const c: EncodedContour[] = o.contours.map((k) => {
    const [xl, xh] = span.get(k.x) ?? [0, 1];
    const [yl, yh] = span.get(k.y) ?? [0, 1];
    const qx = (v: number) => Math.round(((v - xl) / (xh - xl || 1)) * Q);
    const qy = (v: number) => Math.round(((v - yl) / (yh - yl || 1)) * Q);
    return {
      x: k.x,
      y: k.y,
      l: k.levels.map((lv) => [
        lv.mass,
        lv.paths.map((path) => {
          const out: number[] = [];
          let px = 0, py = 0;
          path.forEach((pt, i) => {
            const x = qx(pt[0]), y = qy(pt[1]);
            out.push(i ? x - px : x, i ? y - py : y);
            px = x;
            py = y;
          });
          return out;
        }),
      ]),
    };
  });
  const { marginals: _m, contours: _c, ...rest } = o;
  void _m;
  void _c;
  return { ...rest, m, c };
}

export function decodeObject(e: EncodedObject): ObjectContent {
  const span = new Map<string, [number, number]>();
  const marginals: Marginal[] = e.m.map((g) => {
    const edges = ungrid(g.e, g.d.length + 1);
    span.set(g.p, [edges[0], edges[edges.length - 1]]);
    const d = (v: number) => (v / Q) * g.s;
    return { param: g.p, edges, density: g.d.map(d), kdeX: ungrid(g.kx, g.ky.length), kdeY: g.ky.map(d), rule: g.rule };
  });
  const contours: Contour2d[] = e.c.map((k) => {
    const [xl, xh] = span.get(k.x) ?? [0, 1];
    const [yl, yh] = span.get(k.y) ?? [0, 1];
    return {
      x: k.x,
      y: k.y,
      levels: k.l.map(([mass, paths]) => ({
        mass,
        paths: paths.map((flat) => {
          const pts: [number, number][] = [];
          let x = 0, y = 0;
          for (let i = 0; i + 1 < flat.length; i += 2) {
            x = i ? x + flat[i] : flat[i];
            y = i ? y + flat[i + 1] : flat[i + 1];
            pts.push([xl + (x / Q) * (xh - xl), yl + (y / Q) * (yh - yl)]);
          }
          return pts;
        }),
      })),
      points: [],
    };
  });
  const { m: _m, c: _c, ...rest } = e;
  void _m;
  void _c;
  return { ...rest, marginals, contours };
}
