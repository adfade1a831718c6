/**
 * Stellar mass function per redshift bin by the 1/Vmax estimator (Schmidt 1968, ApJ 151, 393):
 * phi(M) dlog M = sum over galaxies in the mass bin of 1 / V_max,i, where V_max,i is the
 * comoving volume, over the survey's solid angle, between the redshift bin's lower edge and the
 * smaller of its upper edge and z_max,i, the redshift at which galaxy i would fall below the
 * magnitude limit.
 */
import { makeDistanceInterpolator, type Cosmology, type DistanceInterpolator } from '../cosmology.ts';
import { PosterityError, problem } from '../problems.ts';
import { deriveSeed, makeRng } from '../random.ts';
import { weightedQuantiles } from '../stats/summary.ts';
import { checkDrawSet, type DrawSet } from './draws.ts';

export { schechter, schechterIntegral, fitSchechter } from './schechter.ts';
export type { SchechterParams, SchechterFit, SchechterFitOptions, CountBin } from './schechter.ts';

/** Solid angle in steradians of a survey area in square degrees: areaDeg2 (pi / 180)^2. */
export function solidAngleSr(areaDeg2: number): number {
  return areaDeg2 * (Math.PI / 180) * (Math.PI / 180);
}

/**
 * Optional k-correction K(z) in magnitudes of the selection band, so that the apparent
 * magnitude of a galaxy moved to z' is m + 5 log10(D_L(z') / D_L(z)) + K(z') - K(z).
 */
export type KCorrection = (z: number) => number;

function fail(message: string, expected: string, got: string): never {
  throw new PosterityError(problem({ message, expected, got }));
}

/**
 * Redshift z_max <= zCap at which a galaxy of apparent magnitude `mag` observed at `z` reaches
 * `magLim`, moving it at fixed luminosity and spectrum: m(z') = m + 5 log10(D_L(z') / D_L(z)),
 * ignoring k-corrections unless `kCorrection` is given (then + K(z') - K(z), solved by bisection
 * to 1e-10 in z, assuming m(z') increases with z'). Returns `zCap` when the galaxy stays
 * brighter than the limit up to zCap, and `z` itself when it is already at or beyond the limit.
 */
export function zMaxForMagLimit(
  mag: number,
  z: number,
  magLim: number,
  zCap: number,
  distances: DistanceInterpolator,
  kCorrection?: KCorrection,
): number {
  if (!(mag < magLim)) return z;
  const dl = distances.lumDistMpc(z);
  if (!kCorrection) {
    const dlLim = dl * Math.pow(10, 0.2 * (magLim - mag));
    if (dlLim >= distances.lumDistMpc(zCap)) return zCap;
    return Math.max(z, distances.zAtLumDist(dlLim));
  }
  const k0 = kCorrection(z);
  const m = (zz: number) => mag + 5 * Math.log10(distances.lumDistMpc(zz) / dl) + kCorrection(zz) - k0;
  if (m(zCap) <= magLim) return zCap;
  let lo = z;
  let hi = zCap;
  while (hi - lo > 1e-10) {
    const mid = 0.5 * (lo + hi);
    if (m(mid) <= magLim) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

export interface VmaxOptions {
  zLo: number;
  zHi: number;
  /** Apparent magnitude limit of the selection band (AB, same band as `mag`). */
  magLim: number;
  /** Survey area in deg^2. */
  areaDeg2: number;
  /** Distance tables covering at least [0, zHi]. */
  distances: DistanceInterpolator;
  kCorrection?: KCorrection;
}

/**
 * Per-galaxy V_max in Mpc^3 (Schmidt 1968): V_C(min(zHi, z_max,i)) - V_C(zLo) over the survey
 * solid angle `solidAngleSr(areaDeg2)`, with z_max from `zMaxForMagLimit`. Galaxies outside
 * [zLo, zHi] or with a NaN magnitude get NaN.
 */
export function vmaxMpc3(mag: Float64Array, z: Float64Array, opts: VmaxOptions): Float64Array {
  const { zLo, zHi, magLim, distances } = opts;
  const sr = solidAngleSr(opts.areaDeg2);
  const vLo = distances.comovingVolumeMpc3(zLo, sr);
  const out = new Float64Array(mag.length);
  for (let i = 0; i < mag.length; i++) {
    const zi = z[i];
    if (!(zi >= zLo && zi <= zHi) || Number.isNaN(mag[i])) {
      out[i] = NaN;
      continue;
    }
    const zMax = zMaxForMagLimit(mag[i], zi, magLim, zHi, distances, opts.kCorrection);
    out[i] = distances.comovingVolumeMpc3(zMax, sr) - vLo;
  }
  return out;
}

export interface MassFunctionOptions {
  areaDeg2: number;
  magLim: number;
  /** Redshift bin edges, increasing; bin k is [zBins[k], zBins[k+1]), the last one closed. */
  zBins: readonly number[];
  /** Mass bin edges in log10 M_sun, increasing; same half-open rule. */
  massEdges: Float64Array;
  cosmo: Cosmology;
  kCorrection?: KCorrection;
}

export interface MassFunctionBin {
  /** Bin centre and edges, log10 M_sun. */
  logM: number;
  logMLo: number;
  logMHi: number;
  /** Number density per dex, Mpc^-3 dex^-1: sum(1 / V_max) / dlog M. */
  phi: number;
  /** Poisson error per dex, sqrt(sum 1 / V_max^2) / dlog M. */
  phiErr: number;
  n: number;
  /**
   * Effective volume n / sum(1 / V_max), Mpc^3, so that n = phi dlogM V_eff; for an empty bin
   * the whole redshift bin's volume (the volume over which the bin would have been seen above
   * the completeness limit). Used by `fitSchechter`.
   */
  vEffMpc3: number;
}

export interface MassFunctionZBin {
  zLo: number;
  zHi: number;
  /** Comoving volume of the redshift bin over the survey area, Mpc^3. */
  volumeMpc3: number;
  bins: MassFunctionBin[];
}

function checkEdges(edges: ArrayLike<number>, what: string): void {
  if (edges.length < 2) fail(`${what} need at least two edges`, '>= 2 edges', String(edges.length));
  for (let k = 0; k + 1 < edges.length; k++) {
    if (!(edges[k + 1] > edges[k])) fail(`${what} must increase`, 'increasing edges', `${edges[k]} then ${edges[k + 1]}`);
  }
}

/** Index of the half-open bin [e_k, e_k+1) holding x (last bin closed), or -1. */
function binOf(edges: ArrayLike<number>, x: number): number {
  const n = edges.length - 1;
  if (!(x >= edges[0] && x <= edges[n])) return -1;
  if (x === edges[n]) return n - 1;
  let lo = 0;
  let hi = n;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (x >= edges[mid]) lo = mid;
    else hi = mid;
  }
  return lo;
}

/** Per galaxy: its redshift bin (-1 if none) and 1 / V_max in that bin (0 if none). */
function inverseVmax(mag: Float64Array, z: Float64Array, opts: MassFunctionOptions) {
  checkEdges(opts.zBins, 'redshift bin edges');
  checkEdges(opts.massEdges, 'mass bin edges');
  if (!(opts.areaDeg2 > 0 && opts.areaDeg2 <= 41253)) fail('invalid survey area', 'deg^2 in (0, 41253]', String(opts.areaDeg2));
  if (!(opts.zBins[0] >= 0)) fail('invalid redshift bin edge', 'z >= 0', String(opts.zBins[0]));
  const distances = makeDistanceInterpolator(opts.cosmo, opts.zBins[opts.zBins.length - 1]);
  const sr = solidAngleSr(opts.areaDeg2);
  const zBin = new Int32Array(z.length).fill(-1);
  const invV = new Float64Array(z.length);
  const volumes: number[] = [];
  for (let k = 0; k + 1 < opts.zBins.length; k++) {
    const zLo = opts.zBins[k];
    const zHi = opts.zBins[k + 1];
    volumes.push(distances.comovingVolumeMpc3(zHi, sr) - distances.comovingVolumeMpc3(zLo, sr));
  }
  for (let i = 0; i < z.length; i++) {
    const k = binOf(opts.zBins, z[i]);
    if (k < 0 || Number.isNaN(mag[i])) continue;
    const zLo = opts.zBins[k];
    const zHi = opts.zBins[k + 1];
    const zMax = zMaxForMagLimit(mag[i], z[i], opts.magLim, zHi, distances, opts.kCorrection);
    const v = distances.comovingVolumeMpc3(zMax, sr) - distances.comovingVolumeMpc3(zLo, sr);
    if (!(v > 0)) continue; // on the bin's lower edge and already at the limit: no volume
    zBin[i] = k;
    invV[i] = 1 / v;
  }
  return { zBin, invV, volumes };
}

function assemble(
  opts: MassFunctionOptions,
  volumes: number[],
  sum1: Float64Array,
  sum2: Float64Array,
  count: Float64Array,
): MassFunctionZBin[] {
  const nM = opts.massEdges.length - 1;
  const out: MassFunctionZBin[] = [];
  for (let k = 0; k < volumes.length; k++) {
    const bins: MassFunctionBin[] = [];
    for (let j = 0; j < nM; j++) {
      const lo = opts.massEdges[j];
      const hi = opts.massEdges[j + 1];
      const d = hi - lo;
      const c = k * nM + j;
      bins.push({
        logM: 0.5 * (lo + hi),
        logMLo: lo,
        logMHi: hi,
        phi: sum1[c] / d,
        phiErr: Math.sqrt(sum2[c]) / d,
        n: count[c],
        vEffMpc3: count[c] > 0 ? count[c] / sum1[c] : volumes[k],
      });
    }
    out.push({ zLo: opts.zBins[k], zHi: opts.zBins[k + 1], volumeMpc3: volumes[k], bins });
  }
  return out;
}

function checkColumns(n: number, mag: Float64Array, z: Float64Array): void {
  if (mag.length !== n || z.length !== n) {
    fail('mass, magnitude and redshift columns differ in length', `${n} rows each`, `${n}, ${mag.length}, ${z.length}`);
  }
}

/**
 * Stellar mass function by 1/Vmax (Schmidt 1968) in each redshift bin from one mass per galaxy
 * (e.g. the posterior median): phi = sum 1/V_max / dlog M per dex with Poisson error
 * sqrt(sum 1/V_max^2) / dlog M, V_max from `vmaxMpc3` (no k-correction unless given) over
 * areaDeg2 (pi/180)^2 sr. Galaxies with a NaN value or outside the bins are left out.
 */
export function massFunction1OverVmax(
  logM: Float64Array,
  mag: Float64Array,
  z: Float64Array,
  opts: MassFunctionOptions,
): MassFunctionZBin[] {
  checkColumns(logM.length, mag, z);
  const { zBin, invV, volumes } = inverseVmax(mag, z, opts);
  const nM = opts.massEdges.length - 1;
  const size = volumes.length * nM;
  const sum1 = new Float64Array(size);
  const sum2 = new Float64Array(size);
  const count = new Float64Array(size);
  for (let i = 0; i < logM.length; i++) {
    if (zBin[i] < 0) continue;
    const j = binOf(opts.massEdges, logM[i]);
    if (j < 0) continue;
    const c = zBin[i] * nM + j;
    sum1[c] += invV[i];
    sum2[c] += invV[i] * invV[i];
    count[c]++;
  }
  return assemble(opts, volumes, sum1, sum2, count);
}

export interface BootstrapBin {
  logM: number;
  logMLo: number;
  logMHi: number;
  /** 16th, 50th and 84th percentiles of phi (Mpc^-3 dex^-1) over the bootstrap replicates. */
  phiP16: number;
  phiP50: number;
  phiP84: number;
}

export interface BootstrapZBin {
  zLo: number;
  zHi: number;
  bins: BootstrapBin[];
}

/**
 * Bootstrap 1/Vmax mass function that carries each galaxy's mass uncertainty: each of `nBoot`
 * replicates draws N galaxies with replacement from the whole catalogue (Efron 1979, Ann.
 * Stat. 7, 1) and, for each, one posterior draw of log M with probability proportional to its
 * weight, then bins them as `massFunction1OverVmax` does (V_max depends only on magnitude and
 * redshift, which are held fixed). Returns the 16/50/84% points of phi per bin (Hazen's rule of
 * `weightedQuantiles`). Deterministic for a given `seed` (stream `deriveSeed(seed,
 * 'massfunction-bootstrap')`).
 */
export function massFunctionBootstrap(
  logMDraws: DrawSet,
  mag: Float64Array,
  z: Float64Array,
  opts: MassFunctionOptions,
  nBoot: number,
  seed: number,
): BootstrapZBin[] {
  checkDrawSet(logMDraws, 'log stellar mass draws', mag.length);
  checkColumns(mag.length, mag, z);
  if (!(Number.isInteger(nBoot) && nBoot >= 2)) fail('invalid number of bootstrap replicates', 'an integer >= 2', String(nBoot));
  const { zBin, invV, volumes } = inverseVmax(mag, z, opts);
  const { offsets, values, weights } = logMDraws;
  const nObj = mag.length;
  // cumulative weights per object for weighted draw selection
  const cum = new Float64Array(values.length);
  for (let i = 0; i < nObj; i++) {
    let s = 0;
    for (let j = offsets[i]; j < offsets[i + 1]; j++) {
      const w = weights[j] > 0 && !Number.isNaN(values[j]) ? weights[j] : 0;
      s += w;
      cum[j] = s;
    }
  }
  const nM = opts.massEdges.length - 1;
  const size = volumes.length * nM;
  const reps = new Float64Array(nBoot * size);
  const rng = makeRng(deriveSeed(seed, 'massfunction-bootstrap'));
  for (let b = 0; b < nBoot; b++) {
    const acc = reps.subarray(b * size, (b + 1) * size);
    for (let r = 0; r < nObj; r++) {
      const i = rng.int(nObj);
      const u = rng.next();
      if (zBin[i] < 0) continue;
      const a = offsets[i];
      const e = offsets[i + 1];
      if (e <= a) continue;
      const total = cum[e - 1];
      if (!(total > 0)) continue;
      const target = u * total;
      let lo = a;
      let hi = e - 1;
      while (lo < hi) {
        const mid = (lo + hi) >> 1;
        if (cum[mid] > target) hi = mid;
        else lo = mid + 1;
      }
      const j = binOf(opts.massEdges, values[lo]);
      if (j < 0) continue;
      acc[zBin[i] * nM + j] += invV[i];
    }
  }
  const ones = new Float64Array(nBoot).fill(1);
  const col = new Float64Array(nBoot);
  const out: BootstrapZBin[] = [];
  for (let k = 0; k < volumes.length; k++) {
    const bins: BootstrapBin[] = [];
    for (let j = 0; j < nM; j++) {
      const lo = opts.massEdges[j];
      const hi = opts.massEdges[j + 1];
      const c = k * nM + j;
      for (let b = 0; b < nBoot; b++) col[b] = reps[b * size + c] / (hi - lo);
      const q = weightedQuantiles(col, ones, [0.16, 0.5, 0.84]);
      bins.push({ logM: 0.5 * (lo + hi), logMLo: lo, logMHi: hi, phiP16: q[0], phiP50: q[1], phiP84: q[2] });
    }
    out.push({ zLo: opts.zBins[k], zHi: opts.zBins[k + 1], bins });
  }
  return out;
}
