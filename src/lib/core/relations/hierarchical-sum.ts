/**
 * The sum over objects of the hierarchical fit's log marginal likelihoods, for one or several
 * parameter sets at a time, optionally split across worker threads. The per-draw work runs in
 * WebAssembly with SIMD (`likelihood.wat`, assembled into `likelihood-wasm.ts`) on one shared
 * memory that every thread reads without a copy. The objects are summed in fixed chunks of
 * CHUNK_OBJECTS into per-chunk partial sums that are then added in chunk order, so the result
 * does not depend on the number of threads (nor on which thread did which chunk), nor on how
 * many parameter sets are evaluated together.
 */
import { availableParallelism } from 'node:os';
import { Worker } from 'node:worker_threads';
import { PosterityError, problem } from '../problems.ts';
import { LIKELIHOOD_WASM_BASE64 } from './likelihood-wasm.ts';

/** Objects per chunk: the unit of work and of the fixed-order summation. */
export const CHUNK_OBJECTS = 1024;

/** Each object's draws are padded to a multiple of this many (the SIMD width of the single-precision sum). */
export const DRAW_ALIGN = 4;

/**
 * 'double': every term in float64 (relative error of each term below 1e-14). 'single': the
 * per-draw arithmetic and the exponential in float32, each term widened to float64 before it is
 * added (relative error of each term about 1e-7 times the size of its exponent, see
 * likelihood.wat); about twice as fast.
 */
export type Precision = 'double' | 'single';

/**
 * Per-draw and per-object arrays of the likelihood. Draw k of kept object i sits at index
 * offsets[i] + k of dx, dy and c as (x - xc_i, y - yc_i, C - Cmax_i), C = ln w - ln pi the draw's
 * log importance weight; each object's draws are padded to a multiple of DRAW_ALIGN with
 * (0, 0, -Infinity), which add exactly nothing.
 */
export interface CompactTerms {
  dx: Float32Array;
  dy: Float32Array;
  c: Float32Array;
  /** n + 1 offsets into dx, dy and c, each a multiple of DRAW_ALIGN. */
  offsets: Int32Array;
  /** Per object: max over its draws of C (so every shifted term C - Cmax - quadratic is <= 0). */
  cmax: Float64Array;
  /** Per object: centre of its draws in x and y (float64; the draws are stored relative to it). */
  xc: Float64Array;
  yc: Float64Array;
  /** Per object: dz (zeros without the covariate). */
  dz: Float64Array;
  /** Per object: weight f_i in (0, 1] of its log marginal likelihood, or undefined (all 1). */
  f?: Float64Array;
  n: number;
}

/** Padded length of `count` draws. */
export const paddedDraws = (count: number): number => Math.ceil(count / DRAW_ALIGN) * DRAW_ALIGN;

/** Byte addresses of the arrays in the shared WebAssembly memory. */
interface Layout {
  n: number;
  maxBatch: number;
  hasF: boolean;
  theta: number;
  off: number;
  xc: number;
  yc: number;
  dz: number;
  cmax: number;
  f: number;
  acc: number;
  dx: number;
  dy: number;
  c: number;
  draws: number;
  bytes: number;
}

/** The 64-entry table 2^(j/64) of the float64 exponential sits at byte 0. */
const TABLE_BYTES = 64 * 8;

function layoutFor(terms: CompactTerms, maxBatch: number): Layout {
  const n = terms.n;
  const draws = terms.offsets[n];
  let p = TABLE_BYTES;
  const take = (bytes: number): number => {
    const at = p;
    p = Math.ceil((p + bytes) / 16) * 16;
    return at;
  };
  const theta = take(48 * maxBatch);
  const off = take(4 * (n + 1));
  const xc = take(8 * n), yc = take(8 * n), dz = take(8 * n), cmax = take(8 * n);
  const f = take(terms.f ? 8 * n : 0);
  const acc = take(8 * n * maxBatch);
  const dx = take(4 * draws), dy = take(4 * draws), c = take(4 * draws);
  return { n, maxBatch, hasF: terms.f !== undefined, theta, off, xc, yc, dz, cmax, f, acc, dx, dy, c, draws, bytes: p };
}

/**
 * Plain JavaScript (no TypeScript, so it runs unchanged in a worker started from a string and,
 * through `new Function`, on the main thread: the same code gives the same bits everywhere).
 *
 * makeChunkSum(X, L, buf, MAXB) returns chunkSum(c, m, single, out), which writes to
 * out[c MAXB + q] the sum over the objects of chunk c of f_i ln L_i for parameter set q < m
 * (P_q = (A, b, hs, ht, mu, cc) at L.theta), with ln L_i = Cmax_i + ln S_i and S_i the sum of
 * exp(v_ik) from the WebAssembly function (see likelihood.wat). Every v_ik <= 0, so nothing can
 * overflow. An object whose S_i falls below TINY (all its terms small, where the exponential's
 * cut-off near its underflow could matter) is summed again here, in float64, by the two-pass
 * log-sum-exp with Math.exp.
 */
const KERNEL = `
function makeChunkSum(X, L, buf, MAXB) {
  const n = L.n;
  const off = new Int32Array(buf, L.off, n + 1);
  const xc = new Float64Array(buf, L.xc, n), yc = new Float64Array(buf, L.yc, n), dz = new Float64Array(buf, L.dz, n);
  const cmax = new Float64Array(buf, L.cmax, n);
  const f = L.hasF ? new Float64Array(buf, L.f, n) : null;
  const acc = new Float64Array(buf, L.acc, n * L.maxBatch);
  const th = new Float64Array(buf, L.theta, 6 * L.maxBatch);
  const dx = new Float32Array(buf, L.dx, L.draws), dy = new Float32Array(buf, L.dy, L.draws), cc = new Float32Array(buf, L.c, L.draws);
  function exact(i, q) {
    const A = th[6 * q], b = th[6 * q + 1], hs = th[6 * q + 2], ht = th[6 * q + 3], mu = th[6 * q + 4], c = th[6 * q + 5];
    const R = yc[i] - A - b * xc[i] - c * dz[i];
    const U = xc[i] - mu;
    let m = -Infinity;
    for (let j = off[i]; j < off[i + 1]; j++) {
      const r = R + dy[j] - b * dx[j];
      const u = U + dx[j];
      const v = cc[j] - (hs * r * r + ht * u * u);
      if (v > m) m = v;
    }
    if (m === -Infinity) return -Infinity;
    let s = 0;
    for (let j = off[i]; j < off[i + 1]; j++) {
      const r = R + dy[j] - b * dx[j];
      const u = U + dx[j];
      s += Math.exp(cc[j] - (hs * r * r + ht * u * u) - m);
    }
    return m + Math.log(s);
  }
  return function chunkSum(c, m, single, out) {
    const lo = c * CHUNK, hi = Math.min(n, lo + CHUNK);
    (single ? X.sums32 : X.sums64)(lo, hi, m, L.theta, L.off, L.xc, L.yc, L.dz, L.acc, L.dx, L.dy, L.c);
    const tiny = single ? 1e-25 : 1e-250;
    for (let q = 0; q < m; q++) {
      let total = 0;
      for (let i = lo; i < hi; i++) {
        const s = acc[i * m + q];
        const li = cmax[i] + (s > tiny ? Math.log(s) : exact(i, q));
        total += f ? f[i] * li : li;
      }
      out[c * MAXB + q] = total;
    }
  };
}
`;

/** Control words in the shared Int32Array. */
const GEN = 0, STOP = 1, NEXT = 2, DONE = 3, M = 4, SINGLE = 5;

const WORKER = `${KERNEL}
const { workerData } = typeof require === 'function' ? require('node:worker_threads') : process.getBuiltinModule('node:worker_threads');
const { ctrl, out, memory, module, L, nChunks } = workerData;
const X = new WebAssembly.Instance(module, { env: { memory } }).exports;
const run = makeChunkSum(X, L, memory.buffer, L.maxBatch);
let gen = 0;
for (;;) {
  Atomics.wait(ctrl, ${GEN}, gen);
  gen = Atomics.load(ctrl, ${GEN});
  if (Atomics.load(ctrl, ${STOP}) === 1) break;
  const m = Atomics.load(ctrl, ${M}), single = Atomics.load(ctrl, ${SINGLE}) === 1;
  for (;;) {
    const c = Atomics.add(ctrl, ${NEXT}, 1);
    if (c >= nChunks) break;
    run(c, m, single, out);
    if (Atomics.add(ctrl, ${DONE}, 1) + 1 === nChunks) Atomics.notify(ctrl, ${DONE});
  }
}
`;

type MakeChunkSum = (X: WebAssembly.Exports, L: Layout, buf: ArrayBufferLike, maxBatch: number) => (c: number, m: number, single: boolean, out: Float64Array) => void;
let mainMaker: MakeChunkSum | undefined;
function chunkSumMaker(): MakeChunkSum {
  mainMaker ??= new Function('CHUNK', `${KERNEL}\nreturn makeChunkSum;`)(CHUNK_OBJECTS) as MakeChunkSum;
  return mainMaker;
}

let compiled: WebAssembly.Module | undefined;
function wasmModule(): WebAssembly.Module {
  compiled ??= new WebAssembly.Module(Uint8Array.from(atob(LIKELIHOOD_WASM_BASE64), (ch) => ch.charCodeAt(0)));
  return compiled;
}

/** Draws below which the default is one thread (starting workers costs more than it saves). */
const PARALLEL_MIN_DRAWS = 1 << 18;

/** Threads to use: `requested` (clamped to 1 .. chunks), else one per core for large data, else 1. */
export function threadsFor(requested: number | undefined, terms: CompactTerms): number {
  const nChunks = Math.ceil(terms.n / CHUNK_OBJECTS);
  if (requested !== undefined) {
    if (!(Number.isInteger(requested) && requested >= 1)) {
      throw new PosterityError(problem({ message: 'hierarchical fit: threads must be a whole number >= 1', expected: '>= 1', got: String(requested) }));
    }
    return Math.max(1, Math.min(requested, nChunks));
  }
  if (terms.offsets[terms.n] < PARALLEL_MIN_DRAWS) return 1;
  return Math.max(1, Math.min(availableParallelism(), nChunks));
}

export interface LikelihoodSum {
  /** sum_i f_i ln L_i at P = (A, b, hs, ht, mu, c), see KERNEL. */
  sum(A: number, b: number, hs: number, ht: number, mu: number, c: number, precision?: Precision): number;
  /**
   * The same for m parameter sets at once, P_q at params[6 q .. 6 q + 5], written to out[q]:
   * bit for bit what m calls of sum() give, with each object's draws read from memory once.
   */
  sumBatch(params: Float64Array, m: number, out: Float64Array, precision?: Precision): void;
  /** Stops and terminates the worker threads (idempotent; the sum then runs on this thread). */
  close(): void;
  /** Resolves when every worker thread has exited (after close()). */
  whenClosed(): Promise<void>;
  threads: number;
}

/** Longest wait for the workers without any chunk finishing before giving up. */
const STALL_MS = 120_000;

/** Largest WebAssembly memory (wasm32): 65536 pages of 64 KiB. */
const MAX_PAGES = 65536;

/**
 * The likelihood sum over `terms` on `threads` threads: this thread plus threads - 1 workers,
 * which take chunks from a shared counter; this thread blocks in Atomics.wait for the last
 * chunk. The terms are copied once into a shared WebAssembly memory. Workers are unref'd (they
 * never keep the process alive) and must be released with close() (the hierarchical fit does so
 * in a finally block). `maxBatch` (default 16) is the most parameter sets evaluated in one pass;
 * larger batches are split.
 */
export function createLikelihoodSum(terms: CompactTerms, threads: number, maxBatch = 16): LikelihoodSum {
  const L = layoutFor(terms, maxBatch);
  const pages = Math.ceil(L.bytes / 65536);
  if (pages > MAX_PAGES) {
    throw new PosterityError(
      problem({
        message: `hierarchical fit: ${L.draws} draws of ${terms.n} objects need ${(L.bytes / 2 ** 30).toFixed(1)} GiB, more than the 4 GiB the likelihood's memory can address`,
        expected: 'fewer draws per object (maxDraws) or fewer objects per bin',
      }),
    );
  }
  const memory = new WebAssembly.Memory({ initial: pages, maximum: pages, shared: true });
  const buf = memory.buffer;
  const table = new Float64Array(buf, 0, 64);
  for (let j = 0; j < 64; j++) table[j] = Math.pow(2, j / 64);
  new Int32Array(buf, L.off, L.n + 1).set(terms.offsets.subarray(0, L.n + 1));
  new Float64Array(buf, L.xc, L.n).set(terms.xc.subarray(0, L.n));
  new Float64Array(buf, L.yc, L.n).set(terms.yc.subarray(0, L.n));
  new Float64Array(buf, L.dz, L.n).set(terms.dz.subarray(0, L.n));
  new Float64Array(buf, L.cmax, L.n).set(terms.cmax.subarray(0, L.n));
  if (terms.f) new Float64Array(buf, L.f, L.n).set(terms.f.subarray(0, L.n));
  new Float32Array(buf, L.dx, L.draws).set(terms.dx.subarray(0, L.draws));
  new Float32Array(buf, L.dy, L.draws).set(terms.dy.subarray(0, L.draws));
  new Float32Array(buf, L.c, L.draws).set(terms.c.subarray(0, L.draws));
  const theta = new Float64Array(buf, L.theta, 6 * maxBatch);

  const module = wasmModule();
  const X = new WebAssembly.Instance(module, { env: { memory } }).exports;
  const run = chunkSumMaker()(X, L, buf, maxBatch);
  const nChunks = Math.ceil(terms.n / CHUNK_OBJECTS);
  const out = new Float64Array(new SharedArrayBuffer(8 * Math.max(1, nChunks * maxBatch)));
  const ctrl = new Int32Array(new SharedArrayBuffer(4 * 6));
  let workers: Worker[] = [];
  const exits: Promise<void>[] = [];
  for (let k = 1; k < threads; k++) {
    // execArgv []: no loaders or module-type flags of the parent (the code is plain CommonJS)
    const w = new Worker(`const CHUNK = ${CHUNK_OBJECTS};\n${WORKER}`, { eval: true, execArgv: [], workerData: { ctrl, out, memory, module, L, nChunks } });
    // a worker that fails takes no chunks (or stalls one, reported by sum()); its error must not end the process
    w.on('error', () => {});
    w.unref();
    exits.push(new Promise<void>((resolve) => w.once('exit', () => resolve())));
    workers.push(w);
  }

  /** Evaluates sets 0 .. m - 1 already written to `theta` (m <= maxBatch) into out[c maxBatch + q]. */
  const evaluate = (m: number, single: boolean, self: LikelihoodSum): void => {
    if (workers.length === 0) {
      for (let k = 0; k < nChunks; k++) run(k, m, single, out);
      return;
    }
    Atomics.store(ctrl, M, m);
    Atomics.store(ctrl, SINGLE, single ? 1 : 0);
    // DONE before NEXT: a worker still looping from the last call may take a chunk as soon as
    // NEXT is 0, and its count must land after the reset (theta, m and the precision are written before either)
    Atomics.store(ctrl, DONE, 0);
    Atomics.store(ctrl, NEXT, 0);
    Atomics.add(ctrl, GEN, 1);
    Atomics.notify(ctrl, GEN);
    for (;;) {
      const k = Atomics.add(ctrl, NEXT, 1);
      if (k >= nChunks) break;
      run(k, m, single, out);
      Atomics.add(ctrl, DONE, 1);
    }
    let last = Date.now();
    let seen = Atomics.load(ctrl, DONE);
    while (seen < nChunks) {
      Atomics.wait(ctrl, DONE, seen, 1000);
      const now = Atomics.load(ctrl, DONE);
      if (now !== seen) {
        seen = now;
        last = Date.now();
      } else if (Date.now() - last > STALL_MS) {
        self.close();
        throw new Error('hierarchical fit: a worker thread stopped responding');
      }
    }
  };

  const api: LikelihoodSum = {
    threads: workers.length + 1,
    sum(A, b, hs, ht, mu, c, precision = 'double') {
      theta[0] = A; theta[1] = b; theta[2] = hs; theta[3] = ht; theta[4] = mu; theta[5] = c;
      evaluate(1, precision === 'single', api);
      let total = 0;
      for (let k = 0; k < nChunks; k++) total += out[k * maxBatch];
      return total;
    },
    sumBatch(params, m, result, precision = 'double') {
      for (let q0 = 0; q0 < m; q0 += maxBatch) {
        const mm = Math.min(maxBatch, m - q0);
        theta.set(params.subarray(6 * q0, 6 * (q0 + mm)));
        evaluate(mm, precision === 'single', api);
        for (let q = 0; q < mm; q++) {
          let total = 0;
          for (let k = 0; k < nChunks; k++) total += out[k * maxBatch + q];
          result[q0 + q] = total;
        }
      }
    },
    close() {
      if (workers.length === 0) return;
      Atomics.store(ctrl, STOP, 1);
      Atomics.add(ctrl, GEN, 1);
      Atomics.notify(ctrl, GEN);
      for (const w of workers) void w.terminate();
      workers = [];
    },
    whenClosed: () => Promise.all(exits).then(() => undefined),
  };
  return api;
}
