import { beforeAll, describe, expect, it } from 'vitest';
import {
  C_KM_S,
  type Cosmology,
  ageGyr,
  angDiamDistMpc,
  comovingDistMpc,
  comovingDistTable,
  comovingVolumeMpc3,
  curvatureOk0,
  differentialComovingVolumeMpc3Sr,
  distMod,
  efunc,
  hubbleDistMpc,
  hubbleTimeGyr,
  integrateGaussKronrod,
  lookbackTimeGyr,
  lumDistMpc,
  makeCosmology,
  makeDistanceInterpolator,
  transverseComovingDistMpc,
  zAtComovingDist,
  zAtLumDist,
} from '../../src/lib/core/cosmology.ts';
import { PosterityError } from '../../src/lib/core/problems.ts';
import { describeWithPython, runPython } from '../helpers/python.ts';

/** |got/want - 1| <= tol, with a readable failure. */
function expectRel(got: number, want: number, tol: number, label = ''): void {
  const rel = want === 0 ? Math.abs(got) : Math.abs(got / want - 1);
  if (!(rel <= tol)) {
    throw new Error(`${label}: got ${got}, want ${want}, relative error ${rel.toExponential(3)} > ${tol}`);
  }
}

function problemOf(fn: () => unknown): { field?: string; expected?: string; got?: string } {
  try {
    fn();
  } catch (e) {
    expect(e).toBeInstanceOf(PosterityError);
    return (e as PosterityError).problems[0];
  }
  throw new Error('expected a PosterityError');
}

const ZS = [0.01, 0.1, 0.5, 1, 2, 3, 5, 10];
const CLOSED_FORM = 1e-10; // our integrals are asked for 1e-12; analytic references are exact

describe('integrateGaussKronrod', () => {
  it('is exact for polynomials up to degree 23 on one panel (Kronrod 15-point rule, degree 3n+1 = 22, odd 23 by symmetry)', () => {
    // integral_0^1 x^22 dx = 1/23 (elementary).
    expectRel(integrateGaussKronrod((x) => x ** 22, 0, 1, 1), 1 / 23, 1e-14, 'x^22');
    expectRel(integrateGaussKronrod((x) => x ** 23 + 1, -1, 1, 1), 2, 1e-14, 'x^23 + 1');
  });
  it('adapts to an endpoint singularity in the derivative', () => {
    // integral_0^1 sqrt(x) dx = 2/3; integral_0^pi sin x dx = 2 (elementary).
    expectRel(integrateGaussKronrod(Math.sqrt, 0, 1), 2 / 3, 1e-11, 'sqrt');
    expectRel(integrateGaussKronrod(Math.sin, 0, Math.PI), 2, 1e-13, 'sin');
  });
});

describe('makeCosmology', () => {
  it('defaults to flat and freezes', () => {
    const c = makeCosmology({ H0: 70, Om0: 0.3 });
    expect(c.Ode0).toBeCloseTo(0.7, 15);
    expect(Math.abs(curvatureOk0(c))).toBeLessThan(1e-15);
    expect(Object.isFrozen(c)).toBe(true);
    const r = makeCosmology({ H0: 70, Om0: 0.3, Or0: 1e-4 });
    expect(r.Ode0).toBeCloseTo(0.6999, 15);
  });
  it('names the field of a bad parameter', () => {
    expect(problemOf(() => makeCosmology({ H0: 0, Om0: 0.3 })).field).toBe('cosmology.H0');
    expect(problemOf(() => makeCosmology({ H0: NaN, Om0: 0.3 })).field).toBe('cosmology.H0');
    expect(problemOf(() => makeCosmology({ H0: 70, Om0: -0.1 })).field).toBe('cosmology.Om0');
    expect(problemOf(() => makeCosmology({ H0: 70, Om0: 0.3, Or0: -1 })).field).toBe('cosmology.Or0');
    expect(problemOf(() => makeCosmology({ H0: 70, Om0: 0.3, Ode0: Infinity })).field).toBe('cosmology.Ode0');
    // Om0 = 0.3, Ode0 = 2: E^2 a^4 = a (0.3 - 1.3 a + 2 a^3) < 0 at a = 0.5, a bounce, no Big Bang.
    expect(problemOf(() => makeCosmology({ H0: 70, Om0: 0.3, Ode0: 2 })).field).toBe('cosmology.Ode0');
  });
  it('rejects a negative or non-finite redshift', () => {
    const c = makeCosmology({ H0: 70, Om0: 0.3 });
    expect(problemOf(() => comovingDistMpc(-0.1, c)).field).toBe('z');
    expect(problemOf(() => ageGyr(NaN, c)).field).toBe('z');
  });
});

describe('scales', () => {
  it('Hubble distance and time', () => {
    const c = makeCosmology({ H0: 100, Om0: 0.3 });
    // D_H = c/H0 = 2997.92458 h^-1 Mpc (Hogg eq. 4, with c exact).
    expectRel(hubbleDistMpc(c), C_KM_S / 100, 1e-15, 'D_H');
    // t_H = 9.778 h^-1 Gyr (Hogg eq. 3 quotes 9.78 h^-1 Gyr); 977.79222 / H0 Gyr from Mpc = 3.0856775814913673e19 km
    // and the Julian year (computed by hand: 3.0856775814913673e19 / 3.15576e16 / 100 = 9.7779222).
    expectRel(hubbleTimeGyr(c), 9.777922216807891, 1e-12, 't_H');
    expect(efunc(0, c)).toBe(1);
  });
});

describe('Einstein-de Sitter (Om0 = 1) closed forms', () => {
  // E(z) = (1+z)^{3/2}. Integrating Hogg eqs. 15 and 30 by hand:
  // D_C = 2 D_H (1 - 1/sqrt(1+z)); age(z) = (2/3) t_H (1+z)^{-3/2}; t_L = age(0) - age(z); flat, so V = 4pi/3 D_C^3.
  const c = makeCosmology({ H0: 70, Om0: 1 });
  const dh = hubbleDistMpc(c);
  const th = hubbleTimeGyr(c);
  it.each(ZS)('z = %s', (z) => {
    const dc = 2 * dh * (1 - 1 / Math.sqrt(1 + z));
    expectRel(comovingDistMpc(z, c), dc, CLOSED_FORM, 'D_C');
    expectRel(transverseComovingDistMpc(z, c), dc, CLOSED_FORM, 'D_M');
    expectRel(lumDistMpc(z, c), (1 + z) * dc, CLOSED_FORM, 'D_L');
    expectRel(ageGyr(z, c), (2 / 3) * th * (1 + z) ** -1.5, CLOSED_FORM, 'age');
    expectRel(lookbackTimeGyr(z, c), (2 / 3) * th * (1 - (1 + z) ** -1.5), CLOSED_FORM, 't_L');
    expectRel(comovingVolumeMpc3(z, c), ((4 * Math.PI) / 3) * dc ** 3, CLOSED_FORM, 'V_C');
    expectRel(comovingVolumeMpc3(z, c, 0.01), (0.01 / 3) * dc ** 3, CLOSED_FORM, 'V_C over 0.01 sr');
    // dV_C/dz/dOmega = D_H D_M^2 / E (Hogg eq. 28).
    expectRel(differentialComovingVolumeMpc3Sr(z, c), (dh * dc * dc) / (1 + z) ** 1.5, CLOSED_FORM, 'dV_C');
  });
  it('age today is 2/(3 H0)', () => {
    expectRel(ageGyr(0, c), (2 / 3) * th, CLOSED_FORM, 'age');
  });
});

describe('empty universe (Om0 = Ode0 = 0, Ok0 = 1) closed forms', () => {
  // E(z) = 1+z. By hand from Hogg eqs. 15, 16, 29, 30:
  // D_C = D_H ln(1+z); D_M = D_H sinh(ln(1+z)) = D_H ((1+z) - 1/(1+z))/2 = D_H (z + z^2/2)/(1+z);
  // D_L = D_H z (1 + z/2); age(z) = t_H / (1+z); t_L = t_H z/(1+z);
  // V_C = pi D_H^3 (sinh(2 psi) - 2 psi), psi = ln(1+z), i.e. pi D_H^3 [((1+z)^2 - (1+z)^-2)/2 - 2 ln(1+z)].
  const c = makeCosmology({ H0: 70, Om0: 0, Ode0: 0 });
  const dh = hubbleDistMpc(c);
  const th = hubbleTimeGyr(c);
  it.each(ZS)('z = %s', (z) => {
    const zp = 1 + z;
    expect(curvatureOk0(c)).toBe(1);
    expectRel(comovingDistMpc(z, c), dh * Math.log1p(z), CLOSED_FORM, 'D_C');
    expectRel(transverseComovingDistMpc(z, c), (dh * (z + (z * z) / 2)) / zp, CLOSED_FORM, 'D_M');
    expectRel(lumDistMpc(z, c), dh * z * (1 + z / 2), CLOSED_FORM, 'D_L');
    expectRel(angDiamDistMpc(z, c), (dh * (z + (z * z) / 2)) / zp ** 2, CLOSED_FORM, 'D_A');
    expectRel(ageGyr(z, c), th / zp, CLOSED_FORM, 'age');
    expectRel(lookbackTimeGyr(z, c), (th * z) / zp, CLOSED_FORM, 't_L');
    const v = Math.PI * dh ** 3 * ((zp * zp - 1 / (zp * zp)) / 2 - 2 * Math.log(zp));
    // At small z the bracket cancels in floating point (~1e-9 relative at z = 0.01); the code uses a series there.
    expectRel(comovingVolumeMpc3(z, c), v, z < 0.1 ? 1e-7 : CLOSED_FORM, 'V_C');
  });
});

describe('radiation only (Or0 = 1) closed forms', () => {
  // E(z) = (1+z)^2: D_C = D_H z/(1+z); age(z) = t_H / (2 (1+z)^2) (by hand from Hogg eqs. 15 and 30).
  const c = makeCosmology({ H0: 70, Om0: 0, Or0: 1 });
  it.each(ZS)('z = %s', (z) => {
    expect(c.Ode0).toBe(0);
    expectRel(comovingDistMpc(z, c), (hubbleDistMpc(c) * z) / (1 + z), CLOSED_FORM, 'D_C');
    expectRel(ageGyr(z, c), hubbleTimeGyr(c) / (2 * (1 + z) ** 2), CLOSED_FORM, 'age');
  });
});

describe('Mattig relation for Ode0 = 0, open and closed', () => {
  // Mattig (1958), from memory: for Lambda = 0 and any Om0,
  // D_L = (2 D_H / Om0^2) [Om0 z + (Om0 - 2)(sqrt(1 + Om0 z) - 1)]. Om0 = 3 is closed (Ok0 = -2)
  // and its past light cone passes the antipode (sqrt|Ok0| D_C / D_H > pi/2) near z = 22.
  it.each([0.3, 3])('Om0 = %s', (om) => {
    const c = makeCosmology({ H0: 70, Om0: om, Ode0: 0 });
    for (const z of [...ZS, 50, 200]) {
      const want = ((2 * hubbleDistMpc(c)) / (om * om)) * (om * z + (om - 2) * (Math.sqrt(1 + om * z) - 1));
      expectRel(lumDistMpc(z, c), want, CLOSED_FORM, `D_L(${z})`);
    }
  });
  it('the comoving volume keeps growing past the antipode and equals the integral of eq. 28', () => {
    const c = makeCosmology({ H0: 70, Om0: 3, Ode0: 0 });
    const psi = (z: number) => (Math.sqrt(2) * comovingDistMpc(z, c)) / hubbleDistMpc(c);
    expect(psi(10)).toBeLessThan(Math.PI / 2);
    expect(psi(50)).toBeGreaterThan(Math.PI / 2);
    let prev = 0;
    for (const z of [0.5, 1, 2, 5, 10, 50, 200]) {
      const v = comovingVolumeMpc3(z, c);
      expect(v).toBeGreaterThan(prev);
      prev = v;
      const integral = 4 * Math.PI * integrateGaussKronrod((x) => differentialComovingVolumeMpc3Sr(x, c), 0, z, 1e-12);
      expectRel(v, integral, 1e-10, `V_C at z = ${z}`);
    }
  });
});

describe('identities in flat, open and closed models', () => {
  const models: [string, Cosmology][] = [
    ['flat', makeCosmology({ H0: 70, Om0: 0.3 })],
    ['open', makeCosmology({ H0: 70, Om0: 0.3, Ode0: 0.6 })],
    ['closed', makeCosmology({ H0: 70, Om0: 0.3, Ode0: 0.8 })],
    ['radiation', makeCosmology({ H0: 67.66, Om0: 0.3111, Or0: 9.14e-5 })],
  ];
  it.each(models)('%s: D_L = (1+z)^2 D_A (Hogg eq. 21); age(0) = age(z) + t_L(z); DM from D_L (eq. 24)', (_, c) => {
    for (const z of ZS) {
      expectRel(lumDistMpc(z, c), (1 + z) ** 2 * angDiamDistMpc(z, c), 1e-14, 'D_L vs D_A');
      expectRel(ageGyr(0, c), ageGyr(z, c) + lookbackTimeGyr(z, c), 1e-11, 'age sum');
      expectRel(distMod(z, c), 5 * Math.log10(lumDistMpc(z, c) * 1e5), 1e-14, 'DM');
    }
  });
  it.each(models)('%s: V_C is the integral of dV_C/dz over z (Hogg eq. 29 vs eq. 28)', (_, c) => {
    for (const z of [0.05, 1, 4]) {
      const integral = 4 * Math.PI * integrateGaussKronrod((x) => differentialComovingVolumeMpc3Sr(x, c), 0, z, 1e-12);
      expectRel(comovingVolumeMpc3(z, c), integral, 1e-10, `V_C at z = ${z}`);
    }
  });
  it.each(models)('%s: zAtComovingDist and zAtLumDist invert D_C and D_L', (_, c) => {
    for (const z of [1e-4, 0.03, 0.7, 2.5, 8]) {
      expectRel(zAtComovingDist(comovingDistMpc(z, c), c), z, 1e-11, 'z from D_C');
      expectRel(zAtLumDist(lumDistMpc(z, c), c), z, 1e-11, 'z from D_L');
    }
    expect(zAtLumDist(0, c)).toBe(0);
    expect(problemOf(() => zAtLumDist(-1, c)).field).toBe('dMpc');
    // The comoving horizon of these models is under 4 D_H; no redshift reaches 10 D_H.
    expect(problemOf(() => zAtComovingDist(10 * hubbleDistMpc(c), c)).field).toBe('dMpc');
  });
});

describe('comovingDistTable', () => {
  it('matches the Einstein-de Sitter closed form at every entry', () => {
    const c = makeCosmology({ H0: 70, Om0: 1 });
    const { z, dc } = comovingDistTable(c, 6, 61);
    expect(z.length).toBe(61);
    expect(z[0]).toBe(0);
    expect(z[60]).toBe(6);
    expect(dc[0]).toBe(0);
    for (let i = 1; i < 61; i++) {
      expectRel(dc[i], 2 * hubbleDistMpc(c) * (1 - 1 / Math.sqrt(1 + z[i])), 1e-11, `entry ${i}`);
    }
    expect(problemOf(() => comovingDistTable(c, 6, 1)).field).toBe('n');
  });
});

describe('makeDistanceInterpolator', () => {
  const models: [string, Cosmology, number][] = [
    ['flat', makeCosmology({ H0: 70, Om0: 0.3 }), 12],
    ['open', makeCosmology({ H0: 70, Om0: 0.3, Ode0: 0.6 }), 8],
    ['closed', makeCosmology({ H0: 70, Om0: 0.3, Ode0: 0.8 }), 8],
    ['radiation', makeCosmology({ H0: 67.66, Om0: 0.3111, Or0: 9.14e-5 }), 20],
  ];
  it.each(models)('%s: within 1e-7 of direct integration for 0 < z <= zMax', (_, c, zMax) => {
    const fast = makeDistanceInterpolator(c, zMax);
    // Deterministic, log-spaced sample from 1e-6 up to zMax (plus zMax itself).
    const zs = [zMax];
    for (let i = 0; i < 300; i++) zs.push(1e-6 * (zMax / 1e-6) ** ((i + 0.37) / 300));
    for (const z of zs) {
      expectRel(fast.comovingDistMpc(z), comovingDistMpc(z, c), 1e-7, `D_C at ${z}`);
      expectRel(fast.transverseComovingDistMpc(z), transverseComovingDistMpc(z, c), 1e-7, `D_M at ${z}`);
      expectRel(fast.lumDistMpc(z), lumDistMpc(z, c), 1e-7, `D_L at ${z}`);
      expectRel(fast.comovingVolumeMpc3(z, 0.5), comovingVolumeMpc3(z, c, 0.5), 1e-7, `V_C at ${z}`);
      expect(Math.abs(fast.distMod(z) - distMod(z, c))).toBeLessThan(1e-7);
      expectRel(fast.zAtLumDist(lumDistMpc(z, c)), z, 1e-7, `z from D_L at ${z}`);
    }
    expect(fast.comovingDistMpc(0)).toBe(0);
    expect(fast.zAtLumDist(0)).toBe(0);
    expectRel(fast.lumDistMaxMpc, lumDistMpc(zMax, c), 1e-9, 'lumDistMaxMpc');
    expect(problemOf(() => fast.comovingDistMpc(zMax * 1.01)).field).toBe('z');
    expect(problemOf(() => fast.zAtLumDist(fast.lumDistMaxMpc * 1.01)).field).toBe('dMpc');
  });
});

// ---- against astropy.cosmology (the community reference implementation) ---------------------

interface AstropyCase {
  name: string;
  H0: number;
  Om0: number;
  Ode0?: number; // absent: FlatLambdaCDM
  Tcmb0?: number; // with Neff = 3.046 and massless neutrinos when given
}
interface AstropyResult {
  Ode0: number;
  Or0: number;
  dc: number[];
  dm: number[];
  dl: number[];
  da: number[];
  distmod: number[];
  lookback: number[];
  age: number[];
  vol: number[];
  dvol: number[];
  zAtDl: number[];
}

const ASTROPY_CODE = `
import astropy, astropy.units as u
from astropy.cosmology import FlatLambdaCDM, LambdaCDM, z_at_value
inp = json.load(sys.stdin)
zs = inp['zs']
out = []
for case in inp['cases']:
    kw = dict(H0=case['H0'], Om0=case['Om0'], Tcmb0=case.get('Tcmb0', 0))
    if 'Tcmb0' in case:
        kw.update(Neff=3.046, m_nu=0 * u.eV)
    c = FlatLambdaCDM(**kw) if 'Ode0' not in case else LambdaCDM(Ode0=case['Ode0'], **kw)
    f = lambda q, unit: [float(v) for v in q(zs).to_value(unit)]
    out.append(dict(
        Ode0=float(c.Ode0), Or0=float(c.Ogamma0 + c.Onu0),
        dc=f(c.comoving_distance, u.Mpc), dm=f(c.comoving_transverse_distance, u.Mpc),
        dl=f(c.luminosity_distance, u.Mpc), da=f(c.angular_diameter_distance, u.Mpc),
        distmod=f(c.distmod, u.mag), lookback=f(c.lookback_time, u.Gyr), age=f(c.age, u.Gyr),
        vol=f(c.comoving_volume, u.Mpc**3), dvol=f(c.differential_comoving_volume, u.Mpc**3 / u.sr),
        zAtDl=[float(z_at_value(c.luminosity_distance, d * u.Mpc, zmax=20, ztol=1e-12)) for d in inp['dls']],
    ))
print(json.dumps(dict(version=astropy.__version__, results=out)))
`;

describeWithPython('agreement with astropy.cosmology', ['astropy', 'scipy'], () => {
  // Reference values are computed live by astropy (Debian python3-astropy) at these parameters.
  const cases: AstropyCase[] = [
    { name: 'FlatLambdaCDM(H0=70, Om0=0.3, Tcmb0=0)', H0: 70, Om0: 0.3 },
    { name: 'LambdaCDM(H0=70, Om0=0.3, Ode0=0.6, Tcmb0=0), open', H0: 70, Om0: 0.3, Ode0: 0.6 },
    { name: 'LambdaCDM(H0=70, Om0=0.3, Ode0=0.8, Tcmb0=0), closed', H0: 70, Om0: 0.3, Ode0: 0.8 },
    { name: 'FlatLambdaCDM(H0=67.66, Om0=0.3111, Tcmb0=2.7255, Neff=3.046, m_nu=0), radiation', H0: 67.66, Om0: 0.3111, Tcmb0: 2.7255 },
  ];
  const dls = [50, 1000, 7000, 40000];
  let results: AstropyResult[] = [];
  beforeAll(() => {
    const r = runPython(ASTROPY_CODE, { cases, zs: ZS, dls }) as { version: string; results: AstropyResult[] };
    results = r.results;
  });
  // The requirement is 1e-6; observed agreement is about 1e-11 (astropy uses elliptic integrals for
  // flat models without radiation and scipy quad otherwise), so 1e-9 still leaves a wide margin.
  const TOL = 1e-9;
  it.each(cases.map((c, i) => [c.name, i] as const))('%s', (_, i) => {
    const ref = results[i];
    const spec = cases[i];
    const c = makeCosmology({ H0: spec.H0, Om0: spec.Om0, Ode0: ref.Ode0, Or0: spec.Tcmb0 === undefined ? undefined : ref.Or0 });
    ZS.forEach((z, k) => {
      expectRel(comovingDistMpc(z, c), ref.dc[k], TOL, `D_C(${z})`);
      expectRel(transverseComovingDistMpc(z, c), ref.dm[k], TOL, `D_M(${z})`);
      expectRel(lumDistMpc(z, c), ref.dl[k], TOL, `D_L(${z})`);
      expectRel(angDiamDistMpc(z, c), ref.da[k], TOL, `D_A(${z})`);
      expect(Math.abs(distMod(z, c) - ref.distmod[k])).toBeLessThan(1e-9);
      expectRel(lookbackTimeGyr(z, c), ref.lookback[k], TOL, `t_L(${z})`);
      expectRel(ageGyr(z, c), ref.age[k], TOL, `age(${z})`);
      expectRel(comovingVolumeMpc3(z, c), ref.vol[k], TOL, `V_C(${z})`);
      expectRel(differentialComovingVolumeMpc3Sr(z, c), ref.dvol[k], TOL, `dV_C(${z})`);
    });
    dls.forEach((d, k) => {
      // z_at_value is asked for ztol = 1e-12 (absolute in z).
      expectRel(zAtLumDist(d, c), ref.zAtDl[k], 1e-8, `z at D_L = ${d}`);
    });
  });
});

describe('published value: age of the universe, Planck 2018', () => {
  // Planck Collaboration 2020, A&A 641, A6 ("Planck 2018 results. VI"), Table 2, column
  // TT,TE,EE+lowE+lensing+BAO: H0 = 67.66, Omega_m = 0.3111, age = 13.787 +- 0.020 Gyr (from memory).
  // Planck's own number uses one 0.06 eV neutrino; here all Neff = 3.046 species are massless and
  // Or0 = Ogamma0 + Onu0 = 9.1390e-5 for Tcmb0 = 2.7255 K (astropy's value for these parameters).
  const c = makeCosmology({ H0: 67.66, Om0: 0.3111, Or0: 9.138961150119362e-5 });
  it('is within the published 1-sigma of 13.787 Gyr', () => {
    expect(Math.abs(ageGyr(0, c) - 13.787)).toBeLessThan(0.02);
  });
  describeWithPython('and agrees with astropy for the same parameters', ['astropy', 'scipy'], () => {
    it('to 1e-9 relative', () => {
      const ref = runPython(
        `from astropy.cosmology import FlatLambdaCDM
import astropy.units as u
c = FlatLambdaCDM(H0=67.66, Om0=0.3111, Tcmb0=2.7255, Neff=3.046, m_nu=0 * u.eV)
print(json.dumps([float(c.age(0).to_value(u.Gyr)), float(c.Ogamma0 + c.Onu0)]))`,
      ) as [number, number];
      expectRel(ref[1], c.Or0 ?? 0, 1e-12, 'Or0');
      expectRel(ageGyr(0, c), ref[0], 1e-9, 'age');
    });
  });
});
