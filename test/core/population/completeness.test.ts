import { describe, expect, it } from 'vitest';
import { makeCosmology } from '../../../src/lib/core/cosmology.ts';
import { limitingLogMass, massCompleteness } from '../../../src/lib/core/population/completeness.ts';
import { PosterityError } from '../../../src/lib/core/problems.ts';
import { applyFluxLimit, simulatePopulation } from './simulate.ts';

describe('limitingLogMass', () => {
  it('is log M + 0.4 (m - m_lim) (Pozzetti et al. 2010)', () => {
    // 1 mag brighter than the limit: 0.4 dex less massive at the limit. Hand computed.
    const r = limitingLogMass(Float64Array.from([10]), Float64Array.from([23.5]), 24.5);
    expect(r[0]).toBeCloseTo(9.6, 14);
  });
});

describe('massCompleteness', () => {
  it('takes the faintest 20% and the 95th percentile by default (hand-computed example)', () => {
    // 10 galaxies in one bin, magnitudes 15..24: the faintest 20% are m = 24 and 23, with
    // log M_lim = 10 + 0.4 (24 - 25) = 9.6 and 10.5 + 0.4 (23 - 25) = 9.7. With two values the
    // Hazen positions are 0.25 and 0.75, so the 95th percentile clamps to the larger: 9.7.
    const mag = Float64Array.from({ length: 10 }, (_, i) => 15 + i);
    const logM = new Float64Array(10).fill(11);
    logM[9] = 10;
    logM[8] = 10.5;
    const z = new Float64Array(10).fill(0.5);
    const [b] = massCompleteness(logM, mag, z, 25, [0, 1]);
    expect(b.n).toBe(10);
    expect(b.nFaint).toBe(2);
    expect(b.logMLim).toBeCloseTo(9.7, 12);
    // Faintest 50% (m = 20..24) at the median: log M_lim = 9.0, 9.4, 9.8 (m = 20, 21, 22 with
    // log M = 11), 9.7 (m = 23) and 9.6 (m = 24); sorted 9.0 9.4 9.6 9.7 9.8, median 9.6.
    const [c] = massCompleteness(logM, mag, z, 25, [0, 1], { faintestFraction: 0.5, percentile: 0.5 });
    expect(c.nFaint).toBe(5);
    expect(c.logMLim).toBeCloseTo(9.6, 12);
  });

  it('reports empty bins as NaN and skips NaN rows', () => {
    const r = massCompleteness(Float64Array.from([10, NaN]), Float64Array.from([20, 20]), Float64Array.from([0.1, 0.1]), 24, [0, 0.5, 1]);
    expect(r[0].n).toBe(1);
    expect(r[1].n).toBe(0);
    expect(r[1].logMLim).toBeNaN();
  });

  it('rejects bad options with a PosterityError', () => {
    const a = new Float64Array(1);
    expect(() => massCompleteness(a, a, a, 24, [0, 1], { faintestFraction: 0 })).toThrow(PosterityError);
    expect(() => massCompleteness(a, a, a, 24, [1, 0])).toThrow(PosterityError);
  });

  it('lies near the mass where a simulated flux-limited sample becomes incomplete', () => {
    // Parent population: Schechter (phi* = 1e-3 Mpc^-3, log M* = 10.7, alpha = -1.3; our
    // simulation values) over 2 deg^2, 0.2 <= z < 0.4, H0 = 70, Om0 = 0.3, log M/L scatter
    // 0.2 dex; flux limit m < 23.5. True limit: the lowest 0.1-dex mass edge above which every
    // bin of the parent sample is at least 95% detected. Tolerance 0.2 dex, the M/L scatter:
    // the method is empirical, and samples the whole bin's redshift range.
    const cosmo = makeCosmology({ H0: 70, Om0: 0.3 });
    const magLim = 23.5;
    for (const seed of ['c1', 'c2', 'c3']) {
      const pop = simulatePopulation({
        schechter: { phiStar: 1e-3, logMStar: 10.7, alpha: -1.3 },
        cosmo, areaDeg2: 2, zLo: 0.2, zHi: 0.4, logMMin: 8, logMMax: 12.5, seed,
      });
      const det = new Float64Array(45);
      const tot = new Float64Array(45);
      for (let i = 0; i < pop.logM.length; i++) {
        const k = Math.floor((pop.logM[i] - 8) / 0.1);
        tot[k]++;
        if (pop.mag[i] < magLim) det[k]++;
      }
      let trueLim = NaN;
      for (let k = 44; k >= 0; k--) {
        if (tot[k] > 0 && det[k] / tot[k] < 0.95) {
          trueLim = 8 + (k + 1) * 0.1;
          break;
        }
      }
      const fl = applyFluxLimit(pop, magLim);
      const [b] = massCompleteness(fl.logM, fl.mag, fl.z, magLim, [0.2, 0.4]);
      expect(Math.abs(b.logMLim - trueLim)).toBeLessThan(0.2);
    }
  });
});
