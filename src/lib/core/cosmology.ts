/**
 * Lambda-CDM distances, times and volumes after Hogg (1999), "Distance measures in cosmology",
 * arXiv:astro-ph/9905116 (equation numbers below are that paper's). Flat, open and closed
 * geometries, with an optional radiation term. Pure numeric code: no I/O, runs in the browser.
 *
 * Units: H0 in km/s/Mpc; distances in Mpc; times in Gyr (Julian years of 365.25 d);
 * volumes in Mpc^3; solid angles in steradians.
 */
import { PosterityError, problem } from './problems.ts';

/** Speed of light in vacuum, km/s (exact, SI definition of the metre). */
export const C_KM_S = 299792.458;

/** One megaparsec in km: 10^6 x (648000 / pi) au, with the IAU 2012 au = 149597870.7 km (both exact). */
const MPC_KM = 1e6 * (648000 / Math.PI) * 149597870.7;
/** One gigayear in seconds (Julian year, 365.25 d of 86400 s). */
const GYR_S = 1e9 * 365.25 * 86400;

/**
 * Density parameters today, relative to the critical density (Hogg section 2), and the Hubble
 * constant H0 in km/s/Mpc. The curvature Ok0 = 1 - Om0 - Ode0 - Or0 is implied.
 */
export interface Cosmology {
  readonly H0: number;
  readonly Om0: number;
  readonly Ode0: number;
  readonly Or0?: number;
}

function fail(field: string, message: string, expected: string, got: unknown): never {
  throw new PosterityError(problem({ message, field, expected, got: String(got) }));
}

/**
 * A validated, frozen cosmology. `Ode0` defaults to the flat value 1 - Om0 - Or0; `Or0`
 * (radiation, scaling as (1+z)^4) defaults to absent, i.e. zero. Throws `PosterityError` with
 * field `cosmology.H0` (etc.) for H0 <= 0, a negative Om0 or Or0, a non-finite value, or a
 * universe without a Big Bang (E(z)^2 <= 0 somewhere at z >= 0, a "bounce" model).
 */
export function makeCosmology(p: { H0: number; Om0: number; Ode0?: number; Or0?: number }): Cosmology {
  const { H0, Om0, Ode0, Or0 } = p;
  if (!(Number.isFinite(H0) && H0 > 0)) fail('cosmology.H0', 'invalid Hubble constant', 'a finite number > 0 (km/s/Mpc)', H0);
  if (!(Number.isFinite(Om0) && Om0 >= 0)) fail('cosmology.Om0', 'invalid matter density', 'a finite number >= 0', Om0);
  if (Or0 !== undefined && !(Number.isFinite(Or0) && Or0 >= 0)) {
    fail('cosmology.Or0', 'invalid radiation density', 'a finite number >= 0', Or0);
  }
  if (Ode0 !== undefined && !Number.isFinite(Ode0)) fail('cosmology.Ode0', 'invalid dark-energy density', 'a finite number', Ode0);
  const or = Or0 ?? 0;
  const ode = Ode0 ?? 1 - Om0 - or;
  const c: Cosmology = Or0 === undefined ? { H0, Om0, Ode0: ode } : { H0, Om0, Ode0: ode, Or0 };
  // E^2 a^4 = Or0 + Om0 a + Ok0 a^2 + Ode0 a^4 must stay positive for 0 < a <= 1.
  const ok = curvatureOk0(c);
  for (let i = 1; i <= 4096; i++) {
    const a = i / 4096;
    const p4 = or + a * (Om0 + a * (ok + a * a * ode));
    if (!(p4 > 0)) {
      fail('cosmology.Ode0', 'this cosmology has no Big Bang (E(z)^2 <= 0 at some z >= 0)', 'E(z)^2 > 0 for all z >= 0', `Ode0 = ${ode} with Om0 = ${Om0}`);
    }
  }
  return Object.freeze(c);
}

/** Curvature density today, Ok0 = 1 - Om0 - Ode0 - Or0 (Hogg section 2, with radiation added to the sum). */
export function curvatureOk0(c: Cosmology): number {
  return 1 - c.Om0 - c.Ode0 - (c.Or0 ?? 0);
}

function checkZ(z: number, field = 'z'): void {
  if (!(z >= 0 && z < Infinity)) fail(field, 'invalid redshift', 'a finite number >= 0', z);
}

// ---- quadrature ------------------------------------------------------------------------------

// 15-point Kronrod nodes (positive half, last is 0) and weights, with the 7-point Gauss weights
// for the odd-indexed nodes (Piessens et al. 1983, QUADPACK, routine QK15).
const XGK = [
  0.991455371120812639206854697526329, 0.949107912342758524526189684047851, 0.864864423359769072789712788640926,
  0.741531185599394439863864773280788, 0.586087235467691130294144845693013, 0.405845151377397166906606412076961,
  0.207784955007898467600689403773245, 0,
];
const WGK = [
  0.02293532201052922496373200805897, 0.063092092629978553290700663189204, 0.104790010322250183839876322541518,
  0.140653259715525918745189590510238, 0.16900472663926790282658342659855, 0.190350578064785409913256402421014,
  0.204432940075298892414161999234649, 0.209482141084727828012999174891714,
];
const WG = [0.129484966168869693270611432679082, 0.27970539148927666790146777142378, 0.381830050505118944950369775488975, 0.417959183673469387755102040816327];

/** One Gauss-Kronrod 7/15 panel: [Kronrod estimate, |Kronrod - Gauss|]. */
function gk15(f: (x: number) => number, a: number, b: number): [number, number] {
  const half = 0.5 * (b - a);
  const mid = 0.5 * (a + b);
  const fc = f(mid);
  let k = fc * WGK[7];
  let g = fc * WG[3];
  for (let j = 0; j < 7; j++) {
    const dx = half * XGK[j];
    const s = f(mid - dx) + f(mid + dx);
    k += WGK[j] * s;
    if (j % 2 === 1) g += WG[(j - 1) >> 1] * s;
  }
  return [k * half, Math.abs((k - g) * half)];
}

/**
 * Integral of a smooth `f` over [a, b] by globally adaptive Gauss-Kronrod 7/15 quadrature
 * (Piessens et al. 1983, QUADPACK QAG): the panel with the largest error estimate |K15 - G7|
 * is halved until the summed estimate is below max(absTol, relTol |I|). The estimate is
 * conservative: for smooth integrands the K15 result is far more accurate than |K15 - G7|.
 */
export function integrateGaussKronrod(f: (x: number) => number, a: number, b: number, relTol = 1e-12, absTol = 0): number {
  if (a === b) return 0;
  const lo: number[] = [a];
  const hi: number[] = [b];
  const [r0, e0] = gk15(f, a, b);
  const val: number[] = [r0];
  const err: number[] = [e0];
  let total = r0;
  let totalErr = e0;
  for (let iter = 0; iter < 2000; iter++) {
    if (!Number.isFinite(total)) break;
    if (totalErr <= Math.max(absTol, relTol * Math.abs(total), 1e-15 * Math.abs(total))) break;
    let worst = 0;
    for (let i = 1; i < err.length; i++) if (err[i] > err[worst]) worst = i;
    const l = lo[worst];
    const h = hi[worst];
    const m = 0.5 * (l + h);
    if (!(m > l && m < h)) break; // panel cannot be split further in floating point
    const [r1, e1] = gk15(f, l, m);
    const [r2, e2] = gk15(f, m, h);
    total += r1 + r2 - val[worst];
    totalErr += e1 + e2 - err[worst];
    hi[worst] = m;
    val[worst] = r1;
    err[worst] = e1;
    lo.push(m);
    hi.push(h);
    val.push(r2);
    err.push(e2);
  }
  // Re-sum to remove drift from the running updates.
  let sum = 0;
  for (let i = 0; i < val.length; i++) sum += val[i];
  return sum;
}

function finiteOrFail(v: number, what: string): number {
  if (!Number.isFinite(v)) fail('cosmology', `${what} is not finite for this cosmology`, 'E(z)^2 > 0 over the integration range', v);
  return v;
}

// ---- expansion rate ------------------------------------------------------------------------

/**
 * Dimensionless Hubble parameter E(z) = H(z)/H0 =
 * sqrt(Or0 (1+z)^4 + Om0 (1+z)^3 + Ok0 (1+z)^2 + Ode0) (Hogg eq. 14, plus radiation).
 */
export function efunc(z: number, c: Cosmology): number {
  const zp = 1 + z;
  const or = c.Or0 ?? 0;
  const ok = curvatureOk0(c);
  return Math.sqrt(zp * zp * (zp * (zp * or + c.Om0) + ok) + c.Ode0);
}

/** 1/E(z) with precomputed densities, for the integrands. */
function invE(zp: number, or: number, om: number, ok: number, ode: number): number {
  return 1 / Math.sqrt(zp * zp * (zp * (zp * or + om) + ok) + ode);
}

/** Hubble distance D_H = c / H0 in Mpc (Hogg eq. 4). */
export function hubbleDistMpc(c: Cosmology): number {
  return C_KM_S / c.H0;
}

/** Hubble time t_H = 1 / H0 in Gyr (Hogg eq. 3). */
export function hubbleTimeGyr(c: Cosmology): number {
  return MPC_KM / c.H0 / GYR_S;
}

// ---- distances -----------------------------------------------------------------------------

/** Integral of 1/E from z1 to z2 (dimensionless), z2 >= z1 >= 0. */
function dcIntegral(z1: number, z2: number, c: Cosmology): number {
  const or = c.Or0 ?? 0;
  const om = c.Om0;
  const ode = c.Ode0;
  const ok = curvatureOk0(c);
  return finiteOrFail(
    integrateGaussKronrod((z) => invE(1 + z, or, om, ok, ode), z1, z2, 1e-12),
    'the comoving distance',
  );
}

/** Line-of-sight comoving distance D_C = D_H integral_0^z dz'/E(z') in Mpc (Hogg eq. 15). */
export function comovingDistMpc(z: number, c: Cosmology): number {
  checkZ(z);
  return hubbleDistMpc(c) * dcIntegral(0, z, c);
}

/**
 * Transverse comoving distance D_M from the line-of-sight comoving distance D_C (Hogg eq. 16):
 * D_H / sqrt(Ok0) sinh(sqrt(Ok0) D_C / D_H) for Ok0 > 0, D_C for Ok0 = 0, and
 * D_H / sqrt(|Ok0|) sin(sqrt(|Ok0|) D_C / D_H) for Ok0 < 0.
 */
export function transverseFromComovingMpc(dcMpc: number, c: Cosmology): number {
  const ok = curvatureOk0(c);
  if (ok === 0) return dcMpc;
  const dh = hubbleDistMpc(c);
  const s = Math.sqrt(Math.abs(ok));
  return ok > 0 ? (dh / s) * Math.sinh((s * dcMpc) / dh) : (dh / s) * Math.sin((s * dcMpc) / dh);
}

/** Transverse comoving distance D_M in Mpc (Hogg eq. 16). */
export function transverseComovingDistMpc(z: number, c: Cosmology): number {
  return transverseFromComovingMpc(comovingDistMpc(z, c), c);
}

/** Angular-diameter distance D_A = D_M / (1+z) in Mpc (Hogg eq. 18). */
export function angDiamDistMpc(z: number, c: Cosmology): number {
  return transverseComovingDistMpc(z, c) / (1 + z);
}

/** Luminosity distance D_L = (1+z) D_M in Mpc (Hogg eq. 21). */
export function lumDistMpc(z: number, c: Cosmology): number {
  return (1 + z) * transverseComovingDistMpc(z, c);
}

/** Distance modulus DM = 5 log10(D_L / 10 pc) = 5 log10(D_L / Mpc) + 25 in mag (Hogg eq. 24); -Infinity at z = 0. */
export function distMod(z: number, c: Cosmology): number {
  return 5 * Math.log10(lumDistMpc(z, c)) + 25;
}

// ---- times ---------------------------------------------------------------------------------

/** Lookback time t_L = t_H integral_0^z dz' / ((1+z') E(z')) in Gyr (Hogg eq. 30). */
export function lookbackTimeGyr(z: number, c: Cosmology): number {
  checkZ(z);
  const or = c.Or0 ?? 0;
  const om = c.Om0;
  const ode = c.Ode0;
  const ok = curvatureOk0(c);
  const f = (x: number) => invE(1 + x, or, om, ok, ode) / (1 + x);
  return hubbleTimeGyr(c) * finiteOrFail(integrateGaussKronrod(f, 0, z, 1e-12), 'the lookback time');
}

/**
 * Age of the universe at redshift z in Gyr: t_H integral_z^inf dz' / ((1+z') E(z')), Hogg eq. 30
 * with the limits z and infinity. With a = 1/(1+z') and then a = u^2 the integral is
 * integral_0^{1/sqrt(1+z)} 2 u^3 du / sqrt(Or0 + Om0 u^2 + Ok0 u^4 + Ode0 u^8), which is smooth
 * on a finite range. Infinite for a model with no matter and no radiation but Ok0 = 0 (de Sitter).
 */
export function ageGyr(z: number, c: Cosmology): number {
  checkZ(z);
  const or = c.Or0 ?? 0;
  const om = c.Om0;
  const ode = c.Ode0;
  const ok = curvatureOk0(c);
  if (or === 0 && om === 0 && ok === 0) return Infinity;
  const f = (u: number) => {
    const u2 = u * u;
    return (2 * u2 * u) / Math.sqrt(or + u2 * (om + u2 * (ok + u2 * u2 * ode)));
  };
  return hubbleTimeGyr(c) * finiteOrFail(integrateGaussKronrod(f, 0, 1 / Math.sqrt(1 + z), 1e-12), 'the age');
}

// ---- volumes -------------------------------------------------------------------------------

/** Differential comoving volume dV_C / dz / dOmega = D_H D_M^2 / E(z) in Mpc^3/sr (Hogg eq. 28, D_M = (1+z) D_A). */
export function differentialComovingVolumeMpc3Sr(z: number, c: Cosmology): number {
  const dm = transverseComovingDistMpc(z, c);
  return (hubbleDistMpc(c) * dm * dm) / efunc(z, c);
}

/**
 * Comoving volume within comoving distance D_C over `solidAngleSr`, in Mpc^3: Hogg eq. 29 (the
 * integral of eq. 28) written in D_C. With R = D_H/sqrt|Ok0| and psi = D_C/R it is
 * Omega R^3 (sinh 2psi - 2psi)/4 (open) or Omega R^3 (2psi - sin 2psi)/4 (closed), which equals
 * eq. 29 while D_M increases and stays right past the antipode of a closed universe. Near
 * flatness the series 2 Omega D_C^3 sum_n q^n/(2n+3)!, q = 4 Ok0 (D_C/D_H)^2, avoids cancellation.
 */
export function comovingVolumeFromComovingMpc3(dcMpc: number, c: Cosmology, solidAngleSr = 4 * Math.PI): number {
  const ok = curvatureOk0(c);
  const x = dcMpc / hubbleDistMpc(c);
  const q = 4 * ok * x * x;
  if (Math.abs(q) <= 1) {
    let term = 1 / 6; // q^0 / 3!
    let sum = term;
    for (let n = 1; n < 30; n++) {
      term *= q / ((2 * n + 2) * (2 * n + 3));
      sum += term;
      if (Math.abs(term) < 1e-17 * Math.abs(sum)) break;
    }
    return 2 * solidAngleSr * dcMpc * dcMpc * dcMpc * sum;
  }
  const r = hubbleDistMpc(c) / Math.sqrt(Math.abs(ok));
  const psi2 = (2 * dcMpc) / r;
  const bracket = ok > 0 ? Math.sinh(psi2) - psi2 : psi2 - Math.sin(psi2);
  return (solidAngleSr * r * r * r * bracket) / 4;
}

/** Total comoving volume within redshift z over `solidAngleSr` (default the whole sky), Mpc^3 (Hogg eq. 29). */
export function comovingVolumeMpc3(z: number, c: Cosmology, solidAngleSr = 4 * Math.PI): number {
  return comovingVolumeFromComovingMpc3(comovingDistMpc(z, c), c, solidAngleSr);
}

// ---- inverses ------------------------------------------------------------------------------

/** d D_M / d D_C: cosh, 1 or cos of sqrt|Ok0| D_C / D_H (derivative of Hogg eq. 16). */
function dDmdDc(dcMpc: number, c: Cosmology): number {
  const ok = curvatureOk0(c);
  if (ok === 0) return 1;
  const s = Math.sqrt(Math.abs(ok));
  const y = (s * dcMpc) / hubbleDistMpc(c);
  return ok > 0 ? Math.cosh(y) : Math.cos(y);
}

const Z_SEARCH_MAX = 1e4;

/**
 * Redshift where `g(z)` (increasing, g(0) = 0) reaches `target`: the bracket [0, z] is widened
 * by doubling until it holds the target, then safeguarded Newton steps (bisection when a step
 * leaves the bracket) converge to 1e-14 relative in z. `step(z)` returns [g(z), g'(z)].
 */
function solveZ(target: number, step: (z: number) => [number, number], field: string, what: string): number {
  if (!(target >= 0 && target < Infinity)) fail(field, `invalid ${what}`, 'a finite number >= 0 (Mpc)', target);
  if (target === 0) return 0;
  let lo = 0;
  let hi = 1;
  let [ghi] = step(hi);
  while (ghi < target) {
    lo = hi;
    hi *= 2;
    if (hi > Z_SEARCH_MAX) fail(field, `${what} is not reached at any redshift below ${Z_SEARCH_MAX}`, `a ${what} below the horizon`, target);
    [ghi] = step(hi);
  }
  let z = 0.5 * (lo + hi);
  for (let iter = 0; iter < 200; iter++) {
    const [g, dg] = step(z);
    if (g < target) lo = z;
    else hi = z;
    let next = z - (g - target) / dg;
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (Math.abs(next - z) <= 1e-14 * next || hi - lo <= 1e-15 * hi) return next;
    z = next;
  }
  return z;
}

/** Redshift at which the line-of-sight comoving distance (Hogg eq. 15) equals `dMpc`. */
export function zAtComovingDist(dMpc: number, c: Cosmology): number {
  const dh = hubbleDistMpc(c);
  return solveZ(dMpc, (z) => [comovingDistMpc(z, c), dh / efunc(z, c)], 'dMpc', 'comoving distance');
}

/**
 * Redshift at which the luminosity distance (Hogg eq. 21) equals `dMpc`, the lowest such
 * redshift when D_L is monotonic (always for Ok0 >= 0). Used for the 1/Vmax redshift limit.
 */
export function zAtLumDist(dMpc: number, c: Cosmology): number {
  const dh = hubbleDistMpc(c);
  return solveZ(
    dMpc,
    (z) => {
      const dc = comovingDistMpc(z, c);
      const dm = transverseFromComovingMpc(dc, c);
      return [(1 + z) * dm, dm + ((1 + z) * dDmdDc(dc, c) * dh) / efunc(z, c)];
    },
    'dMpc',
    'luminosity distance',
  );
}

// ---- tables and the fast path --------------------------------------------------------------

/**
 * Comoving distance (Hogg eq. 15) on `n` >= 2 redshifts evenly spaced over [0, zMax], in Mpc,
 * integrated panel by panel and summed, so each entry is accurate to about 1e-12 relative.
 */
export function comovingDistTable(c: Cosmology, zMax: number, n: number): { z: Float64Array; dc: Float64Array } {
  checkZ(zMax, 'zMax');
  if (!(Number.isInteger(n) && n >= 2)) fail('n', 'invalid table size', 'an integer >= 2', n);
  const z = new Float64Array(n);
  const dc = new Float64Array(n);
  const dh = hubbleDistMpc(c);
  let acc = 0;
  for (let i = 1; i < n; i++) {
    z[i] = i === n - 1 ? zMax : (zMax * i) / (n - 1);
    acc += dcIntegral(z[i - 1], z[i], c);
    dc[i] = dh * acc;
  }
  return { z, dc };
}

/** Distances by table lookup; see `makeDistanceInterpolator`. */
export interface DistanceInterpolator {
  readonly zMax: number;
  /** D_L at zMax, the largest distance `zAtLumDist` accepts. */
  readonly lumDistMaxMpc: number;
  comovingDistMpc(z: number): number;
  transverseComovingDistMpc(z: number): number;
  lumDistMpc(z: number): number;
  distMod(z: number): number;
  comovingVolumeMpc3(z: number, solidAngleSr?: number): number;
  zAtLumDist(dMpc: number): number;
}

/**
 * Fast distances for many objects over 0 <= z <= zMax. D_C (Hogg eq. 15) is tabulated against
 * u = ln(1+z) with its exact derivative dD_C/du = D_H (1+z) / E(z) and read by cubic Hermite
 * interpolation; D_M, D_L, DM and V_C follow from D_C exactly (eqs. 16, 21, 24, 29). The grid is
 * refined until the interpolant agrees with direct integration to 1e-9 relative at every panel
 * midpoint, which keeps every returned quantity within 1e-7 relative (V_C, going as D_C^3, has
 * three times the D_C error). Inputs outside [0, zMax] throw `PosterityError`.
 */
export function makeDistanceInterpolator(c: Cosmology, zMax: number): DistanceInterpolator {
  checkZ(zMax, 'zMax');
  if (!(zMax > 0)) fail('zMax', 'invalid maximum redshift', 'a number > 0', zMax);
  const dh = hubbleDistMpc(c);
  const uMax = Math.log1p(zMax);
  const slope = (u: number) => {
    const zp = Math.exp(u);
    return (dh * zp) / efunc(zp - 1, c);
  };

  let n = 32;
  let us: Float64Array;
  let ds: Float64Array;
  let ss: Float64Array;
  for (;;) {
    us = new Float64Array(n + 1);
    ds = new Float64Array(n + 1);
    ss = new Float64Array(n + 1);
    const h = uMax / n;
    ss[0] = slope(0);
    let ok = true;
    for (let i = 1; i <= n; i++) {
      us[i] = i === n ? uMax : i * h;
      ds[i] = ds[i - 1] + dh * dcIntegral(Math.expm1(us[i - 1]), Math.expm1(us[i]), c);
      ss[i] = slope(us[i]);
    }
    for (let i = 0; i < n && ok; i++) {
      const um = 0.5 * (us[i] + us[i + 1]);
      const exact = ds[i] + dh * dcIntegral(Math.expm1(us[i]), Math.expm1(um), c);
      const approx = hermite(us, ds, ss, i, um);
      if (Math.abs(approx - exact) > 1e-9 * exact) ok = false;
    }
    if (ok || n >= 1 << 16) break;
    n *= 2;
  }
  const uGrid = us;
  const dGrid = ds;
  const sGrid = ss;
  const h = uMax / n;

  const panel = (u: number) => Math.min(n - 1, Math.floor(u / h));
  const dcOf = (z: number, field: string) => {
    if (!(z >= 0 && z <= zMax)) fail(field, 'redshift outside the interpolation table', `a number in [0, ${zMax}]`, z);
    const u = Math.log1p(z);
    return hermite(uGrid, dGrid, sGrid, panel(u), u);
  };

  // D_L on the grid, for bracketing the inverse.
  const lGrid = new Float64Array(n + 1);
  let monotonic = true;
  for (let i = 0; i <= n; i++) {
    lGrid[i] = Math.exp(uGrid[i]) * transverseFromComovingMpc(dGrid[i], c);
    if (i > 0 && !(lGrid[i] > lGrid[i - 1])) monotonic = false;
  }
  const lumDistMaxMpc = lGrid[n];

  const zAtLum = (dMpc: number) => {
    // Up to 1e-9 beyond the end is rounding (e.g. a directly integrated D_L(zMax)); it maps to zMax.
    if (!(dMpc >= 0 && dMpc <= lumDistMaxMpc * (1 + 1e-9))) {
      fail('dMpc', 'luminosity distance outside the interpolation table', `a number in [0, ${lumDistMaxMpc}] (Mpc)`, dMpc);
    }
    if (!monotonic) fail('cosmology', 'the luminosity distance is not monotonic up to zMax in this closed universe', 'a monotonic D_L(z)', 'a turning point');
    if (dMpc === 0) return 0;
    if (dMpc >= lumDistMaxMpc) return zMax;
    let a = 0;
    let b = n;
    while (b - a > 1) {
      const m = (a + b) >> 1;
      if (lGrid[m] < dMpc) a = m;
      else b = m;
    }
    // Newton in u inside panel a, on D_L(u) = e^u D_M(D_C(u)).
    let lo = uGrid[a];
    let hi = uGrid[a + 1];
    let u = lo + ((dMpc - lGrid[a]) / (lGrid[a + 1] - lGrid[a])) * (hi - lo);
    for (let iter = 0; iter < 100; iter++) {
      const dc = hermite(uGrid, dGrid, sGrid, a, u);
      const dcp = hermiteSlope(uGrid, dGrid, sGrid, a, u);
      const eu = Math.exp(u);
      const dm = transverseFromComovingMpc(dc, c);
      const g = eu * dm - dMpc;
      if (g < 0) lo = u;
      else hi = u;
      let next = u - g / (eu * (dm + dDmdDc(dc, c) * dcp));
      if (!(next >= lo && next <= hi)) next = 0.5 * (lo + hi);
      if (Math.abs(next - u) <= 1e-15 * Math.max(next, 1e-300) || hi - lo <= 1e-16 * hi) {
        u = next;
        break;
      }
      u = next;
    }
    return Math.expm1(u);
  };

  return Object.freeze({
    zMax,
    lumDistMaxMpc,
    comovingDistMpc: (z: number) => dcOf(z, 'z'),
    transverseComovingDistMpc: (z: number) => transverseFromComovingMpc(dcOf(z, 'z'), c),
    lumDistMpc: (z: number) => (1 + z) * transverseFromComovingMpc(dcOf(z, 'z'), c),
    distMod: (z: number) => 5 * Math.log10((1 + z) * transverseFromComovingMpc(dcOf(z, 'z'), c)) + 25,
    comovingVolumeMpc3: (z: number, solidAngleSr = 4 * Math.PI) => comovingVolumeFromComovingMpc3(dcOf(z, 'z'), c, solidAngleSr),
    zAtLumDist: zAtLum,
  });
}

/** Cubic Hermite interpolant of (x, y, y') on panel i at x. */
function hermite(x: Float64Array, y: Float64Array, s: Float64Array, i: number, at: number): number {
  const h = x[i + 1] - x[i];
  const t = (at - x[i]) / h;
  const t2 = t * t;
  const t3 = t2 * t;
  return (
    (2 * t3 - 3 * t2 + 1) * y[i] + (t3 - 2 * t2 + t) * h * s[i] + (-2 * t3 + 3 * t2) * y[i + 1] + (t3 - t2) * h * s[i + 1]
  );
}

/** Derivative of the cubic Hermite interpolant on panel i at x. */
function hermiteSlope(x: Float64Array, y: Float64Array, s: Float64Array, i: number, at: number): number {
  const h = x[i + 1] - x[i];
  const t = (at - x[i]) / h;
  const t2 = t * t;
  return ((6 * t2 - 6 * t) * (y[i] - y[i + 1])) / h + (3 * t2 - 4 * t + 1) * s[i] + (3 * t2 - 2 * t) * s[i + 1];
}
