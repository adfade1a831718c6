/**
 * The inner loops of the summaries and densities in WebAssembly SIMD (`kernels.wat`, assembled
 * into `kernels-wasm.ts` by `node scripts/wasm/build.mjs`). Each loop exists here twice: the
 * WebAssembly function, which puts two outputs in the two float64 lanes of one instruction, and
 * the scalar loop it replaces, which is the definition, runs where WebAssembly SIMD is missing,
 * and is what the tests compare the WebAssembly against. Lanes do per output exactly what the
 * scalar loop does, in the same order, so both give the same bits.
 *
 * Memory: one module instance per thread with its own memory. `scratch(bytes)` grows it and
 * returns a Float64Array over all of it; callers lay out their arrays by float64 index and must
 * not keep the view across another `scratch` call (growing detaches it).
 */
import { KERNELS_WASM_BASE64 } from './kernels-wasm.ts';

interface Exports {
  memory: WebAssembly.Memory;
  convSym(pMesh: number, pKer: number, pOut: number, G: number, L: number, r: number): void;
  crossProducts(pT: number, pU: number, n: number, k: number, kk: number, pOut: number): void;
  smooth2d(pIn: number, pTmp: number, pOut: number, nx: number, ny: number, pKx: number, lx: number, pKy: number, ly: number): void;
}

function instantiate(): Exports | null {
  try {
    if (typeof WebAssembly === 'undefined') return null;
    const bytes = Uint8Array.from(atob(KERNELS_WASM_BASE64), (ch) => ch.charCodeAt(0));
    if (!WebAssembly.validate(bytes)) return null; // no SIMD here
    return new WebAssembly.Instance(new WebAssembly.Module(bytes), {}).exports as unknown as Exports;
  } catch {
    return null;
  }
}

let X: Exports | null | undefined;
/** Set to false to run the scalar loops (tests compare the two). */
let useWasm = true;

function wasm(): Exports | null {
  if (!useWasm) return null;
  if (X === undefined) X = instantiate();
  return X;
}

/** Whether the WebAssembly loops are in use (false: the scalar loops). */
export function simdEnabled(): boolean {
  return wasm() !== null;
}

/** Switch the WebAssembly loops off or on (for tests). */
export function setSimd(on: boolean): void {
  useWasm = on;
}

let jsMemory = new Float64Array(1 << 13);
let view: Float64Array | null = null;

/** A Float64Array over at least `doubles` float64 slots of scratch memory (see the module comment). */
export function scratch(doubles: number): Float64Array {
  const x = wasm();
  if (!x) {
    if (jsMemory.length < doubles) jsMemory = new Float64Array(Math.max(doubles, 2 * jsMemory.length));
    return jsMemory;
  }
  const bytes = doubles * 8;
  const have = x.memory.buffer.byteLength;
  if (have < bytes) x.memory.grow(Math.ceil((bytes - have) / 65536));
  if (!view || view.buffer !== x.memory.buffer) view = new Float64Array(x.memory.buffer);
  return view;
}

/**
 * Binned-KDE convolution on scratch memory `m` (from `scratch`), all positions float64 indices:
 *   m[out + g] = m[ker] m[at] + sum_{d = 1 .. L} m[ker + d] (m[at - d] + m[at + d]),  at = mesh + L + g r,
 * for g = 0 .. G - 1, summed in that order.
 */
export function convolveSymmetric(m: Float64Array, mesh: number, ker: number, out: number, G: number, L: number, r: number): void {
  const x = wasm();
  if (x) {
    x.convSym(mesh * 8, ker * 8, out * 8, G, L, r);
    return;
  }
  const k0 = m[ker];
  for (let g = 0; g < G; g++) {
    const at = mesh + L + g * r;
    let s = k0 * m[at];
    for (let d = 1; d <= L; d++) s += m[ker + d] * (m[at - d] + m[at + d]);
    m[out + g] = s;
  }
}

/**
 * Cross products on scratch memory: m[out + a kk + b] = sum_i m[t + a n + i] m[u + i kk + b] for
 * a < k and (a rounded down to even) <= b < kk, summed in order of i (kk = k rounded up to even;
 * column k of u, when k is odd, must be zero).
 */
export function crossProducts(m: Float64Array, t: number, u: number, n: number, k: number, out: number): void {
  const kk = k + (k & 1);
  const x = wasm();
  if (x) {
    x.crossProducts(t * 8, u * 8, n, k, kk, out * 8);
    return;
  }
  for (let a = 0; a < k; a++)
    for (let b = a & ~1; b < kk; b++) {
      let s = 0;
      for (let i = 0; i < n; i++) s += m[t + a * n + i] * m[u + i * kk + b];
      m[out + a * kk + b] = s;
    }
}

/**
 * Separable smoothing on scratch memory (nx even): the grid at `inp` has ny rows of stride
 * sx = nx + 2 lx with lx zero columns each side and ly zero rows above and below; rows are
 * smoothed with taps kx[0 .. lx] into `tmp` (same layout; its padding rows must be zero), then
 * columns with ky[0 .. ly] into `out` (ny rows of nx). Each value is k[0] c + sum_d k[d] (left + right).
 */
export function smooth2d(m: Float64Array, inp: number, tmp: number, out: number, nx: number, ny: number, kx: number, lx: number, ky: number, ly: number): void {
  const x = wasm();
  if (x) {
    x.smooth2d(inp * 8, tmp * 8, out * 8, nx, ny, kx * 8, lx, ky * 8, ly);
    return;
  }
  const sx = nx + 2 * lx;
  for (let j = 0; j < ny; j++)
    for (let i = 0; i < nx; i++) {
      const c = (j + ly) * sx + i + lx;
      let s = m[kx] * m[inp + c];
      for (let d = 1; d <= lx; d++) s += m[kx + d] * (m[inp + c - d] + m[inp + c + d]);
      m[tmp + c] = s;
    }
  for (let j = 0; j < ny; j++)
    for (let i = 0; i < nx; i++) {
      const c = tmp + (j + ly) * sx + i + lx;
      let s = m[ky] * m[c];
      for (let d = 1; d <= ly; d++) s += m[ky + d] * (m[c - d * sx] + m[c + d * sx]);
      m[out + j * nx + i] = s;
    }
}
