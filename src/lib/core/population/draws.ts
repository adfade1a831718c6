/**
 * Posterior draws of many objects in one flat layout: object i owns the draws
 * `values[offsets[i]] .. values[offsets[i + 1] - 1]` with the matching `weights` (need not be
 * normalised; zero weights carry no mass). This is the ragged-array layout used by columnar
 * formats (Arrow list offsets), so a samples table sorted by id maps onto it without copying.
 */
import { PosterityError, problem } from '../problems.ts';

export interface DrawSet {
  /** Length nObjects + 1, non-decreasing, offsets[0] = 0 and offsets[nObjects] = values.length. */
  offsets: ArrayLike<number>;
  values: Float64Array;
  weights: Float64Array;
}

/** Number of objects in a draw set. */
export function objectCount(d: DrawSet): number {
  return d.offsets.length - 1;
}

/**
 * Checks the layout of `d` (and, when given, that it holds `nObjects` objects); throws
 * `PosterityError` naming `what` (e.g. the parameter) and the first offending object index.
 */
export function checkDrawSet(d: DrawSet, what: string, nObjects?: number): void {
  const n = d.offsets.length - 1;
  const fail = (message: string, expected: string, got: string, object?: number) => {
    throw new PosterityError(
      problem({ message: `${what}: ${message}`, expected, got, ...(object !== undefined ? { object: String(object) } : {}) }),
    );
  };
  if (n < 0) fail('draw offsets are empty', 'nObjects + 1 offsets', '0');
  if (nObjects !== undefined && n !== nObjects) fail('draw set has the wrong number of objects', String(nObjects), String(n));
  if (d.values.length !== d.weights.length) {
    fail('values and weights differ in length', String(d.values.length), String(d.weights.length));
  }
  if (d.offsets[0] !== 0) fail('first draw offset is not 0', '0', String(d.offsets[0]));
  if (d.offsets[n] !== d.values.length) fail('last draw offset is not the number of draws', String(d.values.length), String(d.offsets[n]));
  for (let i = 0; i < n; i++) {
    if (!(d.offsets[i + 1] >= d.offsets[i])) {
      fail('draw offsets decrease', 'non-decreasing offsets', `${d.offsets[i]} then ${d.offsets[i + 1]}`, i);
    }
  }
}

/** Sum of object i's weights. */
export function objectWeight(d: DrawSet, i: number): number {
  let s = 0;
  for (let j = d.offsets[i]; j < d.offsets[i + 1]; j++) s += d.weights[j];
  return s;
}
