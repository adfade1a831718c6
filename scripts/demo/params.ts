/**
 * The fitted parameters of the demo: names, roles, units (VOUnit), UCDs, the interim prior
 * bounds of the fit, and the error model that sets each posterior's width.
 */

export type Role = 'log_mass' | 'log_sfr' | 'dust_av' | 'log_age' | 'metallicity' | 'redshift' | 'other';

export interface ParamSpec {
  name: string;
  /** Column name in the samples file when it differs from the name (exercises the mapping). */
  column?: string;
  label: string;
  unit: string;
  ucd?: string;
  role: Role;
  description: string;
  /** Uniform interim prior bounds. */
  min: number;
  max: number;
  /** Posterior width for a bright, low-redshift galaxy. */
  sigma0: number;
}

const CORE: ParamSpec[] = [
  { name: 'log_mstar', label: 'log M* [M☉]', unit: 'log(solMass)', ucd: 'phys.mass', role: 'log_mass', description: 'log10 of the stellar mass (Chabrier IMF)', min: 5.5, max: 13.0, sigma0: 0.07 },
  { name: 'log_sfr', label: 'log SFR [M☉/yr]', unit: 'log(solMass/yr)', ucd: 'phys.SFR', role: 'log_sfr', description: 'log10 of the star-formation rate averaged over the last 100 Myr', min: -5.0, max: 4.0, sigma0: 0.18 },
  { name: 'av', label: 'A_V [mag]', unit: 'mag', ucd: 'phys.absorption;em.opt.V', role: 'dust_av', description: 'V-band attenuation of the stellar light (Calzetti et al. 2000 curve)', min: 0.0, max: 4.0, sigma0: 0.12 },
  { name: 'log_age', column: 'lg_age_yr', label: 'log age [yr]', unit: 'log(yr)', ucd: 'time.age', role: 'log_age', description: 'log10 of the time since the onset of star formation', min: 7.0, max: 10.15, sigma0: 0.15 },
];

const EXTRA: ParamSpec[] = [
  { name: 'metallicity', label: 'log Z/Z☉', unit: '', ucd: 'phys.abund.Z', role: 'metallicity', description: 'log10 of the stellar metallicity relative to solar', min: -2.0, max: 0.4, sigma0: 0.25 },
  { name: 'log_tau', label: 'log τ [yr]', unit: 'log(yr)', ucd: 'time.scale', role: 'other', description: 'log10 of the e-folding time of the delayed-exponential star-formation history', min: 7.5, max: 10.5, sigma0: 0.3 },
  { name: 'dust_slope', label: 'δ (attenuation slope)', unit: '', role: 'other', description: 'power-law tilt delta of the attenuation curve, k(λ) (λ/0.55 μm)^δ', min: -0.8, max: 0.4, sigma0: 0.15 },
  { name: 'log_u', label: 'log U', unit: '', role: 'other', description: 'log10 of the ionisation parameter of the nebular emission', min: -4.0, max: -1.0, sigma0: 0.35 },
];

export function paramList(n: 4 | 8): ParamSpec[] {
  return n === 8 ? [...CORE, ...EXTRA] : CORE.slice();
}

/**
 * Correlation of the measurement errors (mass-SFR-dust-age degeneracies), in the order
 * log_mstar, log_sfr, av, log_age, metallicity, log_tau, dust_slope, log_u.
 */
const CORR8: number[][] = [
  [1.0, 0.45, 0.3, 0.4, 0.0, 0.1, 0.0, 0.0],
  [0.45, 1.0, 0.55, -0.3, 0.0, 0.0, -0.15, 0.2],
  [0.3, 0.55, 1.0, -0.25, -0.1, 0.0, -0.35, 0.0],
  [0.4, -0.3, -0.25, 1.0, -0.35, 0.25, 0.0, 0.0],
  [0.0, 0.0, -0.1, -0.35, 1.0, 0.1, 0.0, -0.2],
  [0.1, 0.0, 0.0, 0.25, 0.1, 1.0, 0.0, 0.0],
  [0.0, -0.15, -0.35, 0.0, 0.0, 0.0, 1.0, 0.0],
  [0.0, 0.2, 0.0, 0.0, -0.2, 0.0, 0.0, 1.0],
];

export function errorCorrelation(n: number): number[][] {
  return CORR8.slice(0, n).map((row) => row.slice(0, n));
}

/** The planted flaw: the fit's log_age likelihood is too narrow by this factor. */
export const FLAW = { parameter: 'log_age', factor: 1.5 } as const;

/** Interim prior of the fit beyond the uniform box: a Gaussian in log sSFR = log SFR - log M. */
export const SSFR_PRIOR = { mean: -9.6, sigma: 1.6 } as const;
