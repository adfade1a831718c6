/**
 * Release-page overview data: a binned sky map in a projection chosen from the field's
 * extent, the redshift distribution, and the stellar-mass distribution per population.
 */
import type { ObjectsData } from '../bundle/load.ts';
import type { SummaryTable } from './summarise.ts';
import type { SiteContent } from './content.ts';

const DEG = Math.PI / 180;

/** Circular mean of right ascension (right across 0/360). */
function meanRa(ra: Float64Array): number {
  let sx = 0, sy = 0;
  for (const v of ra) {
    sx += Math.cos(v * DEG);
    sy += Math.sin(v * DEG);
  }
  const m = Math.atan2(sy, sx) / DEG;
  return m < 0 ? m + 360 : m;
}

/** Gnomonic (tangent-plane) projection in degrees about (ra0, dec0) (Calabretta and Greisen 2002, TAN). */
function tangent(ra: number, dec: number, ra0: number, dec0: number): [number, number] {
  const a = ra * DEG, d = dec * DEG, a0 = ra0 * DEG, d0 = dec0 * DEG;
  const cosc = Math.sin(d0) * Math.sin(d) + Math.cos(d0) * Math.cos(d) * Math.cos(a - a0);
  const x = (Math.cos(d) * Math.sin(a - a0)) / cosc;
  const y = (Math.cos(d0) * Math.sin(d) - Math.sin(d0) * Math.cos(d) * Math.cos(a - a0)) / cosc;
  return [-x / DEG, y / DEG]; // east to the left, as on the sky
}

/** Hammer-Aitoff equal-area projection in degrees-like units (Calabretta and Greisen 2002, AIT). */
function aitoff(ra: number, dec: number): [number, number] {
  let l = ra > 180 ? ra - 360 : ra;
  l *= DEG;
  const b = dec * DEG;
  const z = Math.sqrt(1 + Math.cos(b) * Math.cos(l / 2));
  return [-((2 * Math.cos(b) * Math.sin(l / 2)) / z) / DEG, (Math.sin(b) / z) / DEG];
}

export function siteOverview(objects: ObjectsData, summary: SummaryTable, population: string[], iM: number): Pick<SiteContent, 'sky' | 'redshiftHist' | 'massHist'> {
  const n = objects.n;
  const ra0 = n ? meanRa(objects.ra) : 0;
  let dec0 = 0;
  for (const d of objects.dec) dec0 += d / Math.max(1, n);
  let maxSep = 0;
  for (let i = 0; i < n; i++) {
    const c = Math.sin(dec0 * DEG) * Math.sin(objects.dec[i] * DEG) + Math.cos(dec0 * DEG) * Math.cos(objects.dec[i] * DEG) * Math.cos((objects.ra[i] - ra0) * DEG);
    maxSep = Math.max(maxSep, Math.acos(Math.min(1, Math.max(-1, c))) / DEG);
  }
  const projection: 'tangent' | 'equal-area' = maxSep < 20 ? 'tangent' : 'equal-area';
  const xy = Array.from({ length: n }, (_, i) => (projection === 'tangent' ? tangent(objects.ra[i], objects.dec[i], ra0, dec0) : aitoff(objects.ra[i], objects.dec[i])));
  let xMin = Infinity, xMax = -Infinity, yMin = Infinity, yMax = -Infinity;
  for (const [x, y] of xy) {
    xMin = Math.min(xMin, x); xMax = Math.max(xMax, x);
    yMin = Math.min(yMin, y); yMax = Math.max(yMax, y);
  }
  if (!n) { xMin = yMin = -1; xMax = yMax = 1; }
  const span = Math.max(xMax - xMin, yMax - yMin) || 1;
  const cellSize = Number((span / 40).toPrecision(3));
  const cells = new Map<string, { x: number; y: number; n: number }>();
  for (const [x, y] of xy) {
    const cx = Math.floor((x - xMin) / cellSize), cy = Math.floor((y - yMin) / cellSize);
    const key = `${cx},${cy}`;
    const c = cells.get(key);
    if (c) c.n++;
    else cells.set(key, { x: Number((xMin + (cx + 0.5) * cellSize).toPrecision(6)), y: Number((yMin + (cy + 0.5) * cellSize).toPrecision(6)), n: 1 });
  }
  // a loop, not Math.max(...values): spreading 2x10^5 values as arguments overflows the stack
  let zMax = 0.5;
  for (const z of objects.redshift) if (Number.isFinite(z) && z > zMax) zMax = z;
  const dz = Number((zMax / 30).toPrecision(2));
  const zEdges = Array.from({ length: Math.ceil(zMax / dz) + 1 }, (_, i) => Number((i * dz).toFixed(6)));
  const zCounts = new Array<number>(zEdges.length - 1).fill(0);
  for (const z of objects.redshift) if (Number.isFinite(z)) zCounts[Math.min(zCounts.length - 1, Math.floor(z / dz))]++;
  const mEdges = Array.from({ length: 21 }, (_, i) => 7 + i * 0.25);
  const sf = new Array<number>(20).fill(0), qu = new Array<number>(20).fill(0);
  if (iM >= 0)
    for (let i = 0; i < n; i++) {
      const m = summary.p50[iM][i];
      const k = Math.floor((m - 7) / 0.25);
      if (k < 0 || k >= 20) continue;
      if (population[i] === 'star-forming') sf[k]++;
      else if (population[i] === 'quiescent') qu[k]++;
    }
  return {
    sky: {
      projection,
      centre: { ra: Number(ra0.toFixed(5)), dec: Number(dec0.toFixed(5)) },
      cells: [...cells.values()].sort((a, b) => a.y - b.y || a.x - b.x),
      cellSize,
      extent: { xMin, xMax, yMin, yMax },
    },
    redshiftHist: { edges: zEdges, counts: zCounts },
    massHist: { edges: mEdges, starForming: sf, quiescent: qu },
  };
}
