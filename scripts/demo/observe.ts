/**
 * What the mock survey "observed" for one galaxy: photometry in the bands that cover its
 * position (with a chi-square of the best fit built into the residuals), an optional
 * spectrum, and the best-fit model SED on a fixed wavelength grid.
 */
import type { Rng } from '../../src/lib/core/random.ts';
import { BANDS, abToUjy, round, type Band, type Sed } from './sed.ts';

/** Fraction of galaxies whose fit is poor (one or two bands far off the model). */
export const POOR_FIT_FRACTION = 0.03;
/** Free parameters the chi-square's degrees of freedom are reduced by. */
export const DOF_SUBTRACT = 4;
/** Non-forced bands report fluxes below this many sigma as upper limits... */
export const LIMIT_BELOW_NSIGMA = 2;
/** ...at this many sigma. */
export const LIMIT_NSIGMA = 3;
/** Calibration error floor, as a fraction of the flux, added in quadrature. */
export const CALIBRATION_FLOOR = 0.02;

export interface PhotRow {
  band: string;
  flux: number;
  err: number;
  model: number;
  upperLimit: boolean;
}

export interface Photometry {
  rows: PhotRow[];
  chi2: number;
  nBands: number;
  poor: boolean;
}

/** Background-limited 1-sigma error in uJy: the 5-sigma depth / 5, shallower towards the field edge. */
export function backgroundSigma(band: Band, u: number, v: number): number {
  return (abToUjy(band.depth5) / 5) * (1 + 0.35 * (u * u + v * v) / 2);
}

export function observePhotometry(sed: Sed, u: number, v: number, rng: Rng): Photometry {
  const bands = BANDS.filter((b) => b.covers(u, v));
  const n = bands.length;
  const model = bands.map((b) => sed.bandFlux(b));
  const err = bands.map((b, k) => Math.hypot(backgroundSigma(b, u, v), CALIBRATION_FLOOR * model[k]));
  // residuals in sigma: a Gaussian direction with a chi-square(n - 4) length
  const eps = bands.map(() => rng.normal());
  const target = 2 * rng.gamma((n - DOF_SUBTRACT) / 2);
  const norm = Math.sqrt(eps.reduce((s, x) => s + x * x, 0));
  for (let k = 0; k < n; k++) eps[k] *= Math.sqrt(target) / norm;
  const poor = rng.next() < POOR_FIT_FRACTION;
  if (poor) {
    const nOff = 1 + rng.int(2);
    for (let j = 0; j < nOff; j++) {
      const k = rng.int(n);
      eps[k] += (rng.next() < 0.5 ? -1 : 1) * (6 + 6 * rng.next());
    }
  }
  const rows: PhotRow[] = [];
  let chi2 = 0;
  for (let k = 0; k < n; k++) {
    const e = round(err[k], 4);
    const m = round(model[k], 5);
    const f = round(model[k] + err[k] * eps[k], 5);
    const r = (f - m) / e;
    chi2 += r * r;
    rows.push({ band: bands[k].band, flux: f, err: e, model: m, upperLimit: !bands[k].forced && f < LIMIT_BELOW_NSIGMA * e });
  }
  return { rows, chi2: Math.round(chi2 * 1e4) / 1e4, nBands: n, poor };
}

export const SPECTRUM = {
  instrument: 'HALYARD',
  pixels: 300,
  lo: 0.6,
  hi: 1.0,
  /** Per-pixel 1-sigma error away from sky lines, uJy. */
  sigma: 0.1,
  /** Uncorrected telluric absorption, masked. */
  telluric: [0.758, 0.77] as [number, number],
  badPixels: 2,
} as const;

/** Sky-line pattern of our own: narrow spikes redward of 0.8 um and a slow rise to the red. */
function skyFactor(lam: number): number {
  let s = 1 + 0.5 * Math.pow(Math.max(0, lam - 0.8) / 0.2, 2);
  if (lam > 0.8) s += 2 * Math.pow(0.5 + 0.5 * Math.cos((2 * Math.PI * (lam - 0.8)) / 0.0047), 40);
  return s;
}

export interface SpecRow {
  wavelength: number;
  flux: number;
  err: number;
  mask: boolean;
  model: number;
}

export function observeSpectrum(sed: Sed, rng: Rng): SpecRow[] {
  const s = SPECTRUM;
  const bad = new Set<number>();
  while (bad.size < s.badPixels) bad.add(rng.int(s.pixels));
  const out: SpecRow[] = [];
  for (let i = 0; i < s.pixels; i++) {
    const lam = round(s.lo + ((s.hi - s.lo) * i) / (s.pixels - 1), 6);
    const m = sed.fluxAt(lam);
    const e = s.sigma * skyFactor(lam);
    const telluric = lam >= s.telluric[0] && lam <= s.telluric[1];
    let f = (telluric ? 0.55 * m : m) + e * rng.normal();
    if (bad.has(i)) f += 25 * e;
    out.push({ wavelength: lam, flux: round(f, 5), err: round(e, 4), mask: telluric || bad.has(i), model: round(m, 5) });
  }
  return out;
}
