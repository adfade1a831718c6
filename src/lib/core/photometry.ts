/**
 * Flux-density units, AB magnitudes and band pivot wavelengths.
 */

/** Speed of light in Angstrom per second (exact SI value of c, 299 792 458 m/s). */
export const C_ANGSTROM_PER_S = 2.99792458e18;

/**
 * AB zero point in microjansky: m_AB = -2.5 log10(f_nu / 3631 Jy) (Oke & Gunn 1983, rounded as in
 * common practice; their -48.60 in cgs units corresponds to 3630.8 Jy, 7e-5 mag away).
 */
export const AB_ZERO_POINT_UJY = 3631e6;

export type FluxUnit = 'uJy' | 'mJy' | 'Jy' | 'erg/s/cm2/A' | 'ABmag';

/** AB magnitude of a flux density in microjansky, -2.5 log10(f / 3631 Jy) (Oke & Gunn 1983); about 23.9 - 2.5 log10(f). NaN for f <= 0. */
export function abMagFromMicroJy(fluxMicroJy: number): number {
  if (!(fluxMicroJy > 0)) return NaN;
  return 2.5 * Math.log10(AB_ZERO_POINT_UJY / fluxMicroJy);
}

/** Flux density in microjansky of an AB magnitude: 3631 Jy x 10^(-0.4 m) (Oke & Gunn 1983). */
export function microJyFromAbMag(mag: number): number {
  return AB_ZERO_POINT_UJY * Math.pow(10, -0.4 * mag);
}

/**
 * A flux density in `unit` converted to microjansky. Per-wavelength densities use
 * f_nu = lambda^2 f_lambda / c (lambda in Angstrom, c in Angstrom/s; 1 uJy = 1e-29 erg/s/cm^2/Hz),
 * so `wavelengthAngstrom` is needed only for 'erg/s/cm2/A'.
 */
export function toMicroJy(value: number, unit: FluxUnit, wavelengthAngstrom?: number): number {
  switch (unit) {
    case 'uJy':
      return value;
    case 'mJy':
      return value * 1e3;
    case 'Jy':
      return value * 1e6;
    case 'ABmag':
      return microJyFromAbMag(value);
    case 'erg/s/cm2/A': {
      const lam = wavelengthAngstrom ?? NaN;
      return ((value * lam * lam) / C_ANGSTROM_PER_S) * 1e29;
    }
  }
}

/**
 * A flux-density uncertainty converted to microjansky. Linear units scale like the value;
 * for magnitudes, first-order propagation sigma_f = 0.4 ln(10) f sigma_m (common practice).
 */
export function toMicroJyError(error: number, value: number, unit: FluxUnit, wavelengthAngstrom?: number): number {
  if (unit === 'ABmag') return 0.4 * Math.LN10 * microJyFromAbMag(value) * error;
  return toMicroJy(error, unit, wavelengthAngstrom);
}

/**
 * Pivot wavelength of a photon-counting band, lambda_p^2 = int T lambda dlambda /
 * int T / lambda dlambda (Tokunaga & Vacca 2005), by the trapezoid rule on the sampled
 * response; same unit as `lambda`. NaN with fewer than two points or no transmission.
 */
export function pivotWavelength(lambda: Float64Array, T: Float64Array): number {
  let num = 0;
  let den = 0;
  for (let i = 1; i < lambda.length; i++) {
    const a = lambda[i - 1];
    const b = lambda[i];
    const h = 0.5 * (b - a);
    num += h * (T[i - 1] * a + T[i] * b);
    den += h * (T[i - 1] / a + T[i] / b);
  }
  return den > 0 ? Math.sqrt(num / den) : NaN;
}
