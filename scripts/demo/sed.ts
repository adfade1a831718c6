/**
 * The demo's analytic galaxy spectrum and its invented photometric system.
 *
 * The spectrum is a toy of our own, not a population-synthesis model: a stellar continuum in
 * f_nu whose blue slope and 4000 A break strengthen with age, an intergalactic absorption step
 * below Lyman-alpha, optional emission bumps for star formers, reddened by the Calzetti et al.
 * (2000, ApJ 533, 682) starburst attenuation curve (optionally tilted by a power-law slope
 * modifier), and redshifted. Only its shape matters: the normalisation is fixed so the
 * selection band reproduces the drawn magnitude.
 */

/** One band of the invented photometric system. Wavelengths in um (observed frame). */
export interface Band {
  band: string;
  label: string;
  /** Pivot wavelength, um. */
  wavelength: number;
  /** Width of the top-hat response, um. */
  width: number;
  /** 5-sigma point-source depth, AB mag. */
  depth5: number;
  /** Forced photometry: fluxes below 2 sigma stay measurements (possibly negative), not limits. */
  forced: boolean;
  /** Footprint in field coordinates u, v in [-1, 1] (u grows to the east, v to the north). */
  covers: (u: number, v: number) => boolean;
  footprint: string;
}

const all = () => true;

/** Twelve bands named after trees, shrubs and landforms, 0.355 to 7.8 um. */
export const BANDS: Band[] = [
  { band: 'ash', label: 'ash 0.36', wavelength: 0.355, width: 0.06, depth5: 26.9, forced: false, covers: (u) => u > -0.55, footprint: 'east of u = -0.55' },
  { band: 'birch', label: 'birch 0.45', wavelength: 0.45, width: 0.1, depth5: 27.3, forced: false, covers: all, footprint: 'whole field' },
  { band: 'cedar', label: 'cedar 0.56', wavelength: 0.56, width: 0.11, depth5: 27.2, forced: false, covers: all, footprint: 'whole field' },
  { band: 'dune', label: 'dune 0.67', wavelength: 0.67, width: 0.12, depth5: 27.0, forced: false, covers: (_u, v) => v < 0.7, footprint: 'south of v = 0.7' },
  { band: 'elm', label: 'elm 0.80', wavelength: 0.8, width: 0.14, depth5: 26.8, forced: false, covers: all, footprint: 'whole field' },
  { band: 'fjord', label: 'fjord 0.95', wavelength: 0.95, width: 0.13, depth5: 26.4, forced: false, covers: (u, v) => u * u + v * v < 1.3, footprint: 'u^2 + v^2 < 1.3 (corners missing)' },
  { band: 'grove', label: 'grove 1.18', wavelength: 1.18, width: 0.2, depth5: 26.6, forced: false, covers: (_u, v) => v > -0.6, footprint: 'north of v = -0.6' },
  { band: 'heron', label: 'heron 1.55', wavelength: 1.55, width: 0.28, depth5: 26.8, forced: false, covers: all, footprint: 'whole field (selection band)' },
  { band: 'islet', label: 'islet 2.05', wavelength: 2.05, width: 0.35, depth5: 26.3, forced: false, covers: (u) => u < 0.6, footprint: 'west of u = 0.6' },
  { band: 'juniper', label: 'juniper 3.3', wavelength: 3.3, width: 0.65, depth5: 25.4, forced: true, covers: all, footprint: 'whole field' },
  { band: 'kestrel', label: 'kestrel 4.5', wavelength: 4.5, width: 0.95, depth5: 25.1, forced: true, covers: (_u, v) => Math.abs(v) < 0.85, footprint: '|v| < 0.85' },
  { band: 'larch', label: 'larch 7.8', wavelength: 7.8, width: 2.0, depth5: 23.4, forced: true, covers: (u, v) => u + v > -1.2, footprint: 'u + v > -1.2' },
];

export const SELECTION_BAND = 'heron';

/** Parameters the spectrum depends on (the demo's truth or best-fit values). */
export interface SedParams {
  z: number;
  logAge: number;
  av: number;
  /** log10 sSFR [1/yr]; drives the emission bumps. */
  logSsfr: number;
  metallicity?: number;
  dustSlope?: number;
  logU?: number;
}

const RV = 4.05;

/**
 * Calzetti et al. (2000) k(lambda) for rest-frame lambda in um, eqs. (4) with R_V = 4.05,
 * valid 0.12-2.2 um; outside that range we continue it with power laws of our own choosing.
 */
export function calzettiK(lamUm: number): number {
  if (lamUm < 0.12) return calzettiK(0.12) * Math.pow(0.12 / lamUm, 1.2);
  if (lamUm > 2.2) return calzettiK(2.2) * Math.pow(2.2 / lamUm, 1.5);
  const x = 1 / lamUm;
  if (lamUm < 0.63) return 2.659 * (-2.156 + 1.509 * x - 0.198 * x * x + 0.011 * x * x * x) + RV;
  return 2.659 * (-1.857 + 1.04 * x) + RV;
}

const clamp01 = (x: number) => (x < 0 ? 0 : x > 1 ? 1 : x);

interface Shape {
  beta2: number;
  gamma: number;
  dBreak: number;
  redAt04: number;
  lines: [number, number][];
  av: number;
  dustSlope: number;
  igm: number;
}

function shapeOf(p: SedParams): Shape {
  const a = clamp01((p.logAge - 7) / 3);
  const zmet = p.metallicity ?? 0;
  const beta = -2.4 + 1.9 * a; // UV slope in f_lambda
  const gamma = -0.1 + 1.8 * a * a + 0.15 * zmet; // optical slope in f_nu: flat when young, red when old
  const dBreak = 1.05 + 0.9 * Math.pow(a, 1.5) + 0.1 * zmet;
  // strength of the emission bumps rises with specific SFR
  const amp = p.logSsfr > -10.5 ? Math.min(2, 0.25 * Math.pow(10, 0.6 * (p.logSsfr + 9))) : 0;
  const uBoost = Math.pow(10, 0.5 * ((p.logU ?? -2.5) + 2.5));
  const lines: [number, number][] = amp > 0 ? [[0.6563, amp], [0.5007, 0.8 * amp * uBoost], [0.3727, 0.4 * amp]] : [];
  return {
    beta2: beta + 2,
    gamma,
    dBreak,
    redAt04: 1 / Math.pow(1 + Math.pow(0.4 / 1.6, 4), (gamma + 1.5) / 4),
    lines,
    av: p.av,
    dustSlope: p.dustSlope ?? 0,
    igm: Math.exp(-0.15 * Math.pow(1 + p.z, 1.5)),
  };
}

/** Rest-frame f_nu of the shape at rest wavelength lam (um), arbitrary normalisation. */
function restFnu(s: Shape, lam: number): number {
  const red = Math.pow(lam / 0.4, s.gamma) / Math.pow(1 + Math.pow(lam / 1.6, 4), (s.gamma + 1.5) / 4);
  const blue = (s.redAt04 / s.dBreak) * Math.pow(lam / 0.4, s.beta2);
  const w = 1 / (1 + Math.exp(-(lam - 0.4) / 0.008));
  let f = (1 - w) * blue + w * red;
  for (const [l0, amp] of s.lines) {
    const d = (lam - l0) / (0.012 * l0);
    if (d > -6 && d < 6) f *= 1 + amp * Math.exp(-0.5 * d * d);
  }
  if (lam < 0.1216) f *= s.igm;
  if (lam < 0.0912) f *= 1e-3;
  if (s.av > 0) {
    const k = calzettiK(lam) * (s.dustSlope !== 0 ? Math.pow(lam / 0.55, s.dustSlope) : 1);
    f *= Math.pow(10, (-0.4 * s.av * k) / RV);
  }
  return f;
}

/** An SED with a fixed normalisation: observed-frame f_nu in uJy at observed wavelength (um). */
export interface Sed {
  fluxAt(lamObsUm: number): number;
  bandFlux(band: Band): number;
}

const BAND_POINTS = 9;

function bandAverage(fnu: (lam: number) => number, band: Band): number {
  // photon-counting top-hat: <f_nu> = int f_nu T dlam/lam / int T dlam/lam
  let num = 0;
  let den = 0;
  for (let i = 0; i < BAND_POINTS; i++) {
    const lam = band.wavelength - band.width / 2 + (band.width * (i + 0.5)) / BAND_POINTS;
    num += fnu(lam) / lam;
    den += 1 / lam;
  }
  return num / den;
}

/** The SED of `p`, scaled so its flux in `normBand` is `normFluxUjy`. */
export function makeSed(p: SedParams, normBand: Band, normFluxUjy: number): Sed {
  const s = shapeOf(p);
  const zp = 1 + p.z;
  const raw = (lamObs: number) => restFnu(s, lamObs / zp);
  const scale = normFluxUjy / bandAverage(raw, normBand);
  return {
    fluxAt: (lamObs) => scale * raw(lamObs),
    bandFlux: (band) => scale * bandAverage(raw, band),
  };
}

/** Observed-frame wavelengths of the model SEDs: `n` log-spaced points over [lo, hi] um. */
export function modelGrid(n: number, lo: number, hi: number): Float64Array {
  const out = new Float64Array(n);
  const a = Math.log(lo);
  const b = Math.log(hi);
  for (let i = 0; i < n; i++) out[i] = round(Math.exp(a + ((b - a) * i) / (n - 1)), 6);
  return out;
}

/** Round to `digits` significant digits (deterministic; keeps the text files compact). */
export function round(x: number, digits: number): number {
  if (!Number.isFinite(x) || x === 0) return x;
  return Number(x.toPrecision(digits));
}

/** AB magnitude to flux density in uJy (Oke & Gunn 1983: m = 23.9 - 2.5 log10 f_uJy). */
export const abToUjy = (m: number) => Math.pow(10, -0.4 * (m - 23.9));
