/**
 * The inner loops of the summaries and densities in WebAssembly SIMD (`kernels.wat`, assembled
 * into `kernels-wasm.ts` by `node scripts/wasm/build.mjs`). Each loop exists here twice: the
 * WebAssembly function, and the scalar loop it replaces, which is the definition, runs where
 * WebAssembly SIMD is missing (or is switched off, `setSimd(false)`), and is what the tests
 * compare the WebAssembly against. The WebAssembly does per output exactly what the scalar
 * loop does, in the same order (lanes of two only let two outputs share an instruction), so
 * both give the same bits.
 *
 * Memory: one module instance per thread, with its own memory used as a stack of float64
 * slots: `alloc(n)` returns the index of n free slots, `release(at)` frees them and every
 * later allocation. `memory()` is a Float64Array over all of it; growing the memory (in
 * `alloc` or `reserve`) detaches views made before, so a caller holding views across calls
 * first `reserve`s what those calls will allocate. `offsetOf(a)` gives the slot of an array
 * that lies in this memory, so callers can pass their arrays without copying.
 */
import { KERNELS_WASM_BASE64 } from './kernels-wasm.ts';

interface Exports {
  memory: WebAssembly.Memory;
  convSym(pMesh: number, pKer: number, pOut: number, G: number, L: number, r: number): void;
  crossProducts(pT: number, pU: number, n: number, k: number, kk: number, pOut: number): void;
  smooth2d(pIn: number, pTmp: number, pOut: number, nx: number, ny: number, pKx: number, lx: number, pKy: number, ly: number, so: number, pStats: number): void;
  levelBuckets(pZ: number, stride: number, nx: number, ny: number, scale: number, B: number, pMass: number, pBkt: number): void;
  levelCells(pZ: number, stride: number, nx: number, ny: number, pBkt: number, b1: number, b2: number, bMin: number, pOut1: number, pOut2: number, pCount: number, pBox: number): void;
  binLinear2d(pCx: number, pFx: number, pCy: number, pFy: number, pW: number, n: number, pOrigin: number, stride: number): void;
  cellCodes(pV: number, NX: number, I0: number, I1: number, J0: number, J1: number, level: number, pOut: number): number;
  sortDraws(pX: number, pW: number, n: number, pOX: number, pOW: number, pWork: number, pTotal: number): number;
  summarySorted(pX: number, pW: number, n: number, total: number, pProbs: number, K: number, need68: number, need95: number, pOut: number): void;
  binLinear1d(pX: number, pW: number, n: number, origin: number, inv: number, M: number, pMesh: number): number;
  covarianceTerms(pW: number, pX: number, n: number, k: number, kk: number, pT: number, pU: number): number;
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

/** Switch the WebAssembly loops off or on (for tests); the memory starts empty. */
export function setSimd(on: boolean): void {
  useWasm = on;
  top = 0;
  view = null;
}

let jsMemory = new Float64Array(1 << 13);
let view: Float64Array | null = null;
/** Slots in use (the stack's top). */
let top = 0;

function capacity(): number {
  const x = wasm();
  return x ? x.memory.buffer.byteLength / 8 : jsMemory.length;
}

/** Make room for `slots` more float64 slots above the stack's top (may detach earlier views). */
export function reserve(slots: number): void {
  const need = top + slots;
  if (need <= capacity()) return;
  const x = wasm();
  if (x) {
    const bytes = need * 8;
    x.memory.grow(Math.ceil((bytes - x.memory.buffer.byteLength) / 65536));
  } else {
    const bigger = new Float64Array(Math.max(need, 2 * jsMemory.length));
    bigger.set(jsMemory);
    jsMemory = bigger;
  }
}

/** The index of `slots` free float64 slots (see the module comment). */
export function alloc(slots: number): number {
  reserve(slots);
  const at = top;
  top += slots;
  return at;
}

/** Frees the slots from `at` up (what `alloc` returned, and everything allocated after it). */
export function release(at: number): void {
  top = at;
}

/** A Float64Array over the whole memory (valid until the memory grows). */
export function memory(): Float64Array {
  const x = wasm();
  if (!x) return jsMemory;
  if (!view || view.buffer !== x.memory.buffer) view = new Float64Array(x.memory.buffer);
  return view;
}

/** The slot of `a` when it lies in this memory (and is aligned), else -1. */
export function offsetOf(a: Float64Array): number {
  const m = memory();
  return a.buffer === m.buffer && a.byteOffset % 8 === 0 ? a.byteOffset / 8 : -1;
}

/** The slot of `a`: where it is when it lies in this memory, else a copy in slots allocated here. */
export function place(a: Float64Array): number {
  const at0 = offsetOf(a);
  if (at0 >= 0) return at0;
  const at = alloc(a.length);
  memory().set(a, at);
  return at;
}

/**
 * Binned-KDE convolution, all positions slots of `memory()`:
 *   m[out + g] = m[ker] m[at] + sum_{d = 1 .. L} m[ker + d] (m[at - d] + m[at + d]),  at = mesh + L + g r,
 * for g = 0 .. G - 1, summed in that order.
 */
export function convolveSymmetric(mesh: number, ker: number, out: number, G: number, L: number, r: number): void {
  const x = wasm();
  if (x) {
    x.convSym(mesh * 8, ker * 8, out * 8, G, L, r);
    return;
  }
  const m = memory();
  const k0 = m[ker];
  for (let g = 0; g < G; g++) {
    const at = mesh + L + g * r;
    let s = k0 * m[at];
    for (let d = 1; d <= L; d++) s += m[ker + d] * (m[at - d] + m[at + d]);
    m[out + g] = s;
  }
}

/**
 * Linear binning for the binned KDE: for each draw with w > 0 (n of them from slots x and w),
 * position p = (x - origin) inv; when 0 <= p < M - 1, w (1 - f) goes to mesh node floor(p) and
 * w f to the next (f = p - floor(p)). The mesh must be zero before. Returns the total weight.
 */
export function binLinear1d(x: number, w: number, n: number, origin: number, inv: number, M: number, mesh: number): number {
  const X = wasm();
  if (X) return X.binLinear1d(x * 8, w * 8, n, origin, inv, M, mesh * 8);
  const m = memory();
  let total = 0;
  for (let i = 0; i < n; i++) {
    const wi = m[w + i];
    if (!(wi > 0)) continue;
    total += wi;
    const pos = (m[x + i] - origin) * inv;
    if (!(pos >= 0 && pos < M - 1)) continue;
    const j = Math.floor(pos);
    const f = pos - j;
    m[mesh + j] += wi * (1 - f);
    m[mesh + j + 1] += wi * f;
  }
  return total;
}

/**
 * The inputs of a weighted covariance of k columns (slots x + a n, n each) with weights at w:
 * per column its mean sum(w x) / sum(w) over positive weights, u[i kk + a] = x_ai - m_a (the
 * padding column of an odd k zero) and t[a n + i] = w_i u[i kk + a]; returns sum(w) over all
 * draws (kk = k rounded up to even).
 */
export function covarianceTerms(w: number, x: number, n: number, k: number, t: number, u: number): number {
  const kk = k + (k & 1);
  const X = wasm();
  if (X) return X.covarianceTerms(w * 8, x * 8, n, k, kk, t * 8, u * 8);
  const m = memory();
  let sw = 0;
  for (let i = 0; i < n; i++) sw += m[w + i];
  for (let a = 0; a < k; a++) {
    let swa = 0;
    let swx = 0;
    for (let i = 0; i < n; i++) {
      const wi = m[w + i];
      if (wi === 0) continue;
      swa += wi;
      swx += wi * m[x + a * n + i];
    }
    const mean = swx / swa;
    for (let i = 0; i < n; i++) {
      const d = m[x + a * n + i] - mean;
      m[u + i * kk + a] = d;
      m[t + a * n + i] = m[w + i] * d;
    }
  }
  if (kk > k) for (let i = 0; i < n; i++) m[u + i * kk + k] = 0;
  return sw;
}

/**
 * Cross products: m[out + a kk + b] = sum_i m[t + a n + i] m[u + i kk + b] for a < k and
 * (a rounded down to even) <= b < kk, summed in order of i (kk = k rounded up to even).
 */
export function crossProducts(t: number, u: number, n: number, k: number, out: number): void {
  const kk = k + (k & 1);
  const x = wasm();
  if (x) {
    x.crossProducts(t * 8, u * 8, n, k, kk, out * 8);
    return;
  }
  const m = memory();
  for (let a = 0; a < k; a++)
    for (let b = a & ~1; b < kk; b++) {
      let s = 0;
      for (let i = 0; i < n; i++) s += m[t + a * n + i] * m[u + i * kk + b];
      m[out + a * kk + b] = s;
    }
}

/**
 * Separable smoothing (nx even): the grid at slot `inp` has ny rows of stride sx = nx + 2 lx
 * with lx zero columns each side and ly zero rows above and below; rows are smoothed with taps
 * kx[0 .. lx] into `tmp` (same layout; its padding rows must be zero), then columns with
 * ky[0 .. ly] into `out` (ny rows of nx at row stride `so`). Each value is
 * k[0] c + sum_d k[d] (left + right). Writes the output's sum and largest value to slots
 * stats, stats + 1 (the sum taken in two halves, so its rounding is not that of one running sum).
 */
export function smooth2d(inp: number, tmp: number, out: number, nx: number, ny: number, kx: number, lx: number, ky: number, ly: number, so: number, stats: number): void {
  const x = wasm();
  if (x) {
    x.smooth2d(inp * 8, tmp * 8, out * 8, nx, ny, kx * 8, lx, ky * 8, ly, so, stats * 8);
    return;
  }
  const m = memory();
  const sx = nx + 2 * lx;
  for (let j = 0; j < ny; j++)
    for (let i = 0; i < nx; i++) {
      const c = (j + ly) * sx + i + lx;
      let s = m[kx] * m[inp + c];
      for (let d = 1; d <= lx; d++) s += m[kx + d] * (m[inp + c - d] + m[inp + c + d]);
      m[tmp + c] = s;
    }
  let even = 0, odd = 0, max = -Infinity;
  for (let j = 0; j < ny; j++)
    for (let i = 0; i < nx; i++) {
      const c = tmp + (j + ly) * sx + i + lx;
      let s = m[ky] * m[c];
      for (let d = 1; d <= ly; d++) s += m[ky + d] * (m[c - d * sx] + m[c + d * sx]);
      m[out + j * so + i] = s;
      if (i & 1) odd += s;
      else even += s;
      if (s > max) max = s;
    }
  m[stats] = even + odd;
  m[stats + 1] = max;
}

/**
 * Buckets for `creditLevels` over the cells at slot z + j stride + i (i < nx, j < ny): each
 * positive value v goes to bucket min(B - 1, trunc(v scale)) (recorded per cell in row order in
 * `bucket`, -1 for v <= 0) and adds v to mass[b] (slots from `mass`, zero before), summed in
 * runs of neighbouring cells of one bucket.
 */
export function levelBuckets(z: number, stride: number, nx: number, ny: number, scale: number, B: number, mass: number, bucket: Int32Array): void {
  const X = wasm();
  if (X) {
    X.levelBuckets(z * 8, stride, nx, ny, scale, B, mass * 8, bucket.byteOffset);
    return;
  }
  const m = memory();
  let c = 0;
  let cur = -1;
  let run = 0;
  for (let j = 0; j < ny; j++)
    for (let i = 0; i < nx; i++, c++) {
      const v = m[z + j * stride + i];
      if (v > 0) {
        let b = Math.trunc(v * scale);
        if (b >= B) b = B - 1;
        if (b !== cur) {
          if (cur >= 0) m[mass + cur] += run;
          cur = b;
          run = 0;
        }
        run += v;
        bucket[c] = b;
      } else bucket[c] = -1;
    }
  if (cur >= 0) m[mass + cur] += run;
}

/**
 * The values of the cells (as in `levelBuckets`) in bucket b1 and in bucket b2, into slots
 * out1 and out2, with their counts; and the box [i0, i1, j0, j1] of the cells in buckets >= bMin
 * (i1 = -1 when none).
 */
export function levelCells(z: number, stride: number, nx: number, ny: number, bucket: Int32Array, b1: number, b2: number, bMin: number, out1: number, out2: number, io: Int32Array): { n1: number; n2: number } {
  const X = wasm();
  if (X) {
    X.levelCells(z * 8, stride, nx, ny, bucket.byteOffset, b1, b2, bMin, out1 * 8, out2 * 8, io.byteOffset, io.byteOffset + 8);
    return { n1: io[0], n2: io[1] };
  }
  const m = memory();
  let n1 = 0, n2 = 0, i0 = nx, i1 = -1, j0 = ny, j1 = -1, c = 0;
  for (let j = 0; j < ny; j++)
    for (let i = 0; i < nx; i++, c++) {
      const b = bucket[c];
      if (b < bMin) continue;
      if (i < i0) i0 = i;
      if (i > i1) i1 = i;
      if (j < j0) j0 = j;
      if (j > j1) j1 = j;
      if (b === b1) m[out1 + n1++] = m[z + j * stride + i];
      if (b === b2) m[out2 + n2++] = m[z + j * stride + i];
    }
  io[2] = i0;
  io[3] = i1;
  io[4] = j0;
  io[5] = j1;
  return { n1, n2 };
}

/**
 * Linear binning of draws onto a grid at slot origin (row stride `stride`): each draw with
 * w > 0 and both cells >= 0 adds w (1 - fy)(1 - fx), w (1 - fy) fx, w fy (1 - fx), w fy fx to
 * cells (cx, cy), (cx + 1, cy), (cx, cy + 1), (cx + 1, cy + 1). cx, cy are Int32Arrays and
 * fx, fy, w Float64Arrays in this memory.
 */
export function binLinear2d(cx: Int32Array, fx: Float64Array, cy: Int32Array, fy: Float64Array, w: Float64Array, n: number, origin: number, stride: number): void {
  const X = wasm();
  if (X && cx.buffer === X.memory.buffer && cy.buffer === cx.buffer && fx.buffer === cx.buffer && fy.buffer === cx.buffer && w.buffer === cx.buffer) {
    X.binLinear2d(cx.byteOffset, fx.byteOffset, cy.byteOffset, fy.byteOffset, w.byteOffset, n, origin * 8, stride);
    return;
  }
  const m = memory();
  for (let k = 0; k < n; k++) {
    const wk = w[k];
    const i = cx[k];
    const j = cy[k];
    if (!(wk > 0) || i < 0 || j < 0) continue;
    const c = origin + j * stride + i;
    const gx = fx[k];
    const gy = fy[k];
    const a = wk * (1 - gy);
    const b = wk * gy;
    m[c] += a * (1 - gx);
    m[c + 1] += a * gx;
    m[c + stride] += b * (1 - gx);
    m[c + stride + 1] += b * gx;
  }
}

/** An Int32Array over `count` int32 values at slot `at` (count / 2 slots, rounded up). */
export function int32At(at: number, count: number): Int32Array {
  return new Int32Array(memory().buffer, at * 8, count);
}

/**
 * The draws with a positive weight and a non-NaN value (n of them from slots x and w), sorted
 * by value (ties in their original order, -0 before +0: the order of the order-preserving
 * 64-bit pattern) into slots outX and outW, with their total weight summed in the original
 * order. Returns their number and total, or null when the WebAssembly loop is not available
 * or gives up (many distinct values tied at float32 resolution), for the caller to sort
 * another way (`sortDraws` in summary.ts). See `sortDraws` in kernels.wat.
 */
export function sortDrawsAt(x: number, w: number, n: number, outX: number, outW: number): { n: number; total: number } | null {
  const X = wasm();
  if (!X) return null;
  // work: 20 n + 4 (n + 1) bytes, then the total
  const slots = Math.ceil((24 * n + 4) / 8);
  const work = alloc(slots + 1);
  const kept = X.sortDraws(x * 8, w * 8, n, outX * 8, outW * 8, work * 8, (work + slots) * 8);
  const total = memory()[work + slots];
  release(work);
  return kept < 0 ? null : { n: kept, total };
}

/**
 * Summary of sorted draws (slots x, w; n >= 1, weights summing to `total`), written from slot
 * `out`: mean and standard deviation (sums in sorted order), the quantiles at `probs`
 * (ascending; midpoint rule), the shortest intervals holding weight need68 and need95 (lo, hi
 * each) and the Kish ESS of the weights; the operations of `meanStdSorted`,
 * `quantilesSorted`, `hdiSorted` and `kishEss`, in their order. Null without WebAssembly.
 */
export function summarySortedAt(x: number, w: number, n: number, total: number, probs: number, K: number, need68: number, need95: number, out: number): boolean {
  const X = wasm();
  if (!X) return false;
  X.summarySorted(x * 8, w * 8, n, total, probs * 8, K, need68, need95, out * 8);
  return true;
}

/**
 * Marching-squares codes of the cells with lower-left node I0 .. I1, J0 .. J1 of the node grid
 * V (row stride NX): for each cell neither wholly outside nor wholly inside `level`, its node
 * index and code (bl >= level: 1, br: 2, tr: 4, tl: 8) as a pair in `out`, in row order;
 * returns their number. V and out may be JavaScript arrays (scalar loop) or lie in this memory.
 */
export function cellCodes(V: Float64Array, NX: number, I0: number, I1: number, J0: number, J1: number, level: number, out: Int32Array): number {
  const X = wasm();
  if (X && V.buffer === X.memory.buffer && out.buffer === V.buffer) return X.cellCodes(V.byteOffset, NX, I0, I1, J0, J1, level, out.byteOffset);
  let count = 0;
  for (let J = J0; J <= J1; J++)
    for (let I = I0; I <= I1; I++) {
      const n0 = J * NX + I;
      const code = (V[n0] >= level ? 1 : 0) | (V[n0 + 1] >= level ? 2 : 0) | (V[n0 + NX + 1] >= level ? 4 : 0) | (V[n0 + NX] >= level ? 8 : 0);
      if (code === 0 || code === 15) continue;
      out[2 * count] = n0;
      out[2 * count + 1] = code;
      count++;
    }
  return count;
}
