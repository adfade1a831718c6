import { describe, expect, it } from 'vitest';
import { makeCosmology, makeDistanceInterpolator } from '../../../src/lib/core/cosmology.ts';
import {
  massFunction1OverVmax,
  massFunctionBootstrap,
  solidAngleSr,
  vmaxMpc3,
  zMaxForMagLimit,
} from '../../../src/lib/core/population/massfunction.ts';
import { PosterityError } from '../../../src/lib/core/problems.ts';
import { makeRng } from '../../../src/lib/core/random.ts';
import { describeWithPython, runPython } from '../../helpers/python.ts';
import { simulatePopulation } from './simulate.ts';

const cosmo = makeCosmology({ H0: 70, Om0: 0.3 });

describe('solidAngleSr', () => {
  it('is area (pi / 180)^2; the whole sky, 129600 / pi deg^2, is 4 pi sr', () => {
    expect(solidAngleSr(129600 / Math.PI)).toBeCloseTo(4 * Math.PI, 12);
    expect(solidAngleSr(1)).toBeCloseTo(3.0461741978670857e-4, 18); // (pi/180)^2
  });
});

describe('zMaxForMagLimit', () => {
  const d = makeDistanceInterpolator(cosmo, 3);
  it('moves the galaxy until m + 5 log10(D_L(z) / D_L(z_obs)) = m_lim', () => {
    const z = zMaxForMagLimit(22, 0.5, 24, 3, d);
    expect(22 + 5 * Math.log10(d.lumDistMpc(z) / d.lumDistMpc(0.5))).toBeCloseTo(24, 9);
  });
  it('caps at zCap, and returns z for a galaxy at or past the limit', () => {
    expect(zMaxForMagLimit(15, 0.5, 24, 1, d)).toBe(1);
    expect(zMaxForMagLimit(24.2, 0.5, 24, 1, d)).toBe(0.5);
  });
  it('agrees with the closed form when the k-correction hook returns zero, and shrinks z_max for a positive K slope', () => {
    const z0 = zMaxForMagLimit(22, 0.5, 24, 3, d);
    expect(zMaxForMagLimit(22, 0.5, 24, 3, d, () => 0)).toBeCloseTo(z0, 8);
    expect(zMaxForMagLimit(22, 0.5, 24, 3, d, (z) => 2 * z)).toBeLessThan(z0);
  });
});

describe('massFunction1OverVmax', () => {
  it('sums 1 / V_max per dex with Poisson errors (hand-checked on two galaxies)', () => {
    const d = makeDistanceInterpolator(cosmo, 1);
    const mag = Float64Array.from([18, 23.9]);
    const z = Float64Array.from([0.3, 0.6]);
    const logM = Float64Array.from([10.1, 10.15]);
    const v = vmaxMpc3(mag, z, { zLo: 0.2, zHi: 1, magLim: 24, areaDeg2: 3, distances: d });
    const sr = solidAngleSr(3);
    // the bright galaxy is seen to z = 1: V_max is the whole bin
    expect(v[0]).toBeCloseTo(d.comovingVolumeMpc3(1, sr) - d.comovingVolumeMpc3(0.2, sr), 6);
    expect(v[1]).toBeLessThan(v[0]);
    const [zb] = massFunction1OverVmax(logM, mag, z, {
      areaDeg2: 3, magLim: 24, zBins: [0.2, 1], massEdges: Float64Array.from([10, 10.2, 10.4]), cosmo,
    });
    expect(zb.volumeMpc3).toBeCloseTo(v[0], 6);
    const b = zb.bins[0];
    expect(b.n).toBe(2);
    expect(b.logM).toBeCloseTo(10.1, 14);
    expect(b.phi).toBeCloseTo((1 / v[0] + 1 / v[1]) / 0.2, 18);
    expect(b.phiErr).toBeCloseTo(Math.sqrt(1 / v[0] ** 2 + 1 / v[1] ** 2) / 0.2, 18);
    expect(b.vEffMpc3).toBeCloseTo(2 / (1 / v[0] + 1 / v[1]), 4);
    // empty bin: zero density, whole-bin effective volume
    expect(zb.bins[1].n).toBe(0);
    expect(zb.bins[1].phi).toBe(0);
    expect(zb.bins[1].vEffMpc3).toBe(zb.volumeMpc3);
  });

  it('rejects a bad area or non-increasing edges with a PosterityError', () => {
    const a = Float64Array.from([10]);
    const base = { areaDeg2: 1, magLim: 24, zBins: [0, 1], massEdges: Float64Array.from([9, 11]), cosmo };
    expect(() => massFunction1OverVmax(a, a, a, { ...base, areaDeg2: 0 })).toThrow(PosterityError);
    expect(() => massFunction1OverVmax(a, a, a, { ...base, zBins: [1, 0.5] })).toThrow(PosterityError);
  });
});

describeWithPython('1/Vmax volumes against astropy', ['astropy', 'scipy'], () => {
  it("match FlatLambdaCDM(H0=70, Om0=0.3, Tcmb0=0).comoving_volume(z) x sr / 4 pi to 1e-6, and z_max by brentq", () => {
    const areaDeg2 = 1.7;
    const sr = solidAngleSr(areaDeg2);
    const zBins = [0.05, 0.3, 0.8, 1.5, 3];
    const rng = makeRng('astropy-vmax');
    const n = 40;
    const z = Float64Array.from({ length: n }, () => 0.05 + 2.9 * rng.next());
    const mag = Float64Array.from({ length: n }, () => 18 + 6.5 * rng.next());
    const magLim = 24.5;
    const ref = runPython(
      `from astropy.cosmology import FlatLambdaCDM
from scipy.optimize import brentq
import math
c = FlatLambdaCDM(H0=70, Om0=0.3, Tcmb0=0)
d = json.load(sys.stdin)
sr, edges = d['sr'], d['edges']
V = lambda z: c.comoving_volume(z).value * sr / (4 * math.pi)
DL = lambda z: c.luminosity_distance(z).value
binV = [V(edges[k + 1]) - V(edges[k]) for k in range(len(edges) - 1)]
vmax = []
for z, m in zip(d['z'], d['mag']):
    k = max(i for i in range(len(edges) - 1) if edges[i] <= z)
    lo, hi = edges[k], edges[k + 1]
    target = DL(z) * 10 ** (0.2 * (d['magLim'] - m))
    zmax = hi if target >= DL(hi) else max(z, brentq(lambda x: DL(x) - target, 1e-8, hi, xtol=1e-14, rtol=1e-14))
    vmax.append(V(zmax) - V(lo))
print(json.dumps({'binV': binV, 'vmax': vmax}))`,
      { sr, edges: zBins, z: Array.from(z), mag: Array.from(mag), magLim },
    ) as { binV: number[]; vmax: number[] };
    const mf = massFunction1OverVmax(new Float64Array(n).fill(10.5), mag, z, {
      areaDeg2, magLim, zBins, massEdges: Float64Array.from([10, 11]), cosmo,
    });
    mf.forEach((b, k) => expect(Math.abs(b.volumeMpc3 / ref.binV[k] - 1)).toBeLessThan(1e-6));
    const d = makeDistanceInterpolator(cosmo, 3);
    for (let i = 0; i < n; i++) {
      let k = 0;
      while (zBins[k + 1] <= z[i]) k++;
      const v = vmaxMpc3(mag.subarray(i, i + 1), z.subarray(i, i + 1), {
        zLo: zBins[k], zHi: zBins[k + 1], magLim, areaDeg2, distances: d,
      })[0];
      expect(Math.abs(v / ref.vmax[i] - 1)).toBeLessThan(1e-6);
    }
  });
});

describe('massFunctionBootstrap', () => {
  const truth = { phiStar: 1e-3, logMStar: 10.7, alpha: -1.3 };
  const pop = simulatePopulation({ schechter: truth, cosmo, areaDeg2: 1, zLo: 0.1, zHi: 0.5, logMMin: 9, logMMax: 12, seed: 'boot' });
  const n = pop.logM.length;
  const opts = { areaDeg2: 1, magLim: 99, zBins: [0.1, 0.5], massEdges: Float64Array.from({ length: 11 }, (_, i) => 9 + 0.2 * i), cosmo };

  it('with exact masses, brackets the point estimate with a spread close to the Poisson error', () => {
    const draws = { offsets: Array.from({ length: n + 1 }, (_, i) => i), values: pop.logM, weights: new Float64Array(n).fill(1) };
    const point = massFunction1OverVmax(pop.logM, pop.mag, pop.z, opts)[0].bins;
    const boot = massFunctionBootstrap(draws, pop.mag, pop.z, opts, 300, 7)[0].bins;
    for (let j = 0; j < point.length; j++) {
      if (point[j].n < 100) continue;
      expect(boot[j].phiP16).toBeLessThan(point[j].phi);
      expect(boot[j].phiP84).toBeGreaterThan(point[j].phi);
      // half the 16-84% range estimates the Poisson error; 300 replicates: within 25%
      const half = 0.5 * (boot[j].phiP84 - boot[j].phiP16);
      expect(Math.abs(half / point[j].phiErr - 1)).toBeLessThan(0.25);
    }
  });

  it('is reproducible for a seed and changes with the seed', () => {
    const nd = 8;
    const rng = makeRng('scatter');
    const values = new Float64Array(n * nd);
    for (let i = 0; i < n; i++) for (let j = 0; j < nd; j++) values[i * nd + j] = pop.logM[i] + rng.normal(0, 0.3);
    const draws = { offsets: Array.from({ length: n + 1 }, (_, i) => i * nd), values, weights: new Float64Array(n * nd).fill(1) };
    const a = massFunctionBootstrap(draws, pop.mag, pop.z, opts, 50, 11);
    const b = massFunctionBootstrap(draws, pop.mag, pop.z, opts, 50, 11);
    expect(a).toEqual(b);
    const c = massFunctionBootstrap(draws, pop.mag, pop.z, opts, 50, 12);
    expect(c).not.toEqual(a);
  });
});
