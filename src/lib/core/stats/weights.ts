/**
 * Posterior draw weights: validation, normalisation and the Kish effective sample size.
 */
import { PosterityError, problem } from '../problems.ts';

function describeValue(v: number): string {
  return Number.isNaN(v) ? 'NaN' : String(v);
}

/**
 * Weights summing to 1 from either linear `weights` or natural-log `logWeights`
 * (`weights` wins when both are given). Log weights are exponentiated after subtracting their
 * maximum, so any finite range is safe; a log weight of -Infinity is a zero weight. Linear
 * weights are divided by their maximum before summing so huge finite values cannot overflow.
 * Zero weights are kept (they carry no mass). Throws `PosterityError` naming `objectId` and the
 * 1-based draw within the object for a negative, NaN or infinite weight (NaN or +Infinity log
 * weight), when every weight is zero, or when there are no draws.
 */
export function normaliseWeights(
  input: { weights?: Float64Array; logWeights?: Float64Array },
  objectId: string,
): Float64Array {
  const isLog = input.weights === undefined;
  const src = input.weights ?? input.logWeights;
  const n = src?.length ?? 0;
  const out = new Float64Array(n);
  normaliseWeightsInto(src ?? out, isLog, out, objectId);
  return out;
}

/**
 * `normaliseWeights` into `out` (length at least `src.length`; the first `src.length` entries are
 * written) from linear (`isLog` false) or natural-log weights, with the same checks and the same
 * arithmetic; `src` may be a Float32Array view. Returns the number of weights.
 */
export function normaliseWeightsInto(src: ArrayLike<number>, isLog: boolean, out: Float64Array, objectId: string): number {
  const column = isLog ? 'log_weight' : 'weight';
  if (src.length === 0) {
    throw new PosterityError(
      problem({ message: 'object has no posterior draws', object: objectId, column, expected: 'at least one draw', got: '0 draws' }),
    );
  }
  const n = src.length;
  let max = -Infinity;
  for (let i = 0; i < n; i++) {
    const v = src[i];
    const bad = isLog ? Number.isNaN(v) || v === Infinity : !(v >= 0) || v === Infinity;
    if (bad) {
      throw new PosterityError(
        problem({
          message: `invalid ${isLog ? 'log weight' : 'weight'} for draw ${i + 1}`,
          object: objectId,
          column,
          expected: isLog ? 'a finite number or -Infinity' : 'a finite number >= 0',
          got: describeValue(v),
        }),
      );
    }
    if (v > max) max = v;
  }
  const allZero = isLog ? max === -Infinity : max === 0;
  if (allZero) {
    throw new PosterityError(
      problem({
        message: `all ${n} draws have zero weight`,
        object: objectId,
        column,
        expected: 'at least one positive weight',
        got: isLog ? 'every log weight -Infinity' : 'every weight 0',
      }),
    );
  }
  let sum = 0;
  for (let i = 0; i < n; i++) {
    const v = isLog ? Math.exp(src[i] - max) : src[i] / max;
    out[i] = v;
    sum += v;
  }
  const inv = 1 / sum;
  for (let i = 0; i < n; i++) out[i] *= inv;
  return n;
}

/**
 * Kish (1965) effective sample size (sum w)^2 / sum w^2. Scale-free; between 1 and the number
 * of non-zero weights. Returns 0 for an empty or all-zero array.
 */
export function kishEss(w: Float64Array): number {
  // divide by the largest weight so neither tiny nor huge weights underflow or overflow
  let max = 0;
  for (let i = 0; i < w.length; i++) if (w[i] > max) max = w[i];
  if (!(max > 0)) return 0;
  const inv = 1 / max;
  let s = 0;
  let s2 = 0;
  for (let i = 0; i < w.length; i++) {
    const v = w[i] * inv;
    s += v;
    s2 += v * v;
  }
  return (s * s) / s2;
}
