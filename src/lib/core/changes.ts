/**
 * Release against release: the arithmetic of a comparison, over plain numbers and typed arrays.
 *
 * A shift is measured in units of the combined uncertainty of the two releases. Each release
 * gives a median and a 68% interval [lo, hi] (16th and 84th percentiles, or the fit's 68%
 * credible interval); with asymmetric errors, each side's half-width is taken on the side that
 * faces the other median (common practice for comparing asymmetric errors):
 *
 *   z = (m_new - m_old) / sqrt(w_new^2 + w_old^2),
 *   w_new = m_new - lo_new and w_old = hi_old - m_old when m_new > m_old (mirrored otherwise).
 *
 * The two releases are treated as independent, which overstates the combined uncertainty when
 * both fitted the same photometry, so |z| is a conservative measure of change.
 */

/** Shift of a median in units of the combined uncertainty (see above); NaN when either side is missing. */
export function shiftSigma(oldMedian: number, oldLo: number, oldHi: number, newMedian: number, newLo: number, newHi: number): number {
  if (![oldMedian, oldLo, oldHi, newMedian, newLo, newHi].every(Number.isFinite)) return NaN;
  const d = newMedian - oldMedian;
  if (d === 0) return 0;
  const wNew = d > 0 ? newMedian - newLo : newHi - newMedian;
  const wOld = d > 0 ? oldHi - oldMedian : oldMedian - oldLo;
  const w = Math.sqrt(Math.max(0, wNew) ** 2 + Math.max(0, wOld) ** 2);
  return w > 0 ? d / w : d > 0 ? Infinity : -Infinity;
}

/** Edges of the published shift histograms, in units of the combined uncertainty: -6 to 6 in steps of 0.5. */
export const SHIFT_EDGES: readonly number[] = Object.freeze(Array.from({ length: 25 }, (_, i) => -6 + 0.5 * i));

export interface ShiftHistogram {
  edges: number[];
  counts: number[];
  /** Shifts below the first and above the last edge. */
  below: number;
  above: number;
}

/** Histogram of the finite values of `z` over `edges` (bins closed on the left, the last one on both sides). */
export function shiftHistogram(z: Float64Array, edges: readonly number[] = SHIFT_EDGES): ShiftHistogram {
  const counts = new Array<number>(edges.length - 1).fill(0);
  let below = 0;
  let above = 0;
  const lo = edges[0];
  const hi = edges[edges.length - 1];
  for (const v of z) {
    if (Number.isNaN(v)) continue;
    if (v < lo) below++;
    else if (v > hi) above++;
    else {
      let k = upperBound(edges, v) - 1;
      if (k >= counts.length) k = counts.length - 1;
      counts[k]++;
    }
  }
  return { edges: edges.slice(), counts, below, above };
}

/** Index of the first edge greater than v. */
function upperBound(edges: readonly number[], v: number): number {
  let a = 0;
  let b = edges.length;
  while (a < b) {
    const m = (a + b) >> 1;
    if (edges[m] <= v) a = m + 1;
    else b = m;
  }
  return a;
}

export interface ShiftSummary {
  /** Objects with a finite shift. */
  n: number;
  /** Median and 16th/84th percentiles of the shifts (nearest rank on the sorted finite values). */
  median: number;
  p16: number;
  p84: number;
  /** Objects with |z| above 1, 2 and 3. */
  beyond1: number;
  beyond2: number;
  beyond3: number;
}

/** Summary of a set of shifts; percentiles by nearest rank, ceil(p n) of the sorted values (common practice). */
export function summariseShifts(z: Float64Array): ShiftSummary {
  let n = 0;
  for (const v of z) if (!Number.isNaN(v)) n++;
  const finite = new Float64Array(n);
  let k = 0;
  for (const v of z) if (!Number.isNaN(v)) finite[k++] = v;
  finite.sort();
  const rank = (p: number) => (n === 0 ? NaN : finite[Math.min(n - 1, Math.max(0, Math.ceil(p * n) - 1))]);
  let b1 = 0, b2 = 0, b3 = 0;
  for (const v of finite) {
    const a = Math.abs(v);
    if (a > 1) b1++;
    if (a > 2) b2++;
    if (a > 3) b3++;
  }
  return { n, median: rank(0.5), p16: rank(0.16), p84: rank(0.84), beyond1: b1, beyond2: b2, beyond3: b3 };
}

/** Bits set in `now` but not in `before` (raised) and set in `before` but not in `now` (cleared). */
export function flagChange(before: number, now: number): { raised: number; cleared: number } {
  return { raised: (now & ~before) >>> 0, cleared: (before & ~now) >>> 0 };
}

export interface PositionMatch {
  /** Index into the first list, the second list, and the separation in degrees, sorted by the first index. */
  a: Int32Array;
  b: Int32Array;
  sepDeg: Float64Array;
}

const DEG = Math.PI / 180;

/**
 * One-to-one match of two position lists within `radiusDeg`: every pair closer than the radius
 * is a candidate, and pairs are taken closest first (ties by index), each position at most once.
 * Positions go into cells of a grid on unit vectors whose side is the chord of the radius, so
 * only the 27 cells around a position are searched: no wrap at RA 0/360 and no trouble at the
 * poles. Separations are the chord converted back to an angle (exact on the sphere).
 */
export function matchByPosition(raA: ArrayLike<number>, decA: ArrayLike<number>, raB: ArrayLike<number>, decB: ArrayLike<number>, radiusDeg: number): PositionMatch {
  const empty = { a: new Int32Array(0), b: new Int32Array(0), sepDeg: new Float64Array(0) };
  if (!(radiusDeg > 0) || raA.length === 0 || raB.length === 0) return empty;
  const chord = 2 * Math.sin((radiusDeg * DEG) / 2);
  const unit = (ra: number, dec: number): [number, number, number] => [Math.cos(dec * DEG) * Math.cos(ra * DEG), Math.cos(dec * DEG) * Math.sin(ra * DEG), Math.sin(dec * DEG)];
  const cellOf = (v: [number, number, number]) => [Math.floor(v[0] / chord), Math.floor(v[1] / chord), Math.floor(v[2] / chord)];
  const grid = new Map<string, number[]>();
  const vb: [number, number, number][] = [];
  for (let j = 0; j < raB.length; j++) {
    const v = unit(raB[j], decB[j]);
    vb.push(v);
    if (!v.every(Number.isFinite)) continue;
    const c = cellOf(v);
    const k = `${c[0]},${c[1]},${c[2]}`;
    const list = grid.get(k);
    if (list) list.push(j);
    else grid.set(k, [j]);
  }
  const pairs: { i: number; j: number; d: number }[] = [];
  for (let i = 0; i < raA.length; i++) {
    const v = unit(raA[i], decA[i]);
    if (!v.every(Number.isFinite)) continue;
    const c = cellOf(v);
    for (let x = -1; x <= 1; x++)
      for (let y = -1; y <= 1; y++)
        for (let z = -1; z <= 1; z++)
          for (const j of grid.get(`${c[0] + x},${c[1] + y},${c[2] + z}`) ?? []) {
            const w = vb[j];
            const d = Math.hypot(v[0] - w[0], v[1] - w[1], v[2] - w[2]);
            if (d <= chord) pairs.push({ i, j, d });
          }
  }
  pairs.sort((p, q) => p.d - q.d || p.i - q.i || p.j - q.j);
  const usedA = new Set<number>();
  const usedB = new Set<number>();
  const taken: { i: number; j: number; d: number }[] = [];
  for (const p of pairs) {
    if (usedA.has(p.i) || usedB.has(p.j)) continue;
    usedA.add(p.i);
    usedB.add(p.j);
    taken.push(p);
  }
  taken.sort((p, q) => p.i - q.i);
  return {
    a: Int32Array.from(taken, (p) => p.i),
    b: Int32Array.from(taken, (p) => p.j),
    sepDeg: Float64Array.from(taken, (p) => (2 * Math.asin(Math.min(1, p.d / 2))) / DEG),
  };
}

/**
 * Precedence of two version strings by Semantic Versioning 2.0.0, section 11: numeric major,
 * minor and patch; a pre-release (after `-`) ranks below its release, its dot-separated
 * identifiers compared numerically when both are digits, otherwise as ASCII text, numeric
 * below text, and a shorter list below a longer one with equal leading identifiers; build
 * metadata (after `+`) is ignored. A leading `v` is allowed. Null when either is not of that form.
 */
export function compareVersions(a: string, b: string): number | null {
  const pa = parseVersion(a);
  const pb = parseVersion(b);
  if (!pa || !pb) return null;
  for (let k = 0; k < 3; k++) if (pa.core[k] !== pb.core[k]) return pa.core[k] < pb.core[k] ? -1 : 1;
  if (!pa.pre.length || !pb.pre.length) return pa.pre.length === pb.pre.length ? 0 : pa.pre.length ? -1 : 1;
  for (let k = 0; k < Math.min(pa.pre.length, pb.pre.length); k++) {
    const x = pa.pre[k];
    const y = pb.pre[k];
    if (x === y) continue;
    const nx = /^\d+$/.test(x);
    const ny = /^\d+$/.test(y);
    if (nx && ny) return BigInt(x) < BigInt(y) ? -1 : 1;
    if (nx !== ny) return nx ? -1 : 1;
    return x < y ? -1 : 1;
  }
  return pa.pre.length === pb.pre.length ? 0 : pa.pre.length < pb.pre.length ? -1 : 1;
}

function parseVersion(v: string): { core: bigint[]; pre: string[] } | null {
  const m = /^v?(0|[1-9]\d*)\.(0|[1-9]\d*)\.(0|[1-9]\d*)(?:-([0-9A-Za-z-]+(?:\.[0-9A-Za-z-]+)*))?(?:\+[0-9A-Za-z-]+(?:\.[0-9A-Za-z-]+)*)?$/.exec(v.trim());
  if (!m) return null;
  return { core: [BigInt(m[1]), BigInt(m[2]), BigInt(m[3])], pre: m[4] ? m[4].split('.') : [] };
}

/** The counts a changelog entry is drafted from (plain data; the pipeline fills it). */
export interface ChangeCounts {
  previousVersion: string;
  previousObjects: number;
  objects: number;
  added: number;
  removed: number;
  renamed: number;
  matchRadiusArcsec: number;
  thresholdSigma: number;
  /** Per compared parameter: its label and the objects whose median moved beyond the threshold. */
  moved: { label: string; n: number; compared: number }[];
  newParameters: string[];
  droppedParameters: string[];
  /** Per flag: label, objects that gained it and objects that lost it. */
  flags: { label: string; raised: number; cleared: number }[];
  /** Relations compared, with the largest |difference| over bins, methods and a, b, s. */
  relations: { title: string; status: 'compared' | 'new' | 'dropped'; maxSigma: number | null; where: string | null }[];
}

const plural = (n: number, one: string, many = `${one}s`) => `${n} ${n === 1 ? one : many}`;

/** A changelog entry in plain sentences, drafted from the counts of a comparison. */
export function draftChangelog(c: ChangeCounts): string {
  const s: string[] = [];
  const kept = c.objects - c.added - c.renamed;
  let objects = `Compared with version ${c.previousVersion} (${plural(c.previousObjects, 'object')}), this release has ${plural(c.objects, 'object')}: ${c.added} added, ${c.removed} removed`;
  objects += c.matchRadiusArcsec > 0 ? `, ${c.renamed} renamed (new id at the same position, within ${c.matchRadiusArcsec}″)` : '';
  s.push(`${objects}; ${kept} kept their id.`);
  const moved = c.moved.filter((m) => m.n > 0);
  if (c.moved.length)
    s.push(
      moved.length
        ? `Posterior medians moved by more than ${c.thresholdSigma}σ of the combined uncertainty in ${moved.map((m) => `${m.label} for ${plural(m.n, 'object')}`).join(', ')}${moved.length < c.moved.length ? `; no other parameter moved that far` : ''}.`
        : `No posterior median moved by more than ${c.thresholdSigma}σ of the combined uncertainty.`,
    );
  if (c.newParameters.length) s.push(`New parameters: ${c.newParameters.join(', ')}.`);
  if (c.droppedParameters.length) s.push(`Parameters no longer published: ${c.droppedParameters.join(', ')}.`);
  const flags = c.flags.filter((f) => f.raised || f.cleared);
  if (flags.length) s.push(`Quality flags: ${flags.map((f) => `${f.label} raised for ${f.raised} and cleared for ${f.cleared}`).join('; ')}.`);
  else if (c.flags.length) s.push('No quality flag was raised or cleared.');
  for (const r of c.relations) {
    if (r.status === 'new') s.push(`New relation: ${r.title}.`);
    else if (r.status === 'dropped') s.push(`Relation no longer fitted: ${r.title}.`);
    else if (r.maxSigma !== null) s.push(`${r.title}: the fitted parameters changed by at most ${r.maxSigma.toFixed(1)}σ${r.where ? ` (${r.where})` : ''}.`);
  }
  return s.join(' ');
}
