/**
 * The sum over objects of the hierarchical fit's log marginal likelihoods, on compact typed
 * arrays, optionally split across worker threads. The objects are summed in fixed chunks of
 * CHUNK_OBJECTS into per-chunk partial sums that are then added in chunk order, so the result
 * does not depend on the number of threads (nor on which thread did which chunk).
 */
import { availableParallelism } from 'node:os';
import { Worker } from 'node:worker_threads';
import { PosterityError, problem } from '../problems.ts';

/** Objects per chunk: the unit of work and of the fixed-order summation. */
export const CHUNK_OBJECTS = 1024;

/**
 * Per-draw and per-object arrays of the likelihood, backed by SharedArrayBuffer so worker
 * threads read them without a copy. Draw k of kept object i sits at t[3 (offsets[i] + k) + 0..2]
 * as (x - xc_i, y - yc_i, C - Cmax_i), C = ln w - ln pi the draw's log importance weight.
 */
export interface CompactTerms {
  t: Float32Array;
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

/** A typed array on a SharedArrayBuffer. */
export function sharedF64(n: number): Float64Array {
  return new Float64Array(new SharedArrayBuffer(8 * Math.max(n, 1)), 0, n);
}
export function sharedF32(n: number): Float32Array {
  return new Float32Array(new SharedArrayBuffer(4 * Math.max(n, 1)), 0, n);
}
export function sharedI32(n: number): Int32Array {
  return new Int32Array(new SharedArrayBuffer(4 * Math.max(n, 1)), 0, n);
}

/**
 * Plain JavaScript (no TypeScript, so it runs unchanged in a worker started from a string and,
 * through `new Function`, on the main thread: the same code gives the same bits everywhere).
 *
 * chunkSum(c, P, D) = sum over the objects of chunk c of f_i ln L_i, with P = (A, b, hs, ht, mu, c)
 * and, for draw k of object i, ln L_i = Cmax_i + ln sum_k exp(v_ik),
 *   v_ik = C'_ik - hs r^2 - ht u^2,  r = (yc_i - A - b xc_i - c dz_i) + dy_ik - b dx_ik,  u = (xc_i - mu) + dx_ik,
 * where A = a - b pivot, hs = 1 / (2 s^2), ht = 1 / (2 tau^2). Every v_ik <= 0, so one pass with
 * one exponential per draw cannot overflow. The exponential is exp(v) = 2^(-k/128) e^q with
 * k = round(-128 v / ln 2) (a table of 2^(-k/128)), |q| <= ln 2 / 256, and a degree-4 Taylor
 * polynomial for e^q (truncation error q^5 / 120 < 1.3e-15 relative; with the rounding of
 * k ln 2 / 128, below 1e-14 for arguments above -50); arguments below -700 are clamped. An object
 * whose sum falls below 1e-250 (all its terms tiny, where the clamp could matter) is summed again
 * by the two-pass log-sum-exp with Math.exp.
 */
const KERNEL = `
const K128 = 128 / Math.LN2, L128 = Math.LN2 / 128;
const TB = new Float64Array(128 * 1024);
for (let i = 0; i < TB.length; i++) TB[i] = Math.pow(2, -i / 128);
function chunkSum(c, P, D) {
  const A = P[0], b = P[1], hs = P[2], ht = P[3], mu = P[4], cc = P[5];
  const t = D.t, off = D.offsets, cmax = D.cmax, xc = D.xc, yc = D.yc, dz = D.dz, f = D.f;
  const lo = c * CHUNK, hi = Math.min(D.n, lo + CHUNK);
  let total = 0;
  for (let i = lo; i < hi; i++) {
    const R = yc[i] - A - b * xc[i] - cc * dz[i];
    const U = xc[i] - mu;
    const j0 = 3 * off[i], j1 = 3 * off[i + 1];
    let acc = 0;
    for (let j = j0; j < j1; j += 3) {
      const dx = t[j];
      const r = R + t[j + 1] - b * dx;
      const u = U + dx;
      let v = t[j + 2] - (hs * r * r + ht * u * u);
      if (v < -700) v = -700;
      const k = (0.5 - v * K128) | 0;
      const q = v + k * L128;
      acc += TB[k] * (1 + q * (1 + q * (0.5 + q * (1 / 6 + q * (1 / 24)))));
    }
    let li;
    if (acc > 1e-250) li = cmax[i] + Math.log(acc);
    else {
      let m = -Infinity;
      for (let j = j0; j < j1; j += 3) {
        const dx = t[j];
        const r = R + t[j + 1] - b * dx;
        const u = U + dx;
        const v = t[j + 2] - (hs * r * r + ht * u * u);
        if (v > m) m = v;
      }
      let s = 0;
      for (let j = j0; j < j1; j += 3) {
        const dx = t[j];
        const r = R + t[j + 1] - b * dx;
        const u = U + dx;
        s += Math.exp(t[j + 2] - (hs * r * r + ht * u * u) - m);
      }
      li = cmax[i] + m + Math.log(s);
    }
    total += f ? f[i] * li : li;
  }
  return total;
}
`;

/** Control words in the shared Int32Array. */
const GEN = 0, STOP = 1, NEXT = 2, DONE = 3;

const WORKER = `${KERNEL}
const { workerData } = typeof require === 'function' ? require('node:worker_threads') : process.getBuiltinModule('node:worker_threads');
const { ctrl, P, out, D, nChunks } = workerData;
let gen = 0;
for (;;) {
  Atomics.wait(ctrl, ${GEN}, gen);
  gen = Atomics.load(ctrl, ${GEN});
  if (Atomics.load(ctrl, ${STOP}) === 1) break;
  for (;;) {
    const c = Atomics.add(ctrl, ${NEXT}, 1);
    if (c >= nChunks) break;
    out[c] = chunkSum(c, P, D);
    if (Atomics.add(ctrl, ${DONE}, 1) + 1 === nChunks) Atomics.notify(ctrl, ${DONE});
  }
}
`;

type ChunkSum = (c: number, P: Float64Array, D: CompactTerms) => number;
let mainKernel: ChunkSum | undefined;
function kernel(): ChunkSum {
  mainKernel ??= new Function('CHUNK', `${KERNEL}\nreturn chunkSum;`)(CHUNK_OBJECTS) as ChunkSum;
  return mainKernel;
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
  if (terms.t.length / 3 < PARALLEL_MIN_DRAWS) return 1;
  return Math.max(1, Math.min(availableParallelism(), nChunks));
}

export interface LikelihoodSum {
  /** sum_i f_i ln L_i at P = (A, b, hs, ht, mu, c), see KERNEL. */
  sum(A: number, b: number, hs: number, ht: number, mu: number, c: number): number;
  /** Stops and terminates the worker threads (idempotent; the sum then runs on this thread). */
  close(): void;
  /** Resolves when every worker thread has exited (after close()). */
  whenClosed(): Promise<void>;
  threads: number;
}

/** Longest wait for the workers without any chunk finishing before giving up. */
const STALL_MS = 120_000;

/**
 * The likelihood sum over `terms` on `threads` threads: this thread plus threads - 1 workers,
 * which take chunks from a shared counter; this thread blocks in Atomics.wait for the last
 * chunk. Workers are unref'd (they never keep the process alive) and must be released with
 * close() (the hierarchical fit does so in a finally block).
 */
export function createLikelihoodSum(terms: CompactTerms, threads: number): LikelihoodSum {
  const nChunks = Math.ceil(terms.n / CHUNK_OBJECTS);
  const run = kernel();
  const P = threads > 1 ? sharedF64(6) : new Float64Array(6);
  const out = threads > 1 ? sharedF64(nChunks) : new Float64Array(nChunks);
  const ctrl = sharedI32(4);
  let workers: Worker[] = [];
  const exits: Promise<void>[] = [];
  if (threads > 1) {
    const D = { t: terms.t, offsets: terms.offsets, cmax: terms.cmax, xc: terms.xc, yc: terms.yc, dz: terms.dz, f: terms.f ?? null, n: terms.n };
    for (const a of [D.t, D.offsets, D.cmax, D.xc, D.yc, D.dz, ...(D.f ? [D.f] : [])]) {
      if (!(a.buffer instanceof SharedArrayBuffer)) throw new Error('createLikelihoodSum: the terms must be on SharedArrayBuffers');
    }
    for (let k = 1; k < threads; k++) {
      // execArgv []: no loaders or module-type flags of the parent (the code is plain CommonJS)
      const w = new Worker(`const CHUNK = ${CHUNK_OBJECTS};\n${WORKER}`, { eval: true, execArgv: [], workerData: { ctrl, P, out, D, nChunks } });
      // a worker that fails takes no chunks (or stalls one, reported by sum()); its error must not end the process
      w.on('error', () => {});
      w.unref();
      exits.push(new Promise<void>((resolve) => w.once('exit', () => resolve())));
      workers.push(w);
    }
  }
  const sumChunks = (): number => {
    let total = 0;
    for (let c = 0; c < nChunks; c++) total += out[c];
    return total;
  };
  return {
    threads: workers.length + 1,
    sum(A, b, hs, ht, mu, c) {
      P[0] = A; P[1] = b; P[2] = hs; P[3] = ht; P[4] = mu; P[5] = c;
      if (workers.length === 0) {
        for (let k = 0; k < nChunks; k++) out[k] = run(k, P, terms);
        return sumChunks();
      }
      // DONE before NEXT: a worker still looping from the last call may take a chunk as soon as
      // NEXT is 0, and its count must land after the reset (P is written before either)
      Atomics.store(ctrl, DONE, 0);
      Atomics.store(ctrl, NEXT, 0);
      Atomics.add(ctrl, GEN, 1);
      Atomics.notify(ctrl, GEN);
      for (;;) {
        const k = Atomics.add(ctrl, NEXT, 1);
        if (k >= nChunks) break;
        out[k] = run(k, P, terms);
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
          this.close();
          throw new Error('hierarchical fit: a worker thread stopped responding');
        }
      }
      return sumChunks();
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
}
