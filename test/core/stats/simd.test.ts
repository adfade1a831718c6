/**
 * The WebAssembly loops of kernels.wat against the scalar loops they replace (simd.ts), which
 * are their definition: the same bits on the same inputs, for every loop, including the odd
 * sizes and the values (ties, -0, values that are not float32) that take other branches. And
 * the committed module is the assembly of kernels.wat.
 */
import { readFileSync } from 'node:fs';
import { afterEach, describe, expect, it } from 'vitest';
import {
  alloc,
  binLinear1d,
  binLinear2d,
  cellCodes,
  convolveSymmetric,
  covarianceTerms,
  crossProducts,
  int32At,
  levelBuckets,
  levelCells,
  memory,
  release,
  reserve,
  setSimd,
  simdEnabled,
  smooth2d,
  sortDrawsAt,
  summarySortedAt,
} from '../../../src/lib/core/stats/simd.ts';
import { hdiSorted, meanStdSorted, quantilesSorted, sortDraws, SUMMARY_PROBS } from '../../../src/lib/core/stats/summary.ts';
import { kishEss as kish } from '../../../src/lib/core/stats/weights.ts';
import { normals, uniforms } from './_random.ts';

afterEach(() => setSimd(true));

/** Runs `f` with the WebAssembly loops and with the scalar loops; returns both results. */
function both<T>(f: () => T): [T, T] {
  setSimd(true);
  expect(simdEnabled()).toBe(true); // Node 20 has WebAssembly SIMD
  const wasm = f();
  setSimd(false);
  const scalar = f();
  setSimd(true);
  return [wasm, scalar];
}

/** Copies `values` into fresh slots; returns their slot. */
function put(values: ArrayLike<number>): number {
  const at = alloc(values.length);
  memory().set(values as ArrayLike<number>, at);
  return at;
}

const bits = (a: ArrayLike<number>) => Array.from(new Uint32Array(Float64Array.from(a).buffer));

describe('WebAssembly loops give the bits of their scalar loops', () => {
  it('is the assembly of kernels.wat (run node scripts/wasm/build.mjs after editing it)', async () => {
    const { assemble, render } = await import('../../../scripts/wasm/build.mjs');
    const committed = readFileSync(new URL('../../../src/lib/core/stats/kernels-wasm.ts', import.meta.url), 'utf8');
    expect(render(await assemble('kernels'), 'kernels')).toBe(committed);
  });

  it('convolveSymmetric, mesh nodes one and three apart, even and odd numbers of nodes', () => {
    for (const [G, L, r] of [[256, 44, 1], [255, 44, 1], [64, 41, 3], [7, 5, 2]]) {
      const M = (G - 1) * r + 1 + 2 * L;
      const mesh = uniforms(M, G + L, 0, 1);
      const ker = uniforms(L + 1, r + 7, 0, 1);
      const [a, b] = both(() => {
        const base = alloc(0);
        const pm = put(mesh), pk = put(ker), po = alloc(G);
        convolveSymmetric(pm, pk, po, G, L, r);
        const out = memory().slice(po, po + G);
        release(base);
        return out;
      });
      expect(bits(a)).toEqual(bits(b));
    }
  });

  it('covarianceTerms and crossProducts (8 and 7 parameters, zero weights)', () => {
    for (const k of [8, 7]) {
      const n = 300;
      const w = uniforms(n, 3, 0, 1).map((v, i) => (i % 17 === 0 ? 0 : v));
      const x = Float64Array.from({ length: k * n }, (_, i) => normals(1, i + 11)[0] * (1 + (i % 5)));
      const [a, b] = both(() => {
        const base = alloc(0);
        const kk = k + (k & 1);
        const pw = put(w), px = put(x), pt = alloc(k * n), pu = alloc(n * kk), pp = alloc(k * kk);
        const sw = covarianceTerms(pw, px, n, k, pt, pu);
        crossProducts(pt, pu, n, k, pp);
        const m = memory();
        // the products the callers read: b from a rounded down to even
        const out = [sw];
        for (let r = 0; r < k; r++) for (let c = r & ~1; c < kk; c++) out.push(m[pp + r * kk + c]);
        release(base);
        return out;
      });
      expect(bits(a)).toEqual(bits(b));
    }
  });

  it('smooth2d, with its sum and largest value, into a strided output', () => {
    const nx = 32, ny = 20, lx = 6, ly = 3;
    const stride = nx + 2 * lx, size = stride * (ny + 2 * ly);
    const grid = new Float64Array(size);
    const u = uniforms(nx * ny, 5, 0, 1);
    for (let j = 0; j < ny; j++) for (let i = 0; i < nx; i++) grid[(j + ly) * stride + lx + i] = u[j * nx + i];
    const kx = uniforms(lx + 1, 6, 0, 1), ky = uniforms(ly + 1, 7, 0, 1);
    const so = nx + 2;
    const [a, b] = both(() => {
      const base = alloc(0);
      const pin = put(grid), ptmp = alloc(size), pout = alloc(so * ny), pkx = put(kx), pky = put(ky), ps = alloc(2);
      memory().fill(0, ptmp, ptmp + size);
      smooth2d(pin, ptmp, pout, nx, ny, pkx, lx, pky, ly, so, ps);
      const m = memory();
      const out = [m[ps], m[ps + 1]];
      for (let j = 0; j < ny; j++) for (let i = 0; i < nx; i++) out.push(m[pout + j * so + i]);
      release(base);
      return out;
    });
    expect(bits(a)).toEqual(bits(b));
  });

  it('sortDrawsAt orders as sortDraws does (ties, -0 and +0, values below float32 resolution, zero weights, NaN)', () => {
    const n = 400;
    const base = normals(n, 21);
    const cases: Float64Array[] = [
      base,
      base.map((v) => Math.fround(v)), // float32 values
      base.map((v, i) => (i % 3 === 0 ? Math.round(v * 4) / 4 : v)), // many exact ties
      base.map((v, i) => 1 + v * 1e-12 + (i % 7) * 1e-16), // distinct at far below float32 resolution
      base.map((v, i) => (i % 5 === 0 ? (i % 2 ? -0 : 0) : v)),
      base.map((v, i) => (i === 7 ? NaN : v)),
    ];
    const w = uniforms(n, 22, 0, 1).map((v, i) => (i % 11 === 0 ? 0 : v));
    for (const x of cases) {
      const js = sortDraws(x, w);
      // the scalar reference: sortDraws with the WebAssembly switched off
      setSimd(false);
      const ref = sortDraws(x, w);
      setSimd(true);
      expect(bits(js.x.subarray(0, js.n))).toEqual(bits(ref.x.subarray(0, ref.n)));
      expect(bits(js.w.subarray(0, js.n))).toEqual(bits(ref.w.subarray(0, ref.n)));
      expect(js.total).toBe(ref.total);
      // sortDrawsAt itself either sorts the same way or declines (many ties below float32 resolution)
      const mark = alloc(0);
      const px = put(x), pw = put(w), out = alloc(2 * n);
      const s = sortDrawsAt(px, pw, n, out, out + n);
      if (s) expect(bits(memory().subarray(out, out + s.n))).toEqual(bits(ref.x.subarray(0, ref.n)));
      release(mark);
    }
  });

  it('summarySortedAt: mean, std, quantiles, both HDIs and the Kish ESS of meanStdSorted, quantilesSorted, hdiSorted, kishEss', () => {
    for (const n of [1, 2, 64, 513]) {
      const s = sortDraws(normals(n, n), uniforms(n, n + 1, 0.1, 1));
      const x = s.x.slice(0, s.n), w = s.w.slice(0, s.n);
      const mark = alloc(0);
      const px = put(x), pw = put(w), pp = put(SUMMARY_PROBS), out = alloc(2 + SUMMARY_PROBS.length + 5);
      expect(summarySortedAt(px, pw, s.n, s.total, pp, SUMMARY_PROBS.length, 0.68 * s.total * (1 - 1e-12), 0.95 * s.total * (1 - 1e-12), out)).toBe(true);
      const got = Array.from(memory().subarray(out, out + 2 + SUMMARY_PROBS.length + 5));
      release(mark);
      const ms = new Float64Array(2);
      meanStdSorted(s, ms);
      const q = new Float64Array(SUMMARY_PROBS.length);
      quantilesSorted(s, SUMMARY_PROBS, q);
      const want = [ms[0], ms[1], ...q, ...hdiSorted(s, 0.68), ...hdiSorted(s, 0.95), kish(w)];
      expect(bits(got)).toEqual(bits(want));
    }
  });

  it('binLinear1d, binLinear2d, levelBuckets, levelCells and cellCodes', () => {
    reserve(1 << 16);
    const n = 500;
    const x = normals(n, 31), y = normals(n, 32), w = uniforms(n, 33, 0, 1).map((v, i) => (i % 9 === 0 ? 0 : v));
    const [a, b] = both(() => {
      const mark = alloc(0);
      const px = put(x), pw = put(w);
      // 1-D binning onto 200 nodes
      const M = 200, mesh = alloc(M);
      memory().fill(0, mesh, mesh + M);
      const total = binLinear1d(px, pw, n, -3, 30, M, mesh);
      const out: number[] = [total, ...memory().subarray(mesh, mesh + M)];
      // 2-D binning onto 16 x 16 cells (stride 18) from cell coordinates
      const cxAt = alloc(n), cyAt = alloc(n), fxAt = alloc(n), fyAt = alloc(n), wAt = put(w);
      const cx = int32At(cxAt, n), cy = int32At(cyAt, n);
      const m = memory();
      for (let k = 0; k < n; k++) {
        const p = Math.min(15, Math.max(0, (x[k] + 3) * 2.5)), q = Math.min(15, Math.max(0, (y[k] + 3) * 2.5));
        cx[k] = k % 50 === 0 ? -1 : Math.min(14, Math.floor(p));
        cy[k] = Math.min(14, Math.floor(q));
        m[fxAt + k] = p - cx[k];
        m[fyAt + k] = q - cy[k];
      }
      const g = alloc(18 * 17);
      m.fill(0, g, g + 18 * 17);
      binLinear2d(cx, m.subarray(fxAt, fxAt + n), cy, m.subarray(fyAt, fyAt + n), m.subarray(wAt, wAt + n), n, g, 18);
      out.push(...m.subarray(g, g + 18 * 17));
      // levels' buckets and cells over the 16 x 16 grid
      let max = 0;
      for (let i = 0; i < 18 * 16; i++) max = Math.max(max, m[g + i]);
      const mass = alloc(64);
      m.fill(0, mass, mass + 64);
      const bucketAt = alloc(16 * 8), bucket = int32At(bucketAt, 256);
      levelBuckets(g, 18, 16, 16, 64 / max, 64, mass, bucket);
      out.push(...m.subarray(mass, mass + 64), ...bucket);
      const ioAt = alloc(4), io = int32At(ioAt, 8), v1 = alloc(256), v2 = alloc(256);
      const c = levelCells(g, 18, 16, 16, bucket, 3, 20, 3, v1, v2, io);
      out.push(c.n1, c.n2, ...memory().subarray(v1, v1 + c.n1), ...memory().subarray(v2, v2 + c.n2), io[2], io[3], io[4], io[5]);
      // marching-squares codes at a level over the whole grid (as nodes, stride 18)
      const codesAt = alloc(18 * 17), codes = int32At(codesAt, 2 * 18 * 17);
      const nc = cellCodes(memory().subarray(g, g + 18 * 17), 18, 0, 16, 0, 15, max / 3, codes);
      out.push(nc, ...codes.subarray(0, 2 * nc));
      release(mark);
      return out;
    });
    expect(bits(a)).toEqual(bits(b));
  });
});
