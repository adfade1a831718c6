import { describe, expect, it } from 'vitest';
import { makeCosmology } from '../../../src/lib/core/cosmology.ts';
import {
  classifyBySsfr,
  QUIESCENT,
  ssfrThresholdEvolving,
  ssfrThresholdsEvolving,
  STAR_FORMING,
  starFormingProbability,
  UNCLASSIFIED,
} from '../../../src/lib/core/population/classify.ts';
import { PosterityError } from '../../../src/lib/core/problems.ts';
import { describeWithPython, runPython } from '../../helpers/python.ts';

describe('classifyBySsfr', () => {
  it('cuts at log sSFR = -11 per yr by default, strictly above is star-forming', () => {
    // log sSFR = logSfr - logMass: -10, -11 (on the cut: quiescent), -12, NaN
    const logM = Float64Array.from([10, 10, 11, NaN]);
    const logSfr = Float64Array.from([0, -1, -1, 0]);
    expect(Array.from(classifyBySsfr(logM, logSfr))).toEqual([STAR_FORMING, QUIESCENT, QUIESCENT, UNCLASSIFIED]);
  });

  it('takes one threshold per galaxy', () => {
    const logM = Float64Array.from([10, 10]);
    const logSfr = Float64Array.from([-0.5, -0.5]); // log sSFR = -10.5
    expect(Array.from(classifyBySsfr(logM, logSfr, Float64Array.from([-10, -11])))).toEqual([QUIESCENT, STAR_FORMING]);
  });

  it('rejects columns of different lengths with a PosterityError', () => {
    expect(() => classifyBySsfr(new Float64Array(2), new Float64Array(3))).toThrow(PosterityError);
  });
});

describe('starFormingProbability', () => {
  it('is the weighted fraction of joint draws above the cut', () => {
    // object 0: draws with log sSFR -10 (w 1), -12 (w 3) -> 0.25; object 1: all above -> 1;
    // object 2: no draws -> NaN. Hand computed.
    const d = {
      offsets: [0, 2, 3, 3],
      values: Float64Array.from([10, 10, 9]),
      weights: Float64Array.from([1, 3, 5]),
    };
    const sfr = Float64Array.from([0, -2, -1]);
    const p = starFormingProbability(d, sfr);
    expect(p[0]).toBeCloseTo(0.25, 15);
    expect(p[1]).toBe(1);
    expect(p[2]).toBeNaN();
  });
});

describe('ssfrThresholdEvolving', () => {
  it('is -log10(3 t_H) and rises with redshift as the universe gets younger', () => {
    const c = makeCosmology({ H0: 70, Om0: 0.3 });
    const t0 = ssfrThresholdEvolving(0, c);
    // t_H(0) = 13.47 Gyr for H0 = 70, Om0 = 0.3 (from memory; checked against astropy below)
    expect(t0).toBeCloseTo(-Math.log10(3 * 13.47e9), 3);
    expect(ssfrThresholdEvolving(2, c)).toBeGreaterThan(t0);
    const many = ssfrThresholdsEvolving(Float64Array.from([0, NaN]), c);
    expect(many[0]).toBe(t0);
    expect(many[1]).toBeNaN();
  });
});

describeWithPython('ssfrThresholdEvolving against astropy', ['astropy'], () => {
  it('matches -log10(3 age) from FlatLambdaCDM(H0=70, Om0=0.3, Tcmb0=0).age(z) in yr to 1e-9', () => {
    const zs = [0, 0.5, 1, 2, 4];
    const ref = runPython(
      `from astropy.cosmology import FlatLambdaCDM
import astropy.units as u, math
c = FlatLambdaCDM(H0=70, Om0=0.3, Tcmb0=0)
zs = json.load(sys.stdin)
print(json.dumps([-math.log10(3 * c.age(z).to(u.yr).value) for z in zs]))`,
      zs,
    ) as number[];
    const c = makeCosmology({ H0: 70, Om0: 0.3 });
    zs.forEach((z, k) => expect(Math.abs(ssfrThresholdEvolving(z, c) - ref[k])).toBeLessThan(1e-9));
  });
});
