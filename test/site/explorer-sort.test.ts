import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { numericOrder } from '../../src/site/explorer.ts';

/** Reference: a comparator sort with the same rules (NaN last, ties in row order). */
function reference(v: ArrayLike<number>, desc: boolean): number[] {
  const idx = Array.from({ length: v.length }, (_, i) => i);
  return idx.sort((a, b) => {
    const x = v[a];
    const y = v[b];
    const nx = Number.isNaN(x);
    const ny = Number.isNaN(y);
    if (nx || ny) return nx === ny ? a - b : nx ? 1 : -1;
    if (x === y) return a - b;
    return (x < y ? -1 : 1) * (desc ? -1 : 1);
  });
}

describe('explorer sort', () => {
  const values = fc.array(fc.oneof(fc.double({ noNaN: false }), fc.constantFrom(0, -0, 1, -1, NaN, 1e-300, -1e300, Infinity, -Infinity)), { maxLength: 300 });
  it('radix order of float64 columns equals a comparator sort', () => {
    fc.assert(fc.property(values, fc.boolean(), (xs, desc) => {
      const v = Float64Array.from(xs);
      expect(Array.from(numericOrder(v, desc))).toEqual(reference(v, desc));
    }));
  });
  it('radix order of float32 and integer columns equals a comparator sort', () => {
    fc.assert(fc.property(values, fc.boolean(), (xs, desc) => {
      const f = Float32Array.from(xs);
      expect(Array.from(numericOrder(f, desc))).toEqual(reference(f, desc));
      const i = Int32Array.from(xs.map((x) => (Number.isFinite(x) ? Math.trunc(x) % 100000 : 7)));
      expect(Array.from(numericOrder(i, desc))).toEqual(reference(i, desc));
      const u = Uint8Array.from(xs.map((x) => (Number.isFinite(x) ? Math.abs(Math.trunc(x)) % 256 : 3)));
      expect(Array.from(numericOrder(u, desc))).toEqual(reference(u, desc));
    }));
  });
});
