/**
 * Simulated galaxy populations for the population tests: masses drawn from a known Schechter
 * function, redshifts uniform in comoving volume over a stated area, and apparent magnitudes
 * from mass through a scattered mass-to-light ratio and the luminosity distance (no
 * k-correction, matching the 1/Vmax estimator under test).
 */
import { makeDistanceInterpolator, type Cosmology } from '../../../src/lib/core/cosmology.ts';
import { makeRng, type Rng } from '../../../src/lib/core/random.ts';
import { solidAngleSr, schechter, type SchechterParams } from '../../../src/lib/core/population/massfunction.ts';

/** Inverse-CDF sampler of log M on [lo, hi] for a per-dex density, tabulated on a fine grid. */
function inverseCdf(density: (x: number) => number, lo: number, hi: number, n = 20000) {
  const x = new Float64Array(n + 1);
  const c = new Float64Array(n + 1);
  const h = (hi - lo) / n;
  for (let i = 0; i <= n; i++) x[i] = lo + i * h;
  for (let i = 1; i <= n; i++) {
    // Simpson on each cell
    const a = x[i - 1];
    const b = x[i];
    c[i] = c[i - 1] + ((b - a) / 6) * (density(a) + 4 * density(0.5 * (a + b)) + density(b));
  }
  const total = c[n];
  const sample = (u: number) => {
    const t = u * total;
    let l = 0;
    let r = n;
    while (r - l > 1) {
      const m = (l + r) >> 1;
      if (c[m] <= t) l = m;
      else r = m;
    }
    const f = (t - c[l]) / (c[r] - c[l]);
    return x[l] + f * (x[r] - x[l]);
  };
  return { total, sample };
}

/** Poisson variate by inversion for small means, normal approximation above 500. */
function poisson(rng: Rng, mean: number): number {
  if (mean > 500) return Math.max(0, Math.round(rng.normal(mean, Math.sqrt(mean))));
  let k = 0;
  let p = Math.exp(-mean);
  let s = p;
  const u = rng.next();
  while (u > s) {
    k++;
    p *= mean / k;
    s += p;
  }
  return k;
}

export interface SimOptions {
  schechter: SchechterParams;
  cosmo: Cosmology;
  areaDeg2: number;
  zLo: number;
  zHi: number;
  logMMin: number;
  logMMax: number;
  seed: number | string;
  /** Log mass-to-light scatter in dex (default 0.2). */
  mlScatterDex?: number;
}

export interface SimPopulation {
  logM: Float64Array;
  z: Float64Array;
  /** Apparent magnitude: m = 20 - 2.5 (log M - 10 - dlogML) + 5 log10(D_L(z) / D_L(0.1)). */
  mag: Float64Array;
  volumeMpc3: number;
  expectedN: number;
}

/** Poisson-sampled population of a volume over `areaDeg2` and [zLo, zHi], all masses in [logMMin, logMMax]. */
export function simulatePopulation(o: SimOptions): SimPopulation {
  const rng = makeRng(o.seed);
  const dist = makeDistanceInterpolator(o.cosmo, Math.max(o.zHi, 0.1) * 1.01);
  const sr = solidAngleSr(o.areaDeg2);
  const vLo = dist.comovingVolumeMpc3(o.zLo, sr);
  const vHi = dist.comovingVolumeMpc3(o.zHi, sr);
  const volume = vHi - vLo;
  const massSampler = inverseCdf((m) => schechter(m, o.schechter), o.logMMin, o.logMMax);
  const expectedN = massSampler.total * volume;
  const n = poisson(rng, expectedN);
  // redshift uniform in comoving volume: invert V(z) on a grid
  const nz = 4000;
  const zg = new Float64Array(nz + 1);
  const vg = new Float64Array(nz + 1);
  for (let i = 0; i <= nz; i++) {
    zg[i] = o.zLo + ((o.zHi - o.zLo) * i) / nz;
    vg[i] = dist.comovingVolumeMpc3(zg[i], sr);
  }
  const dl01 = dist.lumDistMpc(0.1);
  const scatter = o.mlScatterDex ?? 0.2;
  const logM = new Float64Array(n);
  const z = new Float64Array(n);
  const mag = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    logM[i] = massSampler.sample(rng.next());
    const v = vLo + rng.next() * volume;
    let l = 0;
    let r = nz;
    while (r - l > 1) {
      const m = (l + r) >> 1;
      if (vg[m] <= v) l = m;
      else r = m;
    }
    z[i] = zg[l] + ((v - vg[l]) / (vg[r] - vg[l])) * (zg[r] - zg[l]);
    const dml = rng.normal(0, scatter);
    mag[i] = 20 - 2.5 * (logM[i] - 10 - dml) + 5 * Math.log10(dist.lumDistMpc(z[i]) / dl01);
  }
  return { logM, z, mag, volumeMpc3: volume, expectedN };
}

/** The rows of `p` with mag < magLim. */
export function applyFluxLimit(p: SimPopulation, magLim: number): SimPopulation {
  const keep: number[] = [];
  for (let i = 0; i < p.mag.length; i++) if (p.mag[i] < magLim) keep.push(i);
  const pick = (a: Float64Array) => Float64Array.from(keep, (i) => a[i]);
  return { logM: pick(p.logM), z: pick(p.z), mag: pick(p.mag), volumeMpc3: p.volumeMpc3, expectedN: p.expectedN };
}
