/**
 * The demo population: the stated relations a mock galaxy catalogue is drawn from.
 *
 * Functional forms: the Schechter (1976) stellar mass function; a star-forming main sequence
 * whose normalisation falls linearly with cosmic time, the shape Speagle et al. (2014) used;
 * a linear attenuation-mass relation. All numbers are our own, drawn (and rounded) from the
 * seed within narrow ranges so every seed is a slightly different, fully stated universe.
 */
import type { Rng } from '../../src/lib/core/random.ts';
import type { Cosmology, DistanceInterpolator } from '../../src/lib/core/cosmology.ts';
import { ageGyr } from '../../src/lib/core/cosmology.ts';

export const FIELD = {
  name: 'Veyra Deep Field',
  short: 'VDF',
  raDeg: 63.05,
  decDeg: 33.02,
} as const;

export const Z_MIN = 0.1;
export const Z_MAX = 3.0;
export const MAG_LIMIT = 26.0;
/** Lowest stellar mass ever drawn, log(solMass). */
export const LOG_M_FLOOR = 6.0;
export const LOG_M_CEIL = 12.5;
/** Parents are drawn down to this many dex below the star-forming mass limit at their redshift. */
export const PARENT_DEPTH_DEX = 1.2;
export const Z_BINS = [0.1, 0.5, 1.0, 1.5, 2.0, 3.0];

export interface Hyper {
  smf: { logPhiStar0: number; dLogPhiStarDz: number; logMstar: number; alpha: number };
  quiescentFraction: { floor0: number; floorZScale: number; logMq0: number; dLogMqDz: number; width: number };
  massToLight: { m10: number; dMdz: number; quiescentOffset: number; scatter: number };
  mainSequence: { a0: number; aT: number; b: number; scatter: number; pivot: number; quiescentOffset: number; quiescentScatter: number };
  dust: { c: number; d: number; scatter: number; pivot: number; quiescentSigma: number };
  age: { sfLogFrac: number; sfLogFracSlope: number; sfLogFracScatter: number; qFracMin: number; qFracMax: number; minAgeYr: number };
  metallicity: { z0: number; slope: number; dz: number; scatter: number };
}

const r2 = (x: number) => Math.round(x * 100) / 100;
const r3 = (x: number) => Math.round(x * 1000) / 1000;
const around = (rng: Rng, centre: number, halfWidth: number) => centre + halfWidth * (2 * rng.next() - 1);

/** The universe of one seed: each number drawn uniformly in a narrow range and rounded. */
export function drawHyper(rng: Rng): Hyper {
  return {
    smf: {
      logPhiStar0: r2(around(rng, -2.8, 0.05)),
      dLogPhiStarDz: r2(around(rng, -0.25, 0.03)),
      logMstar: r2(around(rng, 10.8, 0.05)),
      alpha: r2(around(rng, -1.35, 0.05)),
    },
    quiescentFraction: { floor0: 0.06, floorZScale: 0.5, logMq0: r2(around(rng, 10.45, 0.05)), dLogMqDz: r2(around(rng, 0.45, 0.05)), width: 0.25 },
    massToLight: { m10: r2(around(rng, -21.1, 0.1)), dMdz: r2(around(rng, -0.25, 0.03)), quiescentOffset: r2(around(rng, 0.7, 0.05)), scatter: 0.3 },
    mainSequence: {
      a0: r2(around(rng, 1.8, 0.05)),
      aT: r3(around(rng, 0.14, 0.01)),
      b: r2(around(rng, 0.8, 0.05)),
      scatter: r2(around(rng, 0.3, 0.02)),
      pivot: 10,
      quiescentOffset: r2(around(rng, -1.8, 0.05)),
      quiescentScatter: 0.35,
    },
    dust: { c: r2(around(rng, 1.2, 0.05)), d: r2(around(rng, 0.45, 0.05)), scatter: r2(around(rng, 0.25, 0.02)), pivot: 10, quiescentSigma: 0.2 },
    age: { sfLogFrac: -0.45, sfLogFracSlope: 0.15, sfLogFracScatter: 0.2, qFracMin: 0.55, qFracMax: 0.95, minAgeYr: 5e7 },
    metallicity: { z0: 0.15, slope: 0.3, dz: -0.12, scatter: 0.15 },
  };
}

/** The parts of the scenario every formula needs. */
export interface World {
  hyper: Hyper;
  cosmo: Cosmology;
  dist: DistanceInterpolator;
  /** Age of the universe at z in Gyr (tabulated from the cosmology). */
  ageGyr: (z: number) => number;
}

/** Age of the universe tabulated every 0.001 in z up to zMax, read by linear interpolation (error < 1e-6 Gyr). */
export function ageTable(cosmo: Cosmology, zMax: number): (z: number) => number {
  const step = 0.001;
  const n = Math.ceil(zMax / step) + 2;
  const t = new Float64Array(n);
  for (let i = 0; i < n; i++) t[i] = ageGyr(i * step, cosmo);
  return (z: number) => {
    const x = z / step;
    const i = Math.min(n - 2, Math.max(0, Math.floor(x)));
    const f = x - i;
    return t[i] * (1 - f) + t[i + 1] * f;
  };
}

/** Schechter (1976) function per dex: ln(10) phi* (M/M*)^(alpha+1) exp(-M/M*), Mpc^-3 dex^-1. */
export function schechterPerDex(h: Hyper, logM: number, z: number): number {
  const phiStar = Math.pow(10, h.smf.logPhiStar0 + h.smf.dLogPhiStarDz * z);
  const x = Math.pow(10, logM - h.smf.logMstar);
  return Math.LN10 * phiStar * Math.pow(x, h.smf.alpha + 1) * Math.exp(-x);
}

/** Quiescent fraction: a floor (quenched dwarfs, fading with z) plus a logistic step in log M whose midpoint rises with z. */
export function quiescentFraction(h: Hyper, logM: number, z: number): number {
  const q = h.quiescentFraction;
  const floor = q.floor0 * Math.exp(-z / q.floorZScale);
  return floor + (1 - floor) / (1 + Math.exp(-(logM - (q.logMq0 + q.dLogMqDz * z)) / q.width));
}

/**
 * Mean selection-band AB magnitude of a galaxy (the mass-to-light relation):
 * m = DM(z) - 2.5 log10(1+z) + m10 + dMdz z - 2.5 (log M - 10) + quiescentOffset [if quiescent].
 */
export function meanMag(w: World, z: number, logM: number, quiescent: boolean): number {
  const ml = w.hyper.massToLight;
  return w.dist.distMod(z) - 2.5 * Math.log10(1 + z) + ml.m10 + ml.dMdz * z - 2.5 * (logM - 10) + (quiescent ? ml.quiescentOffset : 0);
}

/** Mass at which the mean magnitude equals the limit. */
export function logMassAtLimit(w: World, z: number, quiescent: boolean, magLimit = MAG_LIMIT): number {
  return 10 + (meanMag(w, z, 10, quiescent) - magLimit) / 2.5;
}

/** Main-sequence normalisation at log M = pivot: a(z) = a0 - aT t(z), t the age of the universe in Gyr. */
export function msNormalisation(w: World, z: number): number {
  const ms = w.hyper.mainSequence;
  return ms.a0 - ms.aT * w.ageGyr(z);
}

export function msLogSfr(w: World, z: number, logM: number): number {
  const ms = w.hyper.mainSequence;
  return msNormalisation(w, z) + ms.b * (logM - ms.pivot);
}

export function dustAv(h: Hyper, logM: number): number {
  return h.dust.c + h.dust.d * (logM - h.dust.pivot);
}
