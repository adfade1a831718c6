/**
 * Star-forming or quiescent by a specific-SFR rule. Specific SFR = SFR / M*, so
 * log sSFR [1/yr] = log SFR [M_sun/yr] - log M* [M_sun]. A galaxy is star-forming when its
 * log sSFR lies strictly above the threshold, quiescent otherwise.
 */
import { PosterityError, problem } from '../problems.ts';
import { ageGyr, type Cosmology } from '../cosmology.ts';
import { checkDrawSet, type DrawSet } from './draws.ts';

/** Class codes of `classifyBySsfr`. */
export const QUIESCENT = 0;
export const STAR_FORMING = 1;
/** Mass or SFR missing (NaN): no class. */
export const UNCLASSIFIED = 255;

/**
 * Fixed low-redshift cut: log sSFR = -11 per yr (common practice at low redshift; a
 * convention, not a published constant).
 */
export const SSFR_THRESHOLD_LOW_Z_PER_YR = -11;

function thresholdAt(threshold: number | Float64Array, i: number): number {
  return typeof threshold === 'number' ? threshold : threshold[i];
}

function checkThreshold(threshold: number | Float64Array, n: number): void {
  if (typeof threshold !== 'number' && threshold.length !== n) {
    throw new PosterityError(
      problem({ message: 'per-object sSFR thresholds differ in length from the catalogue', expected: String(n), got: String(threshold.length) }),
    );
  }
}

/**
 * Class of each galaxy from point values: `STAR_FORMING` (1) when
 * logSfr - logMass > threshold (log sSFR per yr), `QUIESCENT` (0) otherwise, `UNCLASSIFIED`
 * (255) when either value or the threshold is NaN. `threshold` is one log sSFR [1/yr] for all
 * galaxies (default -11, common practice at low z) or one per galaxy (e.g. the evolving cut of
 * `ssfrThresholdEvolving` at each redshift).
 */
export function classifyBySsfr(
  logMass: Float64Array,
  logSfr: Float64Array,
  threshold: number | Float64Array = SSFR_THRESHOLD_LOW_Z_PER_YR,
): Uint8Array {
  const n = logMass.length;
  if (logSfr.length !== n) {
    throw new PosterityError(problem({ message: 'log SFR and log mass differ in length', expected: String(n), got: String(logSfr.length) }));
  }
  checkThreshold(threshold, n);
  const out = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    const s = logSfr[i] - logMass[i];
    const t = thresholdAt(threshold, i);
    out[i] = Number.isNaN(s) || Number.isNaN(t) ? UNCLASSIFIED : s > t ? STAR_FORMING : QUIESCENT;
  }
  return out;
}

/**
 * Evolving quiescence cut log10(1 / (3 t_H(z))) in log sSFR per yr, with t_H(z) the age of the
 * universe at redshift z in yr (`ageGyr` of the release cosmology, Julian years): a galaxy is
 * star-forming when it would build its present mass in less than three times the age of the
 * universe at its epoch. The 1 / (3 t_H) rule is a common choice in the literature, written
 * here from memory (the primer marks it *(memory)*). For H0 = 70, Om0 = 0.3 at z = 0
 * (t_H = 13.47 Gyr) it is about -10.61.
 */
export function ssfrThresholdEvolving(z: number, cosmo: Cosmology): number {
  return -Math.log10(3 * ageGyr(z, cosmo) * 1e9);
}

/** `ssfrThresholdEvolving` at each redshift, for the per-object thresholds of `classifyBySsfr`. */
export function ssfrThresholdsEvolving(z: Float64Array, cosmo: Cosmology): Float64Array {
  const out = new Float64Array(z.length);
  for (let i = 0; i < z.length; i++) out[i] = Number.isNaN(z[i]) ? NaN : ssfrThresholdEvolving(z[i], cosmo);
  return out;
}

/**
 * Weighted fraction of each object's joint (log M*, log SFR) posterior draws that lie above the
 * sSFR cut: P_SF,i = sum_j w_ij [logSfr_ij - logMass_ij > t_i] / sum_j w_ij. `logMass` gives the
 * layout (offsets and weights); `logSfr` holds the SFR of the same draws in the same order.
 * Draws with a NaN mass or SFR carry no weight; an object without usable weight gets NaN.
 */
export function starFormingProbability(
  logMass: DrawSet,
  logSfr: Float64Array,
  threshold: number | Float64Array = SSFR_THRESHOLD_LOW_Z_PER_YR,
): Float64Array {
  checkDrawSet(logMass, 'log stellar mass draws');
  if (logSfr.length !== logMass.values.length) {
    throw new PosterityError(
      problem({ message: 'log SFR draws differ in number from log mass draws', expected: String(logMass.values.length), got: String(logSfr.length) }),
    );
  }
  const n = logMass.offsets.length - 1;
  checkThreshold(threshold, n);
  const out = new Float64Array(n);
  const { offsets, values, weights } = logMass;
  for (let i = 0; i < n; i++) {
    const t = thresholdAt(threshold, i);
    let total = 0;
    let above = 0;
    for (let j = offsets[i]; j < offsets[i + 1]; j++) {
      const s = logSfr[j] - values[j];
      const w = weights[j];
      if (Number.isNaN(s) || !(w > 0)) continue;
      total += w;
      if (s > t) above += w;
    }
    out[i] = total > 0 && !Number.isNaN(t) ? above / total : NaN;
  }
  return out;
}
