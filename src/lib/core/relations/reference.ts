/**
 * Published reference relations as data (formula, citation, IMF, cosmology, validity), and
 * their conversion to a release's IMF with cited factors.
 */
import { PosterityError, problem } from '../problems.ts';
import { ageGyr, type Cosmology } from '../cosmology.ts';

export type Imf = 'Chabrier' | 'Kroupa' | 'Salpeter';

/**
 * Stellar-mass and SFR factors from a Salpeter (1955) IMF to others: M x 0.61 and SFR x 0.63
 * to Chabrier (2003), M x 0.66 and SFR x 0.67 to Kroupa (2001) (Madau & Dickinson 2014,
 * ARA&A 52, 415, sect. 3; values from memory). A quantity Q in IMF X is Q_Salpeter x f_X.
 */
export const IMF_FACTORS: Readonly<Record<Imf, { mass: number; sfr: number }>> = Object.freeze({
  Salpeter: { mass: 1, sfr: 1 },
  Chabrier: { mass: 0.61, sfr: 0.63 },
  Kroupa: { mass: 0.66, sfr: 0.67 },
});

export interface ReferenceRelationData {
  name: string;
  citation: string;
  /** Formula in words, in the relation's own IMF; t is the age of the universe in Gyr. */
  formula: string;
  imf: Imf;
  /** Cosmology the authors assumed (t(z) is recomputed in the release's cosmology). */
  cosmology: { H0: number; Om0: number; Ode0: number };
  /** log M* range (own IMF) and redshift range the fit is valid over. */
  validity: { xMin: number; xMax: number; zMin: number; zMax: number };
  /** log SFR in the relation's own IMF, from log M* in that IMF and the age t in Gyr. */
  logSfr: (logM: number, tGyr: number) => number;
  /** Where the numbers come from and how sure we are of them. */
  provenance: string;
}

/**
 * Speagle, Steinhardt, Capak & Silverman (2014, ApJS 214, 15), "best fit" of their eq. 28:
 * log SFR = (0.84 - 0.026 t) log M* - (6.51 - 0.11 t), t the age of the universe in Gyr,
 * Kroupa IMF, (h, Om, OL) = (0.7, 0.3, 0.7), valid roughly for 9.7 < log M* < 11.1 and
 * 0 < z < 6 (coefficients, cosmology and validity range from memory: check against the paper).
 */
export const SPEAGLE_2014: ReferenceRelationData = Object.freeze({
  name: 'speagle2014',
  citation: 'Speagle J. S., Steinhardt C. L., Capak P. L., Silverman J. D., 2014, ApJS, 214, 15',
  formula: 'log SFR = (0.84 - 0.026 t) log M* - (6.51 - 0.11 t), t = age of the universe in Gyr',
  imf: 'Kroupa' as Imf,
  cosmology: { H0: 70, Om0: 0.3, Ode0: 0.7 },
  validity: { xMin: 9.7, xMax: 11.1, zMin: 0, zMax: 6 },
  logSfr: (logM: number, t: number) => (0.84 - 0.026 * t) * logM - (6.51 - 0.11 * t),
  provenance: 'coefficients, IMF, cosmology and validity range written from memory',
});

export const REFERENCE_RELATIONS: Readonly<Record<string, ReferenceRelationData>> = Object.freeze({ speagle2014: SPEAGLE_2014 });

export interface ReferenceRelation {
  citation: string;
  /** The IMF the evaluated relation is expressed in (the release's). */
  imf: Imf;
  /** Validity in the release's IMF: log M* range shifted by the mass conversion. */
  validity: { xMin: number; xMax: number; zMin: number; zMax: number };
  /** log SFR [Msun/yr] in the release's IMF at log M* [Msun] (release IMF) and redshift z. */
  evaluate(logM: number, z: number): number;
  note: string;
}

/**
 * A reference relation converted to the release's IMF: log M* is moved to the relation's IMF
 * by log10(f_own / f_release) (Madau & Dickinson 2014 mass factors), the relation is
 * evaluated at t = age of the universe at z in the release's cosmology, and log SFR is moved
 * back by log10(f_release / f_own) (SFR factors).
 */
export function referenceRelation(name: 'speagle2014' | string, toImf: Imf, cosmo: Cosmology): ReferenceRelation {
  const ref = REFERENCE_RELATIONS[name];
  if (!ref) {
    throw new PosterityError(
      problem({ message: 'unknown reference relation', field: 'relations[].reference', expected: Object.keys(REFERENCE_RELATIONS).join(', '), got: name }),
    );
  }
  const to = IMF_FACTORS[toImf];
  if (!to) throw new PosterityError(problem({ message: 'unknown IMF', field: 'physics.imf', expected: 'Chabrier, Kroupa or Salpeter', got: String(toImf) }));
  const own = IMF_FACTORS[ref.imf];
  const dLogM = Math.log10(own.mass / to.mass); // add to a release-IMF log M* to get the relation's
  const dLogSfr = Math.log10(to.sfr / own.sfr); // add to the relation's log SFR to get the release's
  const v = ref.validity;
  const sameCosmo = cosmo.H0 === ref.cosmology.H0 && cosmo.Om0 === ref.cosmology.Om0 && cosmo.Ode0 === ref.cosmology.Ode0;
  const note =
    `${ref.formula}; ${ref.imf} IMF in the paper` +
    (toImf === ref.imf ? '' : `, converted to ${toImf} with M x ${(to.mass / own.mass).toFixed(3)} and SFR x ${(to.sfr / own.sfr).toFixed(3)} (Madau & Dickinson 2014)`) +
    `; t(z) from the release cosmology` +
    (sameCosmo ? '' : ` (the paper assumed H0 = ${ref.cosmology.H0}, Om0 = ${ref.cosmology.Om0}, Ode0 = ${ref.cosmology.Ode0})`) +
    `; ${ref.provenance}.`;
  return {
    citation: ref.citation,
    imf: toImf,
    validity: { xMin: v.xMin - dLogM, xMax: v.xMax - dLogM, zMin: v.zMin, zMax: v.zMax },
    evaluate(logM: number, z: number): number {
      return ref.logSfr(logM + dLogM, ageGyr(z, cosmo)) + dLogSfr;
    },
    note,
  };
}
