/**
 * Seeded, deterministic random numbers that give the same stream in Node and the browser.
 *
 * Generator: xoshiro128** (Blackman & Vigna 2021, "Scrambled linear pseudorandom number
 * generators", ACM TOMS 47(4) 36, arXiv:1805.01407), 128-bit state, period 2^128 - 1.
 * Seeding: the seed (and any keys) is written as canonical JSON, hashed to 128 bits with
 * cyrb128 (bryc, "PRNGs and hashes in JavaScript", github.com/bryc/code, public domain; from
 * memory) and each word passed through a splitmix32-style finaliser (after Steele, Lea & Flood
 * 2014, OOPSLA, "Fast splittable pseudorandom number generators").
 *
 * Reproducibility across worker counts: give every object its own stream,
 * `makeRng(deriveSeed(releaseSeed, 'bootstrap', objectId))`, so a draw never depends on which
 * objects were processed before it.
 */
import { PosterityError, problem } from './problems.ts';

export interface Rng {
  /** Uniform on [0, 1) with 53 random bits (two 32-bit outputs). */
  next(): number;
  /** Uniform 32-bit unsigned integer. */
  nextUint32(): number;
  /** Gaussian by the Box-Muller transform (Box & Muller 1958, Ann. Math. Stat. 29, 610); the second value is kept for the next call. */
  normal(mean?: number, sd?: number): number;
  /** Uniform integer in [0, n), 1 <= n <= 2^53, without modulo bias (rejection sampling). */
  int(n: number): number;
  /** Gamma(shape, scale) by Marsaglia & Tsang (2000, ACM TOMS 26(3), 363), mean shape x scale; shape < 1 by the boost Gamma(shape+1) U^(1/shape) of the same paper. */
  gamma(shape: number, scale?: number): number;
  /** A uniformly chosen element of a non-empty array. */
  choice<T>(items: ArrayLike<T>): T;
  /** Shuffles in place by Fisher-Yates (Durstenfeld 1964, CACM 7(7), 420) and returns the same array. */
  shuffle<A extends { length: number; [i: number]: unknown }>(items: A): A;
  /** Index i drawn with probability weights[i] / sum(weights); weights finite, >= 0, not all zero. Linear in the length. */
  weightedIndex(weights: ArrayLike<number>): number;
  /** An independent generator for a sub-stream: `makeRng(deriveSeed(seed, ...keys))` of this generator's seed. */
  fork(...keys: (string | number)[]): Rng;
}

function fail(field: string, message: string, expected: string, got: unknown): never {
  throw new PosterityError(problem({ message, field, expected, got: String(got) }));
}

function checkPart(v: unknown, field: string): void {
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) fail(field, 'invalid random seed', 'a finite number or a string', v);
  } else if (typeof v !== 'string') {
    fail(field, 'invalid random seed', 'a finite number or a string', typeof v);
  }
}

/** 128-bit string hash cyrb128 (bryc, public domain), over UTF-16 code units. */
function cyrb128(str: string): [number, number, number, number] {
  let h1 = 1779033703;
  let h2 = 3144134277;
  let h3 = 1013904242;
  let h4 = 2773480762;
  for (let i = 0; i < str.length; i++) {
    const k = str.charCodeAt(i);
    h1 = h2 ^ Math.imul(h1 ^ k, 597399067);
    h2 = h3 ^ Math.imul(h2 ^ k, 2869860233);
    h3 = h4 ^ Math.imul(h3 ^ k, 951274213);
    h4 = h1 ^ Math.imul(h4 ^ k, 2716044179);
  }
  h1 = Math.imul(h3 ^ (h1 >>> 18), 597399067);
  h2 = Math.imul(h4 ^ (h2 >>> 22), 2869860233);
  h3 = Math.imul(h1 ^ (h3 >>> 17), 951274213);
  h4 = Math.imul(h2 ^ (h4 >>> 19), 2716044179);
  h1 ^= h2 ^ h3 ^ h4;
  h2 ^= h1;
  h3 ^= h1;
  h4 ^= h1;
  return [h1 >>> 0, h2 >>> 0, h3 >>> 0, h4 >>> 0];
}

/** splitmix32-style step: add the golden-ratio increment, then a 32-bit avalanche finaliser. */
function splitmix32(x: number): number {
  let t = (x + 0x9e3779b9) | 0;
  t ^= t >>> 16;
  t = Math.imul(t, 0x21f0aaad);
  t ^= t >>> 15;
  t = Math.imul(t, 0x735a2d97);
  t ^= t >>> 15;
  return t >>> 0;
}

const TWO_32 = 4294967296;
const TWO_53 = 9007199254740992;

/**
 * A 53-bit integer seed for the sub-stream named by `keys` under `seed`, e.g.
 * `deriveSeed(42, 'bootstrap', objectId)`. Depends only on its arguments (never on call order),
 * and distinct argument lists give distinct seeds up to 2^-53 chance collisions. Keys are
 * encoded as JSON, so ('a', 'bc') and ('ab', 'c') differ, as do the number 1 and the string '1'.
 */
export function deriveSeed(seed: number | string, ...keys: (string | number)[]): number {
  checkPart(seed, 'seed');
  keys.forEach((k, i) => checkPart(k, `keys[${i}]`));
  const [h1, h2, h3, h4] = cyrb128(JSON.stringify(['posterity.deriveSeed', seed, ...keys]));
  const hi = splitmix32(h1 ^ h3) >>> 11; // 21 bits
  const lo = splitmix32(h2 ^ h4); // 32 bits
  return hi * TWO_32 + lo;
}

/**
 * A xoshiro128** generator seeded from `seed` (a finite number or any string). The same seed
 * gives the same stream on every platform; the number 7 and the string '7' are different seeds.
 */
export function makeRng(seed: number | string): Rng {
  checkPart(seed, 'seed');
  const h = cyrb128(JSON.stringify(['posterity.makeRng', seed]));
  const state: [number, number, number, number] = [
    splitmix32(h[0]),
    splitmix32(h[1] ^ 0x6a09e667),
    splitmix32(h[2] ^ 0xbb67ae85),
    splitmix32(h[3] ^ 0x3c6ef372),
  ];
  if ((state[0] | state[1] | state[2] | state[3]) === 0) state[0] = 1; // the all-zero state is a fixed point
  const rng = build(state, seed);
  for (let i = 0; i < 8; i++) rng.nextUint32(); // warm up away from the hashed state
  return rng;
}

/**
 * A generator started from an explicit xoshiro128** state of four 32-bit words (not all zero),
 * with no hashing or warm-up: the first `nextUint32()` is the first output of the authors'
 * reference code for that state. `fork` derives from the state's words.
 */
export function makeRngFromState(state: readonly [number, number, number, number]): Rng {
  if (!(state.length === 4 && state.every((w) => Number.isInteger(w) && w >= 0 && w < TWO_32)) || state.every((w) => w === 0)) {
    fail('state', 'invalid generator state', 'four integers in [0, 2^32), not all zero', JSON.stringify(state));
  }
  return build([state[0], state[1], state[2], state[3]], `state:${state.join(',')}`);
}

function build(state: [number, number, number, number], seed: number | string): Rng {
  let [s0, s1, s2, s3] = state;
  const nextUint32 = (): number => {
    // xoshiro128**: result = rotl(s1 * 5, 7) * 9, then the linear engine step.
    const m = Math.imul(s1, 5);
    const result = Math.imul((m << 7) | (m >>> 25), 9) >>> 0;
    const t = s1 << 9;
    s2 ^= s0;
    s3 ^= s1;
    s1 ^= s2;
    s0 ^= s3;
    s2 ^= t;
    s3 = (s3 << 11) | (s3 >>> 21);
    return result;
  };

  const next = (): number => {
    const a = nextUint32() >>> 5; // 27 bits
    const b = nextUint32() >>> 6; // 26 bits
    return (a * 67108864 + b) / TWO_53;
  };

  let spare = NaN;
  const standardNormal = (): number => {
    if (!Number.isNaN(spare)) {
      const v = spare;
      spare = NaN;
      return v;
    }
    const u1 = 1 - next(); // (0, 1], so the log is finite
    const u2 = next();
    const r = Math.sqrt(-2 * Math.log(u1));
    const theta = 2 * Math.PI * u2;
    spare = r * Math.sin(theta);
    return r * Math.cos(theta);
  };

  const int = (n: number): number => {
    if (!(Number.isInteger(n) && n >= 1 && n <= TWO_53)) fail('n', 'invalid integer range', 'an integer in [1, 2^53]', n);
    if (n <= TWO_32) {
      const limit = TWO_32 - (TWO_32 % n); // largest multiple of n not above 2^32
      for (;;) {
        const x = nextUint32();
        if (x < limit) return x % n;
      }
    }
    const limit = TWO_53 - (TWO_53 % n);
    for (;;) {
      const x = next() * TWO_53;
      if (x < limit) return x % n;
    }
  };

  const gammaUnit = (shape: number): number => {
    if (shape < 1) {
      const g = gammaUnit(shape + 1);
      return g * Math.pow(1 - next(), 1 / shape);
    }
    const d = shape - 1 / 3;
    const c = 1 / Math.sqrt(9 * d);
    for (;;) {
      let x: number;
      let v: number;
      do {
        x = standardNormal();
        v = 1 + c * x;
      } while (v <= 0);
      v = v * v * v;
      const u = 1 - next();
      const x2 = x * x;
      if (u < 1 - 0.0331 * x2 * x2) return d * v;
      if (Math.log(u) < 0.5 * x2 + d * (1 - v + Math.log(v))) return d * v;
    }
  };

  const rng: Rng = {
    next,
    nextUint32,
    normal(mean = 0, sd = 1) {
      return mean + sd * standardNormal();
    },
    int,
    gamma(shape: number, scale = 1) {
      if (!(Number.isFinite(shape) && shape > 0)) fail('shape', 'invalid gamma shape', 'a finite number > 0', shape);
      if (!(Number.isFinite(scale) && scale > 0)) fail('scale', 'invalid gamma scale', 'a finite number > 0', scale);
      return scale * gammaUnit(shape);
    },
    choice<T>(items: ArrayLike<T>): T {
      if (items.length === 0) fail('items', 'cannot choose from an empty list', 'at least one item', 0);
      return items[int(items.length)];
    },
    shuffle<A extends { length: number; [i: number]: unknown }>(items: A): A {
      for (let i = items.length - 1; i > 0; i--) {
        const j = int(i + 1);
        const tmp = items[i];
        items[i] = items[j];
        items[j] = tmp;
      }
      return items;
    },
    weightedIndex(weights: ArrayLike<number>): number {
      let total = 0;
      let last = -1;
      for (let i = 0; i < weights.length; i++) {
        const w = weights[i];
        if (!(w >= 0 && w < Infinity)) fail(`weights[${i}]`, 'invalid weight', 'a finite number >= 0', w);
        total += w;
        if (w > 0) last = i;
      }
      if (!(total > 0)) fail('weights', 'all weights are zero', 'at least one positive weight', total);
      const target = next() * total;
      let acc = 0;
      for (let i = 0; i < last; i++) {
        acc += weights[i];
        if (target < acc) return i;
      }
      return last; // also absorbs rounding in the running sum
    },
    fork(...keys: (string | number)[]) {
      return makeRng(deriveSeed(seed, ...keys));
    },
  };
  return Object.freeze(rng);
}
