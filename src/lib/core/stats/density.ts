/**
 * Weighted 1-D and 2-D posterior densities: histograms, Gaussian kernel density estimates
 * (binned: linear binning and a discrete convolution, with a stated error bound against direct
 * summation), binned 2-D densities, credible-mass levels, their contour paths and the
 * simplification of those paths for plotting.
 * Contours are labelled by the posterior mass they enclose, never by "sigma".
 */
import { kishEss } from './weights.ts';
import { quantileSorted, sortDraws, weightedStd, type SortedDraws } from './summary.ts';
import { alloc, binLinear1d, binLinear2d, cellCodes, convolveSymmetric, int32At, levelBuckets, levelCells, memory, offsetOf, place, release, smooth2d } from './simd.ts';

export type HistogramRule = 'fd' | 'scott' | 'fixed';

export interface Histogram {
  /** bins + 1 edges, ascending. */
  edges: Float64Array;
  /** Weight per bin over (total weight x bin width): integrates to the fraction inside the range. */
  density: Float64Array;
  rule: HistogramRule;
}

const MAX_BINS = 200;

/**
 * The sample quantities the histogram rules and KDE bandwidth rules need, from one sort of the
 * draws: extent of the positive-weight draws, weighted standard deviation (normalised by the
 * sum of weights), weighted IQR (midpoint-rule quantiles), Kish effective sample size and the
 * total weight. Computing them once lets a caller share one sort between the histogram, the
 * bandwidth and the mode analysis of a parameter.
 */
export interface SampleMoments {
  lo: number;
  hi: number;
  sigma: number;
  iqr: number;
  neff: number;
  total: number;
}

// Reused by `sampleMoments` when the caller passes no sorted draws (single-threaded per module instance).
let momentsWork: SortedDraws = { x: new Float64Array(1024), w: new Float64Array(1024), n: 0, total: 0 };

/**
 * `SampleMoments` of weighted draws. `sorted`, when given, must be `sortDraws(x, w)` of the same
 * draws; the result is then identical to the one computed here, without a second sort. The
 * standard deviation is always taken in the original order of the draws so that it does not
 * depend on whether a sort was shared; `sigma`, when given, must be that value
 * (`weightedStd(x, w)`, e.g. the square root of the diagonal of `weightedCovariance`), and
 * `quartiles` the 25% and 75% quantiles of `sorted`.
 */
export function sampleMoments(x: Float64Array, w: Float64Array, sorted?: SortedDraws, sigma?: number, quartiles?: [number, number]): SampleMoments {
  let s = sorted;
  if (!s) {
    if (momentsWork.x.length < x.length) {
      const size = Math.max(x.length, momentsWork.x.length * 2);
      momentsWork = { x: new Float64Array(size), w: new Float64Array(size), n: 0, total: 0 };
    }
    s = sortDraws(x, w, momentsWork);
  }
  return {
    lo: s.n ? s.x[0] : NaN,
    hi: s.n ? s.x[s.n - 1] : NaN,
    sigma: sigma ?? weightedStd(x, w),
    iqr: quartiles ? quartiles[1] - quartiles[0] : quantileSorted(s, 0.75) - quantileSorted(s, 0.25),
    neff: kishEss(s.w.subarray(0, s.n)),
    total: s.total,
  };
}

/**
 * Weighted histogram. Bin width by Freedman & Diaconis (1981), h = 2 IQR n^(-1/3), with the
 * weighted IQR (midpoint-rule quantiles) and n the Kish effective sample size (our choice for
 * weighted draws); or by Scott (1979), h = 3.49 sigma n^(-1/3), with the weighted standard
 * deviation. 'fd' falls back to Scott when the IQR is zero. `bins` fixes the number of bins
 * (rule 'fixed'). At most 200 bins. The range defaults to the extent of the positive-weight
 * draws; draws outside it are left out but still count in the normalising total weight.
 * `moments` (from `sampleMoments` of the same draws) saves the sort.
 */
export function histogram(
  x: Float64Array,
  w: Float64Array,
  opts: { rule?: 'fd' | 'scott'; bins?: number; range?: [number, number]; moments?: SampleMoments } = {},
): Histogram {
  const m = opts.moments ?? sampleMoments(x, w);
  let [lo, hi] = opts.range ?? [m.lo, m.hi];
  if (!(hi > lo)) {
    const c = Number.isFinite(lo) ? lo : 0;
    lo = c - 0.5;
    hi = c + 0.5;
  }
  let rule: HistogramRule = opts.rule ?? 'fd';
  let bins: number;
  if (opts.bins !== undefined) {
    rule = 'fixed';
    bins = Math.max(1, Math.floor(opts.bins));
  } else {
    const cube = Math.cbrt(Math.max(m.neff, 1));
    let h = rule === 'fd' ? (2 * m.iqr) / cube : NaN;
    if (!(h > 0)) {
      rule = 'scott';
      h = (3.49 * m.sigma) / cube;
    }
    bins = h > 0 ? Math.min(MAX_BINS, Math.max(1, Math.ceil((hi - lo) / h))) : 1;
  }
  const width = (hi - lo) / bins;
  const edges = new Float64Array(bins + 1);
  for (let i = 0; i <= bins; i++) edges[i] = lo + i * width;
  edges[bins] = hi;
  const density = new Float64Array(bins);
  for (let i = 0; i < x.length; i++) {
    const wi = w[i];
    const xi = x[i];
    if (!(wi > 0) || !(xi >= lo && xi <= hi)) continue;
    const b = Math.min(bins - 1, Math.floor((xi - lo) / width));
    density[b] += wi;
  }
  const norm = 1 / (m.total * width);
  for (let b = 0; b < bins; b++) density[b] *= norm;
  return { edges, density, rule };
}

/**
 * Bandwidth for a weighted Gaussian KDE with n the Kish effective sample size:
 * 'scott' h = sigma n^(-1/5) (Scott 1992, d = 1); 'silverman' h = 0.9 min(sigma, IQR / 1.34)
 * n^(-1/5) (Silverman 1986, eq. 3.31); sigma and IQR are weighted (normalised by the sum of
 * weights; midpoint-rule quantiles). `moments` (from `sampleMoments` of the same draws) saves the sort.
 */
export function kdeBandwidth(x: Float64Array, w: Float64Array, rule: 'scott' | 'silverman', moments?: SampleMoments): number {
  const m = moments ?? sampleMoments(x, w);
  const f = Math.pow(Math.max(m.neff, 1), -0.2);
  if (rule === 'scott') return m.sigma * f;
  const spread = m.iqr > 0 ? Math.min(m.sigma, m.iqr / 1.34) : m.sigma;
  return 0.9 * spread * f;
}

const INV_SQRT_2PI = 1 / Math.sqrt(2 * Math.PI);

/** Direct O(n x grid) weighted Gaussian KDE; the reference the binned version is tested against. */
export function kdeDirect(x: Float64Array, w: Float64Array, grid: Float64Array, h: number): Float64Array {
  const out = new Float64Array(grid.length);
  let total = 0;
  for (let i = 0; i < x.length; i++) if (w[i] > 0) total += w[i];
  const c = INV_SQRT_2PI / (h * total);
  for (let g = 0; g < grid.length; g++) {
    let s = 0;
    for (let i = 0; i < x.length; i++) {
      const wi = w[i];
      if (!(wi > 0)) continue;
      const u = (grid[g] - x[i]) / h;
      if (u * u < 100) s += wi * Math.exp(-0.5 * u * u);
    }
    out[g] = s * c;
  }
  return out;
}

/**
 * Binned KDE settings. The mesh spacing delta is at most h / KDE_MESH_RATIO and the kernel is
 * cut at KDE_KERNEL_CUT h. Linear binning replaces each draw's kernel K(g - x) by the linear
 * interpolation of K between the two mesh nodes around x, whose error is at most
 * delta^2 / 8 max|K''| (the interpolation error bound of the trade) with max|K''| = phi(0) / h^3
 * for the Gaussian kernel at u = 0; the cut drops at most phi(KDE_KERNEL_CUT) / h per unit
 * weight. So |binned - direct| <= ((delta / h)^2 / 8 + exp(-KDE_KERNEL_CUT^2 / 2)) phi(0) / h,
 * at most 2.0e-3 phi(0) / h with these settings (`kdeErrorBound`); errors of different draws
 * are of both signs and largely cancel, so in practice the error is far smaller.
 * (Linear binning and discrete convolution: Silverman 1982, Applied Statistics 31, 93;
 * Wand 1994, J. Comput. Graph. Stat. 3, 433.)
 */
export const KDE_MESH_RATIO = 8;
export const KDE_KERNEL_CUT = 5;
/** Largest mesh before `kde` falls back to direct summation (our choice; 8 MB of doubles). */
const MAX_MESH = 1 << 20;
/** Scratch slots (`simd.ts`) a binned KDE on at most `grid` nodes may allocate beyond its draws: mesh M <= MAX_MESH, taps L + 1 <= M / 2 + 1, output. */
export const kdeScratchSlots = (grid: number) => MAX_MESH + (MAX_MESH >> 1) + grid + 2;

/** Guaranteed bound on |binned KDE - direct KDE| at bandwidth h (see `KDE_MESH_RATIO`). */
export function kdeErrorBound(h: number): number {
  return (1 / (8 * KDE_MESH_RATIO * KDE_MESH_RATIO) + Math.exp(-0.5 * KDE_KERNEL_CUT * KDE_KERNEL_CUT)) * (INV_SQRT_2PI / h);
}

/**
 * Binned weighted Gaussian KDE at the G uniform nodes g0 + g step (step > 0, h > 0): linear
 * binning onto a mesh of spacing step / r (r the least integer making it at most
 * h / KDE_MESH_RATIO), so every grid node is a mesh node, then the discrete convolution with the
 * kernel sampled on the mesh and cut at KDE_KERNEL_CUT h, evaluated at the grid nodes only
 * (`convolveSymmetric`, two nodes per SIMD instruction).
 * Cost O(n + G KDE_MESH_RATIO KDE_KERNEL_CUT), whatever the grid span. Null when the mesh
 * would exceed MAX_MESH nodes (the caller then sums directly).
 */
function binnedKdeUniform(x: Float64Array, w: Float64Array, g0: number, step: number, G: number, h: number): Float64Array | null {
  const r = Math.max(1, Math.ceil((KDE_MESH_RATIO * step) / h));
  const delta = step / r;
  const L = Math.ceil((KDE_KERNEL_CUT * h) / delta);
  const M = (G - 1) * r + 1 + 2 * L;
  if (!(M <= MAX_MESH)) return null;
  const base = alloc(0);
  const px = place(x);
  const pw = place(w);
  // mesh, kernel taps, output
  const mesh = alloc(M + L + 1 + G);
  const ker = mesh + M;
  const at = ker + L + 1;
  memory().fill(0, mesh, mesh + M);
  const origin = g0 - L * delta;
  const total = binLinear1d(px, pw, x.length, origin, 1 / delta, M, mesh);
  const mem = memory();
  const c = INV_SQRT_2PI / (h * total);
  for (let d = 0; d <= L; d++) {
    const u = (d * delta) / h;
    mem[ker + d] = c * Math.exp(-0.5 * u * u);
  }
  convolveSymmetric(mesh, ker, at, G, L, r);
  const out = mem.slice(at, at + G);
  release(base);
  return out;
}

/**
 * Weighted Gaussian kernel density estimate on `grid` (ascending points). Bandwidth by the
 * rules of `kdeBandwidth` (default 'scott') or a given number. On a uniform grid (spacings equal
 * to 1e-9 of the span) the estimate is binned (`binnedKdeUniform`: linear binning and a
 * discrete convolution; error bounded by `kdeErrorBound`); on any other grid, or when the
 * mesh would be too large, it is summed directly (`kdeDirect`). A degenerate sample (zero
 * spread) gets a bandwidth of 1/100 of the grid span.
 */
export function kde(
  x: Float64Array,
  w: Float64Array,
  grid: Float64Array,
  opts: { bandwidth?: 'scott' | 'silverman' | number } = {},
): { density: Float64Array; bandwidth: number } {
  const bw = opts.bandwidth ?? 'scott';
  let h = typeof bw === 'number' ? bw : kdeBandwidth(x, w, bw);
  const G = grid.length;
  if (G === 0) return { density: new Float64Array(0), bandwidth: h };
  if (!(h > 0)) h = (grid[G - 1] - grid[0]) / 100 || 1;
  if (G === 1) return { density: kdeDirect(x, w, grid, h), bandwidth: h };
  const g0 = grid[0];
  const step = (grid[G - 1] - g0) / (G - 1);
  let uniform = step > 0;
  const tol = 1e-9 * (grid[G - 1] - g0);
  for (let g = 1; uniform && g < G - 1; g++) if (!(Math.abs(grid[g] - (g0 + g * step)) <= tol)) uniform = false;
  const binned = uniform ? binnedKdeUniform(x, w, g0, step, G, h) : null;
  return { density: binned ?? kdeDirect(x, w, grid, h), bandwidth: h };
}

/**
 * The binned KDE at the G uniform nodes g0 + g step, without a grid array (for callers that
 * build the grid themselves, such as the mode analysis); see `kde` for the method and error.
 */
export function kdeUniform(x: Float64Array, w: Float64Array, g0: number, step: number, G: number, h: number): Float64Array {
  const binned = step > 0 && h > 0 ? binnedKdeUniform(x, w, g0, step, G, h) : null;
  if (binned) return binned;
  const grid = new Float64Array(G);
  for (let g = 0; g < G; g++) grid[g] = g0 + g * step;
  return kdeDirect(x, w, grid, h);
}

/**
 * A binned 2-D density on nx x ny cells. x0 and y0 are the lower edges of the range; cell
 * (i, j) is centred at (x0 + (i + 0.5) dx, y0 + (j + 0.5) dy) and stored at z[j * nx + i].
 */
export interface Density2d {
  nx: number;
  ny: number;
  x0: number;
  dx: number;
  y0: number;
  dy: number;
  z: Float64Array;
}

/**
 * Weighted 2-D density on nx x ny cells, normalised to a density (weight / (total weight x cell
 * area)); draws outside the ranges are left out but counted in the total. Binning 'nearest'
 * (default) puts each draw's weight in its cell (a 2-D histogram); 'linear' splits it
 * bilinearly between the four cell centres around it (linear binning, Wand 1994), with draws
 * between the outermost centres and the range edge given to the outermost cells, so the
 * in-range mass stays in the grid. `smooth` is the standard deviation, in cells, of a separable
 * Gaussian smoothing kernel, one for both axes or [x, y] (truncated at 4 sigma; mass smoothed
 * past the edges is lost; no smoothing unless both are positive): with linear binning this is
 * the binned 2-D Gaussian product-kernel KDE of bandwidths smooth x cell size, evaluated at the
 * cell centres.
 */
export function density2d(
  x: Float64Array,
  y: Float64Array,
  w: Float64Array,
  opts: { nx: number; ny: number; xRange: [number, number]; yRange: [number, number]; smooth?: number | [number, number]; binning?: 'nearest' | 'linear' },
): Density2d {
  const { nx, ny } = opts;
  const [x0, x1] = opts.xRange;
  const [y0, y1] = opts.yRange;
  const dx = (x1 - x0) / nx;
  const dy = (y1 - y0) / ny;
  const n = x.length;
  let total = 0;
  for (let k = 0; k < n; k++) if (w[k] > 0) total += w[k];
  const [sx, sy] = typeof opts.smooth === 'number' ? [opts.smooth, opts.smooth] : (opts.smooth ?? [0, 0]);
  const smooth = sx > 0 && sy > 0;
  const kx = smooth ? gaussianHalfTaps(sx) : ONE_TAP;
  const ky = smooth ? gaussianHalfTaps(sy) : ONE_TAP;
  let fill: (m: Float64Array, origin: number, stride: number) => void;
  if (opts.binning === 'linear') {
    const cx = new Int32Array(n), cy = new Int32Array(n);
    const fx = new Float64Array(n), fy = new Float64Array(n);
    cellCoords(x, x0, x1, nx, cx, fx);
    cellCoords(y, y0, y1, ny, cy, fy);
    fill = (m, origin, stride) => binLinear(cx, fx, cy, fy, w, n, m, origin, stride);
  } else {
    fill = (m, origin, stride) => {
      for (let k = 0; k < n; k++) {
        const wk = w[k];
        if (!(wk > 0)) continue;
        let i = Math.floor((x[k] - x0) / dx);
        let j = Math.floor((y[k] - y0) / dy);
        if (x[k] === x1) i = nx - 1; // upper edges are inclusive
        if (y[k] === y1) j = ny - 1;
        if (i >= 0 && i < nx && j >= 0 && j < ny) m[origin + j * stride + i] += wk;
      }
    };
  }
  const z = new Float64Array(nx * ny);
  smoothedGrid(nx, ny, kx, ky, fill, z);
  const norm = total > 0 ? 1 / (total * dx * dy) : 0;
  for (let c = 0; c < z.length; c++) z[c] *= norm;
  return { nx, ny, x0, dx, y0, dy, z };
}

/**
 * Linear-binning coordinates of draws on the n cell centres of [lo, hi] (as `density2d` bins
 * them): cell[k] = i and frac[k] = f put the draw at i + f centres, shared between centres i and
 * i + 1; positions beyond the outermost centres are clamped to them; cell[k] = -1 for a draw
 * outside [lo, hi] (or NaN). Computed once per parameter, they serve every panel it is in.
 */
export function cellCoords(x: Float64Array, lo: number, hi: number, n: number, cell: Int32Array, frac: Float64Array): void {
  const inv = n / (hi - lo);
  const top = n - 1;
  const last = Math.max(0, n - 2);
  for (let k = 0; k < x.length; k++) {
    const xk = x[k];
    if (!(xk >= lo && xk <= hi)) {
      cell[k] = -1;
      continue;
    }
    let p = (xk - lo) * inv - 0.5;
    p = p < 0 ? 0 : p > top ? top : p;
    let i = Math.floor(p);
    if (i > last) i = last;
    cell[k] = i;
    frac[k] = n > 1 ? p - i : 0;
  }
}

/**
 * Adds each positive-weight draw bilinearly to the four cell centres around it, into
 * `memory()` (simd.ts; `m` is that memory) at origin + j stride + i (the cell coordinates of
 * `cellCoords`); draws outside either range are left out.
 */
export function binLinear(cx: Int32Array, fx: Float64Array, cy: Int32Array, fy: Float64Array, w: Float64Array, n: number, _m: Float64Array, origin: number, stride: number): void {
  binLinear2d(cx, fx, cy, fy, w, n, origin, stride);
}

const ONE_TAP = Float64Array.of(1);

/**
 * Taps k[0 .. L] of a Gaussian of standard deviation `sigma` cells, L = ceil(4 sigma),
 * normalised so that the whole kernel k[0] + 2 (k[1] + ... + k[L]) sums to 1.
 */
export function gaussianHalfTaps(sigma: number): Float64Array {
  const L = Math.ceil(4 * sigma);
  const k = new Float64Array(L + 1);
  let sum = 0;
  for (let d = 0; d <= L; d++) {
    k[d] = Math.exp((-0.5 * d * d) / (sigma * sigma));
    sum += d ? 2 * k[d] : k[d];
  }
  for (let d = 0; d <= L; d++) k[d] /= sum;
  return k;
}

/**
 * A grid of nx x ny cells binned by `fill` (cell (i, j) at origin + j stride + i of
 * `memory()`, zero before; `fill` must not allocate there) and smoothed separably with the symmetric taps kx and ky
 * (`smooth2d`: the grid embedded in zeros, so mass smoothed past the edges is lost), written
 * row-major into `out`. One tap ([1]) on both axes leaves the bins as they are.
 */
export function smoothedGrid(
  nx: number,
  ny: number,
  kx: Float64Array,
  ky: Float64Array,
  fill: (m: Float64Array, origin: number, stride: number) => void,
  out: Float64Array,
): void {
  const lx = kx.length - 1;
  const ly = ky.length - 1;
  const nxe = nx + (nx & 1); // the SIMD loop takes columns in pairs; an odd grid gets a spare zero column
  const stride = nxe + 2 * lx;
  const size = stride * (ny + 2 * ly);
  // bins, row-smoothed bins, smoothed grid, taps, sum and maximum
  const bins = alloc(2 * size + nxe * ny + lx + ly + 4);
  const rows = bins + size;
  const res = rows + size;
  const taps = res + nxe * ny;
  const m = memory();
  m.fill(0, bins, res);
  const origin = bins + ly * stride + lx;
  fill(m, origin, stride);
  if (lx === 0 && ly === 0) {
    for (let j = 0; j < ny; j++) out.set(m.subarray(origin + j * stride, origin + j * stride + nx), j * nx);
    release(bins);
    return;
  }
  m.set(kx, taps);
  m.set(ky, taps + lx + 1);
  smooth2d(bins, rows, res, nxe, ny, taps, lx, taps + lx + 1, ly, nxe, taps + lx + ly + 2);
  if (nxe === nx) out.set(m.subarray(res, res + nx * ny));
  else for (let j = 0; j < ny; j++) out.set(m.subarray(res + j * nxe, res + j * nxe + nx), j * nx);
  release(bins);
}

/**
 * One panel of a corner plot, without copies: the bins of `fill` (as in `smoothedGrid`)
 * smoothed straight into the node grid of the contour tracer (`traceContours`; the border at
 * -Infinity), the density levels whose superlevel sets hold each of the two `masses` (the
 * definition of `creditLevels`, from its buckets, with the total summed in two halves) and the
 * box of cells the tracer scans. Then call `traceContours(grid, level, ps)` for each level.
 * grid.nx must be even; grid.z is not used. The grid lives in `simd.ts` memory allocated here:
 * the caller frees it (`release`) after tracing.
 */
export function smoothedContours(
  grid: Density2d,
  kx: Float64Array,
  ky: Float64Array,
  fill: (m: Float64Array, origin: number, stride: number) => void,
  masses: readonly [number, number],
): [number, number] {
  const { nx, ny } = grid;
  const lx = kx.length - 1;
  const ly = ky.length - 1;
  const stride = nx + 2 * lx;
  const size = stride * (ny + 2 * ly);
  const NX = nx + 2;
  const nodes = NX * (ny + 2);
  const B = LEVEL_BUCKETS;
  // bins, row-smoothed bins, node grid, taps, sum and maximum, bucket masses, cells of two buckets, bucket of each cell (int32)
  const bins = alloc(2 * size + nodes + lx + ly + 4 + B + 2 * nx * ny + Math.ceil((nx * ny) / 2) + 4);
  const rows = bins + size;
  const V = rows + size;
  const taps = V + nodes;
  const stats = taps + lx + ly + 2;
  const mass = stats + 2;
  const vals1 = mass + B;
  const vals2 = vals1 + nx * ny;
  const bucketAt = vals2 + nx * ny;
  const m = memory();
  m.fill(0, bins, V);
  m.fill(-Infinity, V, taps);
  fill(m, bins + ly * stride + lx, stride);
  m.set(kx, taps);
  m.set(ky, taps + lx + 1);
  const z0 = V + NX + 1;
  smooth2d(bins, rows, z0, nx, ny, taps, lx, taps + lx + 1, ly, NX, stats);
  const w = contourWork(nodes);
  w.V = m.subarray(V, V + nodes);
  w.grid = grid;
  const total = m[stats];
  const max = m[stats + 1];
  if (!(max > 0) || !Number.isFinite(total)) {
    w.box = [0, nx, 0, ny];
    w.lowest = 0;
    return [0, 0];
  }
  m.fill(0, mass, mass + B);
  const bucket = int32At(bucketAt, nx * ny);
  levelBuckets(z0, NX, nx, ny, B / max, B, mass, bucket);
  // the bucket where each mass is reached, walking down from the densest, and the mass above it
  const target = [masses[0] * total, masses[1] * total];
  const where = [0, 0];
  const above = [0, 0];
  for (let q = 0; q < 2; q++) {
    let acc = 0;
    let b = B - 1;
    while (b > 0 && acc + m[mass + b] < target[q]) acc += m[mass + b--];
    where[q] = b;
    above[q] = acc;
  }
  const io = int32At(bucketAt + Math.ceil((nx * ny) / 2), 8);
  const counts = levelCells(z0, NX, nx, ny, bucket, where[0], where[1], Math.min(where[0], where[1]), vals1, vals2, io);
  const levels: [number, number] = [0, 0];
  for (let q = 0; q < 2; q++) {
    // the mass is reached inside bucket where[q]: walk its cells, densest first
    const c = q ? counts.n2 : counts.n1;
    const vals = m.subarray(q ? vals2 : vals1, (q ? vals2 : vals1) + c).sort();
    let level = c ? vals[0] : 0; // rounding left the target unreached: the least positive density
    let acc = above[q];
    for (let t = c - 1; t >= 0; t--) {
      acc += vals[t];
      if (acc >= target[q]) {
        level = vals[t];
        break;
      }
    }
    levels[q] = level;
  }
  w.lowest = Math.min(levels[0], levels[1]);
  // cells (lower-left node I, J) with a node of the box as a corner: I from i0 to i1 + 1 (node I is cell I - 1)
  w.box = !(w.lowest > 0) ? [0, nx, 0, ny] : io[3] < 0 ? null : [io[2], io[3] + 1, io[4], io[5] + 1];
  return levels;
}

const LEVEL_BUCKETS = 256;
const levelMass = new Float64Array(LEVEL_BUCKETS);
let levelVals = new Float64Array(0);
let levelBucket = new Int16Array(0);

/**
 * Density thresholds whose superlevel sets enclose each fraction in `masses` of the total:
 * cells taken by density, descending, and accumulated until the mass is reached; the level
 * is the density of the cell that reaches it. Returned in the order of `masses`. Instead of
 * sorting every cell, the cells are counted into 256 buckets of equal density width and only
 * the bucket where the mass is reached is sorted (the same cell is found).
 */
export function creditLevels(z: Float64Array, masses: readonly number[]): number[] {
  const n = z.length;
  if (n === 0) return masses.map(() => NaN);
  let max = 0;
  let total = 0;
  for (let i = 0; i < n; i++) {
    const v = z[i];
    if (v > 0) {
      total += v;
      if (v > max) max = v;
    }
  }
  if (!(max > 0) || !Number.isFinite(total)) return masses.map(() => 0);
  const B = LEVEL_BUCKETS;
  const scale = B / max;
  const mass = levelMass;
  mass.fill(0);
  if (levelBucket.length < n) {
    levelBucket = new Int16Array(n);
    levelVals = new Float64Array(n);
  }
  const bucket = levelBucket;
  for (let i = 0; i < n; i++) {
    const v = z[i];
    if (v > 0) {
      const b = Math.min(B - 1, (v * scale) | 0);
      bucket[i] = b;
      mass[b] += v;
    } else bucket[i] = -1;
  }
  const out: number[] = [];
  for (const m of masses) {
    const target = m * total;
    let acc = 0;
    let b = B - 1;
    while (b > 0 && acc + mass[b] < target) acc += mass[b--];
    // the mass is reached inside bucket b (or b is the last one): walk its cells, densest first
    let c = 0;
    for (let i = 0; i < n; i++) if (bucket[i] === b) levelVals[c++] = z[i];
    const vals = levelVals.subarray(0, c).sort();
    let level = c ? vals[0] : 0; // rounding left the target unreached: the least positive density
    for (let t = c - 1; t >= 0; t--) {
      acc += vals[t];
      if (acc >= target) {
        level = vals[t];
        break;
      }
    }
    out.push(level);
  }
  return out;
}

// Segment table of marching squares: corner bits bl = 1, br = 2, tr = 4, tl = 8 (inside when
// value >= level); edges 0 bottom, 1 right, 2 top, 3 left. Saddles (5, 10) resolved below.
const SEGMENTS: ReadonlyArray<readonly number[]> = [
  [], [3, 0], [0, 1], [3, 1], [1, 2], [], [0, 2], [3, 2],
  [2, 3], [0, 2], [], [1, 2], [1, 3], [0, 1], [3, 0], [],
];

/**
 * Contour polylines in flat typed arrays: path p has the points start[p] .. start[p + 1] - 1,
 * point q at (xy[2q], xy[2q + 1]). Reused between calls (`clearPaths`).
 */
export interface PathSet {
  xy: Float64Array;
  start: Int32Array;
  /** Paths held. */
  paths: number;
  /** Points written, including those of a path still being traced. */
  points: number;
}

export function newPathSet(): PathSet {
  return { xy: new Float64Array(512), start: new Int32Array(33), paths: 0, points: 0 };
}

export function clearPaths(ps: PathSet): void {
  ps.paths = 0;
  ps.points = 0;
  ps.start[0] = 0;
}

function pathPoint(ps: PathSet, x: number, y: number): void {
  const q = ps.points++;
  if (2 * q + 2 > ps.xy.length) {
    const bigger = new Float64Array(2 * ps.xy.length);
    bigger.set(ps.xy);
    ps.xy = bigger;
  }
  ps.xy[2 * q] = x;
  ps.xy[2 * q + 1] = y;
}

/** Ends the path begun at point `from`: kept when it has at least `min` points, dropped otherwise. */
function endPath(ps: PathSet, from: number, min: number): void {
  if (ps.points - from < min) {
    ps.points = from;
    return;
  }
  if (ps.paths + 2 > ps.start.length) {
    const bigger = new Int32Array(2 * ps.start.length);
    bigger.set(ps.start);
    ps.start = bigger;
  }
  ps.paths++;
  ps.start[ps.paths] = ps.points;
}

/**
 * Contour lines of `grid` at `level` by marching squares (Lorensen & Cline 1987, in 2-D) on the
 * cell centres, in data coordinates, joined into polylines. The grid is closed by a border
 * outside it, so regions cut by the edge come back as closed paths running along the outermost
 * cell centres; a closed path repeats its first point at the end. Saddle cells are resolved by
 * the mean of their four corners.
 */
export function contourPaths(grid: Density2d, level: number): Array<Array<[number, number]>> {
  const ps = newPathSet();
  prepareContours(grid, level);
  traceContours(grid, level, ps);
  const out: Array<Array<[number, number]>> = [];
  for (let p = 0; p < ps.paths; p++) {
    const path: Array<[number, number]> = [];
    for (let q = ps.start[p]; q < ps.start[p + 1]; q++) path.push([ps.xy[2 * q], ps.xy[2 * q + 1]]);
    out.push(path);
  }
  return out;
}

/**
 * Prepares `traceContours` of `grid` at levels of at least `lowest`: the node values (with the
 * border), and the box of cells holding every value >= lowest, outside which no level >=
 * lowest has a crossing. Call once per grid, then `traceContours` for each level.
 */
export function prepareContours(grid: Density2d, lowest: number): void {
  const { nx, ny, z } = grid;
  const NX = nx + 2;
  const NY = ny + 2;
  const w = contourWork(NX * NY);
  const V = (w.V = w.own);
  V.fill(-Infinity, 0, NX * NY);
  let i0 = nx, i1 = -1, j0 = ny, j1 = -1;
  for (let j = 0; j < ny; j++) {
    const row = (j + 1) * NX + 1;
    for (let i = 0; i < nx; i++) {
      const v = z[j * nx + i];
      if (Number.isNaN(v)) continue;
      V[row + i] = v;
      if (v >= lowest) {
        if (i < i0) i0 = i;
        if (i > i1) i1 = i;
        if (j < j0) j0 = j;
        if (j > j1) j1 = j;
      }
    }
  }
  // cells (lower-left node I, J) with a node of the box as a corner: I from i0 to i1 + 1 (node I is cell I - 1)
  w.box = i1 < 0 ? null : [i0, i1 + 1, j0, j1 + 1];
  w.grid = grid;
  w.lowest = lowest;
}

/** `contourPaths` appended to a PathSet (no per-point allocation); prepared by `prepareContours` when it was called for this grid and a level no lower. */
export function traceContours(grid: Density2d, level: number, ps: PathSet): void {
  let w = contourBuf;
  if (!w || w.grid !== grid || !(level >= w.lowest)) {
    prepareContours(grid, level);
    w = contourBuf!;
  }
  if (!w.box) return;
  const { nx } = grid;
  const NX = nx + 2;
  const V = w.V;
  const [I0, I1, J0, J1] = w.box;
  // edge id: 2 x (node index of its lower-left end) + (0 horizontal, 1 vertical); each edge
  // crossing belongs to at most two segments (the two cells sharing the edge). Only the rows of
  // the box have edges in use.
  const { segA, segB, slot0, slot1, stamp } = w;
  // an edge's slots are in use only when its stamp is this call's (no clearing between calls)
  if (w.gen >= 0x3fffffff) {
    w.stamp.fill(0);
    w.gen = 0;
  }
  const gen = ++w.gen;
  // the cells the level crosses (their codes in SIMD memory when the grid lies there)
  const cellsMax = (I1 - I0 + 1) * (J1 - J0 + 1);
  let cellAt = -1;
  let codes: Int32Array;
  if (offsetOf(V) >= 0) {
    cellAt = alloc(cellsMax);
    codes = int32At(cellAt, 2 * cellsMax);
  } else {
    if (w.codes.length < 2 * cellsMax) w.codes = new Int32Array(2 * cellsMax);
    codes = w.codes;
  }
  const nCells = cellCodes(V, NX, I0, I1, J0, J1, level, codes);
  let nSeg = 0;
  for (let c = 0; c < nCells; c++) {
    const n0 = codes[2 * c];
    const code = codes[2 * c + 1];
    const e0 = 2 * n0; // bottom
    const e1 = 2 * (n0 + 1) + 1; // right
    const e2 = 2 * (n0 + NX); // top
    const e3 = 2 * n0 + 1; // left
    let p0: number, p1: number, p2 = -1, p3 = -1;
    if (code === 5 || code === 10) {
      const centreInside = (V[n0] + V[n0 + 1] + V[n0 + NX + 1] + V[n0 + NX]) / 4 >= level;
      if ((code === 5) === centreInside) {
        p0 = e0;
        p1 = e1;
        p2 = e2;
        p3 = e3;
      } else {
        p0 = e3;
        p1 = e0;
        p2 = e1;
        p3 = e2;
      }
    } else {
      const pair = SEGMENTS[code];
      const q0 = pair[0];
      const q1 = pair[1];
      p0 = q0 === 0 ? e0 : q0 === 1 ? e1 : q0 === 2 ? e2 : e3;
      p1 = q1 === 0 ? e0 : q1 === 1 ? e1 : q1 === 2 ? e2 : e3;
    }
    for (let q = 0; q < 2; q++) {
      const ea = q ? p2 : p0;
      const eb = q ? p3 : p1;
      if (ea < 0) break;
      segA[nSeg] = ea;
      segB[nSeg] = eb;
      if (stamp[ea] !== gen) {
        stamp[ea] = gen;
        slot0[ea] = nSeg;
        slot1[ea] = -1;
      } else slot1[ea] = nSeg;
      if (stamp[eb] !== gen) {
        stamp[eb] = gen;
        slot0[eb] = nSeg;
        slot1[eb] = -1;
      } else slot1[eb] = nSeg;
      nSeg++;
    }
  }
  if (cellAt >= 0) release(cellAt);
  if (w.used.length < nSeg) w.used = new Uint8Array(Math.max(nSeg, 2 * w.used.length));
  const used = w.used;
  used.fill(0, 0, nSeg);
  const ends = (e: number) => (slot1[e] >= 0 ? 2 : 1); // edges of segments only, so stamped
  // open paths first (from an end crossing that only one segment uses), then closed loops
  for (let s = 0; s < nSeg; s++) {
    if (!used[s] && ends(segA[s]) === 1) walkContour(grid, level, V, w, s, segA[s], ps);
    if (!used[s] && ends(segB[s]) === 1) walkContour(grid, level, V, w, s, segB[s], ps);
  }
  for (let s = 0; s < nSeg; s++) if (!used[s]) walkContour(grid, level, V, w, s, segA[s], ps);
}

interface ContourWork {
  /** The node values being traced: `own`, or a grid in simd.ts memory (`smoothedContours`). */
  V: Float64Array;
  own: Float64Array;
  segA: Int32Array;
  segB: Int32Array;
  slot0: Int32Array;
  slot1: Int32Array;
  /** Generation of the call that set each edge's slots (see `traceContours`). */
  stamp: Int32Array;
  gen: number;
  /** Node coordinates of the grid `axes` (with its origin and spacing), each node's column and row (`nodeAxes`). */
  axes: Density2d | null;
  axesX0: number;
  axesDx: number;
  axesY0: number;
  axesDy: number;
  colX: Float64Array;
  rowY: Float64Array;
  nodeCol: Int32Array;
  nodeRow: Int32Array;
  nodesOf: number;
  used: Uint8Array;
  /** Codes of the crossed cells (when the node grid is a JavaScript array). */
  codes: Int32Array;
  /** What `prepareContours` prepared: the grid, its lowest level and the box of cells to scan ([I0, I1, J0, J1] inclusive, or null: no crossings). */
  grid: Density2d | null;
  lowest: number;
  box: [number, number, number, number] | null;
}
let contourBuf: ContourWork | null = null;

function contourWork(nodes: number): ContourWork {
  if (contourBuf && contourBuf.own.length >= nodes) return contourBuf;
  const own = new Float64Array(nodes);
  contourBuf = {
    V: own,
    own,
    segA: new Int32Array(2 * nodes),
    segB: new Int32Array(2 * nodes),
    slot0: new Int32Array(2 * nodes),
    slot1: new Int32Array(2 * nodes),
    stamp: new Int32Array(2 * nodes),
    gen: 0,
    axes: null,
    axesX0: NaN,
    axesDx: NaN,
    axesY0: NaN,
    axesDy: NaN,
    colX: new Float64Array(0),
    rowY: new Float64Array(0),
    nodeCol: new Int32Array(0),
    nodeRow: new Int32Array(0),
    nodesOf: 0,
    used: new Uint8Array(2 * nodes),
    codes: new Int32Array(2 * nodes),
    grid: null,
    lowest: NaN,
    box: null,
  };
  return contourBuf;
}

/** Follows segments from `start`, entering by edge `fromEdge`, and appends the polyline to `ps`. */
function walkContour(grid: Density2d, level: number, V: Float64Array, w: ContourWork, start: number, fromEdge: number, ps: PathSet): void {
  const { segA, segB, slot0, slot1, used } = w;
  const from = ps.points;
  pushCrossing(grid, level, V, fromEdge, ps, from);
  let s = start;
  let e = fromEdge;
  while (s >= 0 && !used[s]) {
    used[s] = 1;
    e = segA[s] === e ? segB[s] : segA[s];
    pushCrossing(grid, level, V, e, ps, from);
    const s0 = slot0[e];
    const s1 = slot1[e];
    s = s0 >= 0 && !used[s0] ? s0 : s1 >= 0 && !used[s1] ? s1 : -1;
  }
  endPath(ps, from, 2);
}

/** Appends the crossing of edge `id` (linear interpolation between its two nodes), unless it repeats the last point of the path begun at `from`. */
function pushCrossing(grid: Density2d, level: number, V: Float64Array, id: number, ps: PathSet, from: number): void {
  const w = contourBuf!;
  if (w.axes !== grid || w.axesX0 !== grid.x0 || w.axesDx !== grid.dx || w.axesY0 !== grid.y0 || w.axesDy !== grid.dy) nodeAxes(w, grid);
  const NX = grid.nx + 2;
  const node = id >> 1;
  const I = w.nodeCol[node];
  const J = w.nodeRow[node];
  const I2 = id & 1 ? I : I + 1;
  const J2 = id & 1 ? J + 1 : J;
  const a = V[node];
  const b = V[J2 * NX + I2];
  let t = (level - a) / (b - a);
  if (!Number.isFinite(t)) t = 0.5; // a border node shares its neighbour's position
  // cell centres, border nodes clamped to the outermost centres
  const xa = w.colX[I];
  const xb = w.colX[I2];
  const ya = w.rowY[J];
  const yb = w.rowY[J2];
  const px = xa + t * (xb - xa);
  const py = ya + t * (yb - ya);
  const q = ps.points;
  if (q > from && ps.xy[2 * q - 2] === px && ps.xy[2 * q - 1] === py) return;
  pathPoint(ps, px, py);
}

/** Coordinates of the node columns and rows of `grid` (cell centres, border nodes clamped to the outermost) and each node's column and row. */
function nodeAxes(w: ContourWork, grid: Density2d): void {
  const { nx, ny, x0, dx, y0, dy } = grid;
  const NX = nx + 2;
  const NY = ny + 2;
  if (w.colX.length < NX) w.colX = new Float64Array(NX);
  if (w.rowY.length < NY) w.rowY = new Float64Array(NY);
  for (let I = 0; I < NX; I++) w.colX[I] = x0 + (Math.min(nx - 1, Math.max(0, I - 1)) + 0.5) * dx;
  for (let J = 0; J < NY; J++) w.rowY[J] = y0 + (Math.min(ny - 1, Math.max(0, J - 1)) + 0.5) * dy;
  if (w.nodesOf !== NX * NY || w.nodeCol.length < NX * NY) {
    if (w.nodeCol.length < NX * NY) {
      w.nodeCol = new Int32Array(NX * NY);
      w.nodeRow = new Int32Array(NX * NY);
    }
    for (let J = 0; J < NY; J++)
      for (let I = 0; I < NX; I++) {
        w.nodeCol[J * NX + I] = I;
        w.nodeRow[J * NX + I] = J;
      }
    w.nodesOf = NX * NY;
  }
  w.axes = grid;
  w.axesX0 = x0;
  w.axesDx = dx;
  w.axesY0 = y0;
  w.axesDy = dy;
}

let dpU = new Float64Array(256);
let dpV = new Float64Array(256);
const dpStack: number[] = [];

/**
 * Douglas-Peucker simplification (Douglas & Peucker 1973, Cartographica 10, 112) of a polyline:
 * keeps the fewest points such that every dropped point lies within `tol` of the kept
 * polyline, distances measured after dividing x by `sx` and y by `sy` (so a tolerance can be
 * set in units of each axis's plotted range). End points are kept; a closed path (first point
 * equal to the last) is split at its point farthest from the start, so it stays closed and
 * keeps at least three distinct points when it has them.
 */
export function simplifyPath(path: Array<[number, number]>, tol: number, sx = 1, sy = 1): Array<[number, number]> {
  const n = path.length;
  if (n <= 2 || !(tol > 0)) return path.slice();
  const xy = new Float64Array(2 * n);
  for (let i = 0; i < n; i++) {
    xy[2 * i] = path[i][0];
    xy[2 * i + 1] = path[i][1];
  }
  const keep = new Uint8Array(n);
  simplifyPoints(xy, 0, n, tol, sx, sy, keep);
  const out: Array<[number, number]> = [];
  for (let i = 0; i < n; i++) if (keep[i]) out.push(path[i]);
  return out;
}

/**
 * `simplifyPath` of the n points from point `first` of `xy` (interleaved x, y): sets keep[i]
 * (0 .. n - 1, relative to `first`) to 1 for the points kept, 0 for the others.
 */
export function simplifyPoints(xy: Float64Array, first: number, n: number, tol: number, sx: number, sy: number, keep: Uint8Array): void {
  if (n <= 2 || !(tol > 0)) {
    keep.fill(1, 0, n);
    return;
  }
  if (dpU.length < n) {
    dpU = new Float64Array(2 * n);
    dpV = new Float64Array(2 * n);
  }
  const u = dpU;
  const v = dpV;
  for (let i = 0; i < n; i++) {
    u[i] = xy[2 * (first + i)] / sx;
    v[i] = xy[2 * (first + i) + 1] / sy;
  }
  keep.fill(0, 0, n);
  keep[0] = keep[n - 1] = 1;
  const tol2 = tol * tol;
  const stack = dpStack;
  stack.length = 0;
  const closed = u[0] === u[n - 1] && v[0] === v[n - 1];
  let far = 0;
  if (closed) {
    let best = -1;
    for (let i = 1; i < n - 1; i++) {
      const d = (u[i] - u[0]) ** 2 + (v[i] - v[0]) ** 2;
      if (d > best) {
        best = d;
        far = i;
      }
    }
    keep[far] = 1;
    stack.push(0, far, far, n - 1);
  } else stack.push(0, n - 1);
  while (stack.length) {
    const b = stack.pop() as number;
    const a = stack.pop() as number;
    if (b - a < 2) continue;
    const ax = u[a];
    const ay = v[a];
    const ex = u[b] - ax;
    const ey = v[b] - ay;
    const len2 = ex * ex + ey * ey;
    let worst = -1;
    let worstD = -1;
    for (let i = a + 1; i < b; i++) {
      // squared distance from point i to the segment a-b
      const px = u[i] - ax;
      const py = v[i] - ay;
      let t = len2 > 0 ? (px * ex + py * ey) / len2 : 0;
      t = t < 0 ? 0 : t > 1 ? 1 : t;
      const qx = px - t * ex;
      const qy = py - t * ey;
      const d = qx * qx + qy * qy;
      if (d > worstD) {
        worstD = d;
        worst = i;
      }
    }
    if (worstD > tol2) {
      keep[worst] = 1;
      stack.push(a, worst, worst, b);
    }
  }
  if (!closed) return;
  let kept = 0;
  for (let i = 0; i < n; i++) kept += keep[i];
  if (kept !== 3) return;
  // a closed triangle-less loop (start, far, start): keep the farthest point on the other side too
  let other = -1;
  let best = -1;
  for (let i = 1; i < n - 1; i++) {
    if (i === far) continue;
    const px = u[i] - u[0];
    const py = v[i] - v[0];
    const ex = u[far] - u[0];
    const ey = v[far] - v[0];
    const d = Math.abs(px * ey - py * ex);
    if (d > best) {
      best = d;
      other = i;
    }
  }
  if (other > 0) keep[other] = 1;
}
