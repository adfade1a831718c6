/**
 * Each object's offset from a fitted relation and its tension: the offset in units of the
 * spread expected from the intrinsic scatter plus the object's own posterior uncertainty.
 */
import { PosterityError, problem } from '../problems.ts';
import type { Estimate, RelationFit } from './linear.ts';

/**
 * offset_i = y_i - (a + b (x_i - pivot)) with the fit's posterior medians of a, b, s, and
 * tension_i = offset_i / sqrt(s^2 + Cyy_i - 2 b Cxy_i + b^2 Cxx_i), the vertical-residual
 * variance of Hogg, Bovy & Lang (2010, arXiv:1008.4686, eq. 32 projected vertically). Under
 * the model the tension is a standard normal deviate; |tension| > 3 marks a relation outlier.
 * For a fit with the redshift term (`fit.c`) the line is a + b (x - pivot) + c dz, and each
 * object's `dz` (z - zc) must be given.
 */
export function relationOffsets(
  fit: Pick<RelationFit, 'a' | 'b' | 's' | 'pivot'> & { c?: Estimate },
  x: Float64Array,
  y: Float64Array,
  cxx: Float64Array,
  cyy: Float64Array,
  cxy: Float64Array,
  dz?: Float64Array,
): { offset: Float64Array; tension: Float64Array } {
  const n = x.length;
  if (y.length !== n || cxx.length !== n || cyy.length !== n || cxy.length !== n || (dz && dz.length !== n)) {
    throw new PosterityError(problem({ message: 'relation offsets: x, y, cxx, cyy, cxy (and dz) must have the same length', expected: String(n) }));
  }
  if (fit.c && !dz) {
    throw new PosterityError(problem({ message: 'relation offsets: the fit has a redshift term, so each object needs dz = z - zc', column: 'dz' }));
  }
  const c = fit.c && dz ? fit.c.median : 0;
  const a = fit.a.median;
  const b = fit.b.median;
  const s2 = fit.s.median * fit.s.median;
  const offset = new Float64Array(n);
  const tension = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const o = y[i] - (a + b * (x[i] - fit.pivot) + (dz ? c * dz[i] : 0));
    const v = s2 + cyy[i] - 2 * b * cxy[i] + b * b * cxx[i];
    offset[i] = o;
    tension[i] = v > 0 ? o / Math.sqrt(v) : NaN;
  }
  return { offset, tension };
}
