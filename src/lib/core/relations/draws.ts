/**
 * Per-object posterior draws of (x, y) in flat arrays, their validation, and each object's
 * weighted mean and 2x2 covariance (the input of the deconvolved fit).
 */
import { PosterityError, problem } from '../problems.ts';
import type { DeconvolvedData } from './deconvolved.ts';

/** Draws of all objects: object i owns entries [offsets[i], offsets[i+1]). */
export interface ObjectDraws {
  x: Float64Array;
  y: Float64Array;
  /** Draw weights (need not be normalised per object). */
  w: Float64Array;
  offsets: Int32Array;
}

/** Checks lengths, offsets, finite values and positive weight sums; returns the number of objects. */
export function validateDraws(d: ObjectDraws, what: string): number {
  const n = d.offsets.length - 1;
  const m = d.x.length;
  if (n < 1 || d.offsets[0] !== 0 || d.offsets[n] !== m) {
    throw new PosterityError(
      problem({ message: `${what}: offsets must start at 0 and end at the number of draws`, column: 'offsets', expected: `0 ... ${m}`, got: n < 1 ? 'no objects' : `${d.offsets[0]} ... ${d.offsets[n]}` }),
    );
  }
  if (d.y.length !== m || d.w.length !== m) {
    throw new PosterityError(problem({ message: `${what}: x, y and w must have the same length`, expected: String(m), got: `${d.y.length}, ${d.w.length}` }));
  }
  for (let i = 0; i < n; i++) {
    const lo = d.offsets[i];
    const hi = d.offsets[i + 1];
    if (!(hi > lo)) {
      throw new PosterityError(problem({ message: `${what}: object has no draws`, row: i + 1, column: 'offsets', expected: 'offsets[i+1] > offsets[i]', got: `${lo} .. ${hi}` }));
    }
    let sw = 0;
    for (let j = lo; j < hi; j++) {
      if (!Number.isFinite(d.x[j]) || !Number.isFinite(d.y[j]) || !(d.w[j] >= 0 && d.w[j] < Infinity)) {
        throw new PosterityError(
          problem({ message: `${what}: draw ${j - lo + 1} of object ${i + 1} is not finite or has a negative weight`, row: i + 1, got: `x=${d.x[j]}, y=${d.y[j]}, w=${d.w[j]}` }),
        );
      }
      sw += d.w[j];
    }
    if (!(sw > 0)) throw new PosterityError(problem({ message: `${what}: all draws of object ${i + 1} have zero weight`, row: i + 1, column: 'w' }));
  }
  return n;
}

/**
 * Weighted posterior mean and covariance of (x, y) per object, normalised by the sum of
 * weights (the convention of the catalogue summaries): C_xy = sum w (x - mx)(y - my) / sum w.
 */
export function objectMoments(d: ObjectDraws): DeconvolvedData {
  const n = validateDraws(d, 'posterior moments');
  const out: DeconvolvedData = {
    x: new Float64Array(n),
    y: new Float64Array(n),
    cxx: new Float64Array(n),
    cyy: new Float64Array(n),
    cxy: new Float64Array(n),
  };
  for (let i = 0; i < n; i++) {
    let sw = 0, sx = 0, sy = 0;
    for (let j = d.offsets[i]; j < d.offsets[i + 1]; j++) {
      sw += d.w[j];
      sx += d.w[j] * d.x[j];
      sy += d.w[j] * d.y[j];
    }
    const mx = sx / sw;
    const my = sy / sw;
    let cxx = 0, cyy = 0, cxy = 0;
    for (let j = d.offsets[i]; j < d.offsets[i + 1]; j++) {
      const dx = d.x[j] - mx;
      const dy = d.y[j] - my;
      cxx += d.w[j] * dx * dx;
      cyy += d.w[j] * dy * dy;
      cxy += d.w[j] * dx * dy;
    }
    out.x[i] = mx;
    out.y[i] = my;
    out.cxx[i] = cxx / sw;
    out.cyy[i] = cyy / sw;
    out.cxy[i] = cxy / sw;
  }
  return out;
}
