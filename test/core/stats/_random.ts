/** Seeded random numbers for reproducible statistical tests (mulberry32; Box-Muller normals). */
export function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export function normals(n: number, seed: number, mean = 0, sigma = 1): Float64Array {
  const u = rng(seed);
  const out = new Float64Array(n);
  for (let i = 0; i < n; i += 2) {
    const r = Math.sqrt(-2 * Math.log(1 - u()));
    const t = 2 * Math.PI * u();
    out[i] = mean + sigma * r * Math.cos(t);
    if (i + 1 < n) out[i + 1] = mean + sigma * r * Math.sin(t);
  }
  return out;
}

export function uniforms(n: number, seed: number, lo = 0, hi = 1): Float64Array {
  const u = rng(seed);
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = lo + (hi - lo) * u();
  return out;
}

export function ones(n: number): Float64Array {
  return new Float64Array(n).fill(1);
}
