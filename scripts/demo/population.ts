/**
 * Drawing the mock population: redshifts and masses from dV/dz times the Schechter mass
 * function in the comoving volume of the field, a quiescent flag, a selection magnitude from
 * the mass-to-light relation, the magnitude limit, and then each selected galaxy's true
 * physical parameters.
 */
import type { Rng } from '../../src/lib/core/random.ts';
import { normalCdf } from '../../src/lib/core/stats/special.ts';
import {
  LOG_M_CEIL, LOG_M_FLOOR, MAG_LIMIT, PARENT_DEPTH_DEX, Z_BINS, Z_MAX, Z_MIN,
  dustAv, logMassAtLimit, meanMag, msLogSfr, quiescentFraction, schechterPerDex, type World,
} from './scenario.ts';
import type { ParamSpec } from './params.ts';

const DZ = 0.005;
const DM = 0.01;
const HIST_DM = 0.25;

/** The (z, log M) grid the parents are drawn from. */
export interface PopulationGrid {
  nz: number;
  nm: number;
  /** Comoving volume of each z cell per steradian, Mpc^3/sr. */
  dV: Float64Array;
  /** First mass cell of the parent population in each z cell. */
  floorIdx: Int32Array;
  /** Cumulative parent number per steradian over z cells. */
  zCdf: Float64Array;
  /** Per z cell, cumulative parent number over mass cells (row-major nz x nm, from floorIdx). */
  mCdf: Float64Array;
  /** Expected number of parents per steradian. */
  parentPerSr: number;
  /** Expected number of galaxies above the magnitude limit per steradian. */
  selectedPerSr: number;
}

export const zCellLo = (i: number) => Z_MIN + i * DZ;
export const mCellLo = (j: number) => LOG_M_FLOOR + j * DM;

/** Parent population lower mass bound at redshift z. */
export function parentFloor(w: World, z: number): number {
  return Math.max(LOG_M_FLOOR, logMassAtLimit(w, z, false) - PARENT_DEPTH_DEX);
}

export function buildGrid(w: World): PopulationGrid {
  const nz = Math.round((Z_MAX - Z_MIN) / DZ);
  const nm = Math.round((LOG_M_CEIL - LOG_M_FLOOR) / DM);
  const dV = new Float64Array(nz);
  const floorIdx = new Int32Array(nz);
  const zCdf = new Float64Array(nz);
  const mCdf = new Float64Array(nz * nm);
  const sigma = w.hyper.massToLight.scatter;
  let parents = 0;
  let selected = 0;
  for (let i = 0; i < nz; i++) {
    const zlo = zCellLo(i);
    const zc = zlo + DZ / 2;
    dV[i] = w.dist.comovingVolumeMpc3(zlo + DZ, 1) - w.dist.comovingVolumeMpc3(zlo, 1);
    floorIdx[i] = Math.max(0, Math.floor((parentFloor(w, zc) - LOG_M_FLOOR) / DM));
    const msf = meanMag(w, zc, 10, false);
    const mq = meanMag(w, zc, 10, true);
    let acc = 0;
    let sel = 0;
    for (let j = 0; j < nm; j++) {
      if (j >= floorIdx[i]) {
        const mc = mCellLo(j) + DM / 2;
        const n = schechterPerDex(w.hyper, mc, zc) * DM;
        acc += n;
        const fq = quiescentFraction(w.hyper, mc, zc);
        const shift = -2.5 * (mc - 10);
        const p = (1 - fq) * normalCdf((MAG_LIMIT - msf - shift) / sigma) + fq * normalCdf((MAG_LIMIT - mq - shift) / sigma);
        sel += n * p;
      }
      mCdf[i * nm + j] = acc;
    }
    parents += acc * dV[i];
    selected += sel * dV[i];
    zCdf[i] = parents;
  }
  return { nz, nm, dV, floorIdx, zCdf, mCdf, parentPerSr: parents, selectedPerSr: selected };
}

/** First index with cdf[offset + k] > u, k in [lo, n). */
function search(cdf: Float64Array, offset: number, lo: number, n: number, u: number): number {
  let a = lo;
  let b = n - 1;
  while (a < b) {
    const m = (a + b) >> 1;
    if (cdf[offset + m] > u) b = m;
    else a = m + 1;
  }
  return a;
}

export interface Parent {
  z: number;
  logM: number;
  quiescent: boolean;
  mag: number;
}

export interface ParentHistogram {
  zBins: number[];
  logMEdges: number[];
  /** counts[zBin][massBin] of parents drawn before the magnitude limit. */
  parents: number[][];
  /** The same for the galaxies that passed it (the catalogue). */
  selected: number[][];
  /** Expected parent numbers in the field from the mass function (no floor). */
  expected: number[][];
  /** Mass above which the parent draw is complete, per z bin (the floor at the bin's far edge). */
  completeAboveLogM: number[];
  /** Comoving volume of each z bin over the field, Mpc^3. */
  volumeMpc3: number[];
}

/** Draw parents one by one until `n` pass the magnitude limit (so the catalogue has exactly n rows). */
export function drawParents(w: World, g: PopulationGrid, rng: Rng, n: number, solidAngleSr: number): { selected: Parent[]; nParents: number; hist: ParentHistogram } {
  const sigma = w.hyper.massToLight.scatter;
  const nMass = Math.round((LOG_M_CEIL - LOG_M_FLOOR) / HIST_DM);
  const nZ = Z_BINS.length - 1;
  const zeros = () => Array.from({ length: nZ }, () => new Array<number>(nMass).fill(0));
  const hist: ParentHistogram = {
    zBins: Z_BINS.slice(),
    logMEdges: Array.from({ length: nMass + 1 }, (_, k) => LOG_M_FLOOR + k * HIST_DM),
    parents: zeros(),
    selected: zeros(),
    expected: zeros(),
    completeAboveLogM: [],
    volumeMpc3: [],
  };
  const zBinOf = (z: number) => {
    for (let b = nZ - 1; b >= 0; b--) if (z >= Z_BINS[b]) return b;
    return 0;
  };
  const total = g.zCdf[g.nz - 1];
  const selected: Parent[] = [];
  let nParents = 0;
  const maxParents = 1000 * n + 100000;
  while (selected.length < n) {
    if (nParents > maxParents) throw new Error('demo: the magnitude limit selects almost nothing; check the scenario');
    const i = search(g.zCdf, 0, 0, g.nz, rng.next() * total);
    const z = zCellLo(i) + DZ * rng.next();
    const row = i * g.nm;
    const rowTotal = g.mCdf[row + g.nm - 1];
    const j = search(g.mCdf, row, g.floorIdx[i], g.nm, rng.next() * rowTotal);
    const logM = mCellLo(j) + DM * rng.next();
    const quiescent = rng.next() < quiescentFraction(w.hyper, logM, z);
    const mag = meanMag(w, z, logM, quiescent) + sigma * rng.normal();
    nParents++;
    const zb = zBinOf(z);
    const mb = Math.min(nMass - 1, Math.floor((logM - LOG_M_FLOOR) / HIST_DM));
    hist.parents[zb][mb]++;
    if (mag < MAG_LIMIT) {
      hist.selected[zb][mb]++;
      selected.push({ z, logM, quiescent, mag });
    }
  }
  // expected numbers from the mass function over the same cells, without the floor
  for (let i = 0; i < g.nz; i++) {
    const zc = zCellLo(i) + DZ / 2;
    const zb = zBinOf(zc);
    for (let j = 0; j < g.nm; j++) {
      const mc = mCellLo(j) + DM / 2;
      const mb = Math.min(nMass - 1, Math.floor((mc - LOG_M_FLOOR) / HIST_DM));
      hist.expected[zb][mb] += schechterPerDex(w.hyper, mc, zc) * DM * g.dV[i] * solidAngleSr;
    }
  }
  for (let b = 0; b < nZ; b++) {
    hist.expected[b] = hist.expected[b].map((x) => Number(x.toPrecision(6)));
    hist.completeAboveLogM.push(Math.ceil(parentFloor(w, Z_BINS[b + 1]) / HIST_DM) * HIST_DM);
    hist.volumeMpc3.push(Number((w.dist.comovingVolumeMpc3(Z_BINS[b + 1], solidAngleSr) - w.dist.comovingVolumeMpc3(Z_BINS[b], solidAngleSr)).toPrecision(8)));
  }
  return { selected, nParents, hist };
}

/** A catalogue galaxy with its true parameters (in the order of the parameter list). */
export interface Galaxy {
  index: number;
  id: string;
  z: number;
  quiescent: boolean;
  mag: number;
  ra: number;
  dec: number;
  /** Field coordinates in [-1, 1] (east, north), for band coverage. */
  u: number;
  v: number;
  truth: Float64Array;
}

const clamp = (x: number, lo: number, hi: number) => (x < lo ? lo : x > hi ? hi : x);

/** True parameters of one galaxy from the stated relations (its own random stream). */
export function drawTruth(w: World, params: ParamSpec[], p: Parent, rng: Rng): Float64Array {
  const h = w.hyper;
  const t = new Float64Array(params.length);
  const inside = (k: number, x: number) => clamp(x, params[k].min + 0.01 * (params[k].max - params[k].min), params[k].max - 0.01 * (params[k].max - params[k].min));
  const sf = !p.quiescent;
  let logSfr = msLogSfr(w, p.z, p.logM) + (sf ? h.mainSequence.scatter * rng.normal() : h.mainSequence.quiescentOffset + h.mainSequence.quiescentScatter * rng.normal());
  let av: number;
  if (sf) {
    // Gaussian scatter about the relation, truncated at zero by redrawing
    const mean = dustAv(h, p.logM);
    av = -1;
    for (let k = 0; k < 64 && av <= 0; k++) av = mean + h.dust.scatter * rng.normal();
    if (av <= 0) av = Math.abs(h.dust.scatter * rng.normal());
  } else {
    av = Math.abs(h.dust.quiescentSigma * rng.normal());
  }
  const tH = w.ageGyr(p.z) * 1e9;
  const ag = h.age;
  const frac = sf
    ? clamp(Math.pow(10, ag.sfLogFrac + ag.sfLogFracSlope * (p.logM - 10) + ag.sfLogFracScatter * rng.normal()), 0.004, 0.9)
    : ag.qFracMin + (ag.qFracMax - ag.qFracMin) * rng.next();
  const logAge = Math.log10(Math.max(ag.minAgeYr, frac * tH));
  for (let k = 0; k < params.length; k++) {
    switch (params[k].name) {
      case 'log_mstar': t[k] = p.logM; break;
      case 'log_sfr': t[k] = logSfr = inside(k, logSfr); break;
      case 'av': t[k] = clamp(av, 0.001, params[k].max - 0.1); break;
      case 'log_age': t[k] = inside(k, logAge); break;
      case 'metallicity': {
        const m = h.metallicity;
        t[k] = inside(k, m.z0 + m.slope * (p.logM - 10) + m.dz * p.z + m.scatter * rng.normal());
        break;
      }
      case 'log_tau': t[k] = sf ? 9.0 + 1.3 * rng.next() : 8.0 + 1.0 * rng.next(); break;
      case 'dust_slope': t[k] = inside(k, -0.1 + 0.15 * rng.normal()); break;
      case 'log_u': t[k] = inside(k, sf ? -2.6 + 0.25 * p.z + 0.3 * rng.normal() : -3.3 + 0.3 * rng.normal()); break;
      default: throw new Error(`demo: no truth model for ${params[k].name}`);
    }
  }
  return t;
}
