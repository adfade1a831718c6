/**
 * The WebAssembly sums of the hierarchical likelihood (`likelihood.wat`, run through
 * `hierarchical-sum.ts`): the committed module is the assembly of the committed text; the
 * exponentials against Math.exp (V8's exp follows the fdlibm algorithm, error below 1 ulp: from
 * memory, and only used here as a reference far more accurate than the bounds tested); the
 * per-object sums in double and single precision against a float64 sum written here from the
 * definition; padding, underflow and batches.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { createLikelihoodSum, paddedDraws, type CompactTerms } from '../../../src/lib/core/relations/hierarchical-sum.ts';
import { makeRng } from '../../../src/lib/core/random.ts';

/** Terms of objects given as lists of draws (dx, dy, c), padded as the fit pads them. */
function termsOf(objects: { dx: number[]; dy: number[]; c: number[]; xc: number; yc: number; dz?: number; cmax?: number }[]): CompactTerms {
  const n = objects.length;
  const offsets = new Int32Array(n + 1);
  for (let i = 0; i < n; i++) offsets[i + 1] = offsets[i] + paddedDraws(objects[i].dx.length);
  const total = offsets[n];
  const dx = new Float32Array(total), dy = new Float32Array(total), c = new Float32Array(total).fill(-Infinity);
  objects.forEach((o, i) => {
    dx.set(o.dx, offsets[i]);
    dy.set(o.dy, offsets[i]);
    c.set(o.c, offsets[i]);
  });
  return {
    dx, dy, c, offsets, n,
    cmax: Float64Array.from(objects, (o) => o.cmax ?? 0),
    xc: Float64Array.from(objects, (o) => o.xc),
    yc: Float64Array.from(objects, (o) => o.yc),
    dz: Float64Array.from(objects, (o) => o.dz ?? 0),
  };
}

/** ln sum_k exp(v_k) of object i in float64 from the stored (float32) draws, two-pass. */
function referenceLogSum(t: CompactTerms, i: number, P: number[]): { logSum: number; vMax: number } {
  const [A, b, hs, ht, mu, cc] = P;
  const R = t.yc[i] - A - b * t.xc[i] - cc * t.dz[i];
  const U = t.xc[i] - mu;
  const v: number[] = [];
  for (let j = t.offsets[i]; j < t.offsets[i + 1]; j++) {
    if (t.c[j] === -Infinity) continue;
    const r = R + t.dy[j] - b * t.dx[j];
    const u = U + t.dx[j];
    v.push(t.c[j] - (hs * r * r + ht * u * u));
  }
  const m = Math.max(...v);
  return { logSum: m + Math.log(v.reduce((s, x) => s + Math.exp(x - m), 0)), vMax: m };
}

describe('likelihood WebAssembly module', () => {
  it('is the assembly of likelihood.wat (run node scripts/wasm/build.mjs after editing it)', async () => {
    const { assemble, render } = await import('../../../scripts/wasm/build.mjs');
    const committed = readFileSync(new URL('../../../src/lib/core/relations/likelihood-wasm.ts', import.meta.url), 'utf8');
    expect(render(await assemble())).toBe(committed);
  });

  it('computes exp(v) to 1e-15 (double) and 3e-7 (single) relative, and exactly 0 for padding', () => {
    // one draw per object with dx = dy = 0 at R = U = 0, so S_i = exp(c_i); c is float32, so use float32 values
    const vs = Array.from({ length: 400 }, (_, k) => Math.fround(-0.17 * k - 1e-3 * (k % 7)));
    const t = termsOf(vs.map((v) => ({ dx: [0], dy: [0], c: [v], xc: 10, yc: 2 })));
    for (const precision of ['double', 'single'] as const) {
      for (let i = 0; i < vs.length; i++) {
        const one = termsOf([{ dx: [0], dy: [0], c: [vs[i]], xc: 10, yc: 2 }]);
        const lik = createLikelihoodSum(one, 1);
        // A = yc - b xc makes R = 0, mu = xc makes U = 0
        const got = lik.sum(2 - 0.5 * 10, 0.5, 3, 2, 10, 0, precision);
        // |ln S - v| is the relative error of exp(v)
        const tol = precision === 'double' ? 1e-15 * Math.max(1, Math.abs(vs[i])) : 3e-7; // single: measured at most 2.03e-7
        // exp(0) = 1 and the three padding draws add exactly 0: ln S is exactly 0
        if (i === 0) expect(got === 0, `${precision}: ln S = ${got} at v = 0`).toBe(true);
        expect(Math.abs(got - vs[i]), `${precision} v = ${vs[i]}`).toBeLessThanOrEqual(tol);
      }
    }
    expect(t.offsets[1]).toBe(4); // one draw and three padding draws per object
  });

  it('sums many draws per object as the float64 definition does (double 1e-13, single 2e-7 (1 + |v|)), in batches bit for bit as one at a time', () => {
    const rng = makeRng(11);
    const objects = Array.from({ length: 300 }, (_, i) => {
      const k = 1 + (i % 37) * 3; // 1 .. 109 draws: every padding length
      const dx: number[] = [], dy: number[] = [], c: number[] = [];
      for (let j = 0; j < k; j++) {
        dx.push(0.3 * rng.normal());
        dy.push(0.4 * rng.normal());
        c.push(j === 0 ? 0 : -Math.abs(2 * rng.normal()));
      }
      return { dx, dy, c, xc: 9 + 2 * rng.next(), yc: 0.5 + 1.5 * rng.normal(), dz: 0.2 * (rng.next() - 0.5), cmax: rng.normal() };
    });
    const t = termsOf(objects);
    const sets = [
      [1 - 0.8 * 10, 0.8, 0.5 / 0.3 ** 2, 0.5 / 0.6 ** 2, 10, 0.4],
      [0.7 - 1.1 * 10, 1.1, 0.5 / 0.1 ** 2, 0.5 / 0.3 ** 2, 9.7, -0.2],
      [1.4 - 0.2 * 10, 0.2, 0.5 / 0.05 ** 2, 0.5 / 1.2 ** 2, 10.5, 0], // narrow: large exponents
    ];
    const lik = createLikelihoodSum(t, 1, 2); // batches of at most 2: a batch of 3 is split
    for (const precision of ['double', 'single'] as const) {
      const single: number[] = [];
      for (const P of sets) {
        // each object alone, through the per-object weights
        let want = 0, bound = 0;
        for (let i = 0; i < t.n; i++) {
          const r = referenceLogSum(t, i, P);
          want += t.cmax[i] + r.logSum;
          bound += precision === 'double' ? 1e-13 * (1 + Math.abs(r.vMax)) : 2e-7 * (1 + Math.abs(r.vMax));
        }
        const got = lik.sum(P[0], P[1], P[2], P[3], P[4], P[5], precision);
        expect(Math.abs(got - want), `${precision} at ${P}`).toBeLessThanOrEqual(bound);
        single.push(got);
      }
      const out = new Float64Array(3);
      lik.sumBatch(Float64Array.from(sets.flat()), 3, out, precision);
      expect(Array.from(out)).toEqual(single);
    }
    lik.close();
  });

  it('leaves an object whose terms all fall below the exponential range to the exact float64 sum', () => {
    // every term near e^-3000 (single: far below e^-87; double: below e^-708)
    const t = termsOf([{ dx: [0, 0.01, -0.02], dy: [0, 0.02, 0.01], c: [0, -1, -2], xc: 10, yc: 40 }]);
    const P = [0, 0, 0.5 / 0.5 ** 2, 0.5, 10, 0];
    const want = referenceLogSum(t, 0, P).logSum;
    expect(want).toBeLessThan(-3000);
    const lik = createLikelihoodSum(t, 1);
    for (const precision of ['double', 'single'] as const) {
      expect(Math.abs(lik.sum(P[0], P[1], P[2], P[3], P[4], P[5], precision) - want)).toBeLessThan(1e-12 * Math.abs(want));
    }
  });
});
