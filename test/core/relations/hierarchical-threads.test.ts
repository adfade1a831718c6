/**
 * The hierarchical fit's likelihood sum on compact arrays and worker threads
 * (`hierarchical-sum.ts`): against a plain two-pass log-sum-exp in float64 written here from
 * the model's definition (HierarchicalData doc and `makeLogPosterior`), independent of the
 * thread count bit for bit, and with the workers gone after the fit.
 */
import { execFileSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { fitHierarchical, hierarchicalLogPosterior, type HierarchicalData } from '../../../src/lib/core/relations/hierarchical.ts';
import { CHUNK_OBJECTS } from '../../../src/lib/core/relations/hierarchical-sum.ts';
import { normalCdf } from '../../../src/lib/core/stats/special.ts';
import { skewedPopulation } from './simulate.ts';

const truth = { a: 1, b: 0.8, s: 0.25, mu: 10, tau: 0.5, pivot: 10 };
// 2.6 chunks of objects, so several threads share the work and the last chunk is partial
const sim = { n: Math.round(2.6 * CHUNK_OBJECTS), draws: 12, xMin: 9.6, sF: 0.25, sG: 0.15 };
const hev = { c: 1.2, h: 0.25, xLo: sim.xMin, k: 1.5 };

/**
 * Reference log posterior straight from the definition: sum_i f_i [ln sum_k (w_ik / W_i)
 * N(y | a + b (x - pivot) + c dz_i, s^2) N(x | mu, tau^2) / (pi_ik P(x > xMin))] plus the priors
 * -1.5 ln(1 + b^2) + ln s + ln tau, every draw above the cut (no sub-sampling in these data);
 * objects without a draw above the cut are left out, as the fit does.
 */
function reference(d: HierarchicalData, theta: Float64Array, pivot: number, xMin: number): number {
  const [a, b, lnS, mu, lnTau] = theta;
  const c = theta.length > 5 ? theta[5] : 0;
  const s = Math.exp(lnS), tau = Math.exp(lnTau);
  const logSel = Math.log(normalCdf((mu - xMin) / tau));
  let total = 0;
  for (let i = 0; i < d.offsets.length - 1; i++) {
    const f = d.objectWeight ? d.objectWeight[i] : 1;
    if (f === 0) continue;
    let W = 0;
    for (let j = d.offsets[i]; j < d.offsets[i + 1]; j++) if (d.x[j] > xMin) W += d.w[j];
    const v: number[] = [];
    for (let j = d.offsets[i]; j < d.offsets[i + 1]; j++) {
      if (!(d.x[j] > xMin) || !(d.w[j] > 0)) continue;
      const r = (d.y[j] - a - b * (d.x[j] - pivot) - c * (d.dz ? d.dz[i] : 0)) / s;
      const u = (d.x[j] - mu) / tau;
      v.push(Math.log(d.w[j] / W) - d.logPrior[j] - 0.5 * (r * r + u * u) - Math.log(2 * Math.PI * s * tau) - logSel);
    }
    if (v.length === 0) continue; // no draw above the cut: the fit leaves the object out
    const m = Math.max(...v);
    total += f * (m + Math.log(v.reduce((acc, x) => acc + Math.exp(x - m), 0)));
  }
  return total - 1.5 * Math.log1p(b * b) + lnS + lnTau;
}

const thetas = [
  [1, 0.8, Math.log(0.25), 10, Math.log(0.5)],
  [0.9, 1.1, Math.log(0.4), 9.8, Math.log(0.7)],
  [1.3, 0.2, Math.log(0.03), 10.4, Math.log(0.2)], // narrow: many terms far below each object's best
].map((t) => Float64Array.from(t));

describe('hierarchical likelihood on threads', () => {
  const opts = { pivot: 10, seed: 4, selection: { xMin: sim.xMin }, maxDraws: 64 };
  const p = skewedPopulation(truth, 31, sim, hev);
  const f = Float64Array.from({ length: sim.n }, (_, i) => (i % 7 === 0 ? 0 : i % 3 === 0 ? 0.25 : 1));
  // one object 40 units above the relation: at s = 0.03 all its terms are below e^-700
  const far = { ...p, y: Float64Array.from(p.y), objectWeight: f };
  for (let j = far.offsets[5]; j < far.offsets[6]; j++) far.y[j] += 40;

  it('agrees with a two-pass float64 log-sum-exp from the definition (also where every term of an object underflows)', () => {
    for (const data of [p, far]) {
      const lp = hierarchicalLogPosterior(data, opts);
      expect(lp.dim).toBe(6);
      for (const t of thetas) {
        const th = Float64Array.of(...t, 0.9);
        const want = reference(data, th, 10, sim.xMin);
        const got = lp.logPost(th);
        // float32 storage of the draws (relative to each object) and the fast exponential: ~1e-9 of the total here
        expect(Math.abs(got - want)).toBeLessThan(1e-8 * Math.abs(want));
      }
    }
    // the far object alone is worth ~ -0.5 (40 / 0.03)^2 ~ -9e5: a result without the fallback would miss it
    const th = Float64Array.of(...thetas[2], 0.9);
    expect(reference(far, th, 10, sim.xMin) - reference({ ...far, objectWeight: Float64Array.from(f, (v, i) => (i === 5 ? 0 : v)) }, th, 10, sim.xMin)).toBeLessThan(-1e5);
  });

  it('gives bit-identical log posteriors on 1, 2 and 3 threads', async () => {
    for (const data of [p, far]) {
      const one = hierarchicalLogPosterior(data, { ...opts, threads: 1 });
      const two = hierarchicalLogPosterior(data, { ...opts, threads: 2 });
      const three = hierarchicalLogPosterior(data, { ...opts, threads: 3 });
      expect([one.threads, two.threads, three.threads]).toEqual([1, 2, 3]);
      for (const t of thetas) {
        for (let k = 0; k < 5; k++) {
          const th = Float64Array.of(...t, 0.9 + 0.01 * k);
          const v = one.logPost(th);
          expect(Number.isFinite(v)).toBe(true);
          expect(two.logPost(th)).toBe(v);
          expect(three.logPost(th)).toBe(v);
        }
      }
      two.close();
      three.close();
      await Promise.all([two.whenClosed(), three.whenClosed()]);
    }
  });

  it('single precision: bit-identical on 1, 2 and 3 threads and in batches, and within 1e-6 per object of double precision', async () => {
    for (const data of [p, far]) {
      const dbl = hierarchicalLogPosterior(data, opts);
      const runs = [1, 2, 3].map((threads) => hierarchicalLogPosterior(data, { ...opts, threads, precision: 'single' }));
      const nObjects = data.offsets.length - 1;
      const batch = Float64Array.from(thetas.flatMap((t) => [...t, 0.9]));
      for (const [q, t] of thetas.entries()) {
        const th = Float64Array.of(...t, 0.9);
        const v = runs[0].logPost(th);
        expect(runs[1].logPost(th)).toBe(v);
        expect(runs[2].logPost(th)).toBe(v);
        // each ln L_i within about 1e-7 (1 + |its exponent|): far below 1e-6 per object at these parameters
        expect(Math.abs(v - dbl.logPost(th))).toBeLessThan(1e-6 * nObjects);
        const out = new Float64Array(thetas.length);
        runs[1].logPostBatch(batch, thetas.length, out);
        expect(out[q]).toBe(v);
      }
      for (const r of runs) r.close();
      await Promise.all(runs.map((r) => r.whenClosed()));
    }
  });

  it('a batch of thetas, some outside the support, gives what one at a time gives', () => {
    const lp = hierarchicalLogPosterior(p, opts);
    const ths = [...thetas.map((t) => [...t, 0.9]), [1, 0.8, 40, 10, 0, 0.9], [1, NaN, 0, 10, 0, 0.9]];
    const out = new Float64Array(ths.length);
    lp.logPostBatch(Float64Array.from(ths.flat()), ths.length, out);
    expect(Array.from(out)).toEqual(ths.map((t) => lp.logPost(Float64Array.from(t))));
    expect(out[3]).toBe(-Infinity);
    expect(out[4]).toBe(-Infinity);
  });

  it('fits identically on 1 and 2 threads', () => {
    const fo = { ...opts, nWalkers: 12, nSteps: 30 };
    const f1 = fitHierarchical(p, { ...fo, threads: 1 });
    const f2 = fitHierarchical(p, { ...fo, threads: 2 });
    expect(f2.draws).toEqual(f1.draws);
    expect(f2.drawsC).toEqual(f1.drawsC);
    expect([f2.a, f2.b, f2.s, f2.c]).toEqual([f1.a, f1.b, f1.s, f1.c]);
    expect(f2.diagnostics).toEqual(f1.diagnostics);
  });

  it('refuses a thread count that is not a whole number >= 1', () => {
    for (const threads of [0, 1.5, NaN]) expect(() => hierarchicalLogPosterior(p, { ...opts, threads })).toThrow(/threads must be a whole number >= 1/);
  });

  it('leaves no worker behind: a process running a threaded fit exits by itself', () => {
    // a separate Node process without process.exit(): it ends only when nothing is left running
    const script = [
      "const { fitHierarchical } = await import('./src/lib/core/relations/hierarchical.ts');",
      "const { skewedPopulation } = await import('./test/core/relations/simulate.ts');",
      `const p = skewedPopulation(${JSON.stringify(truth)}, 31, ${JSON.stringify(sim)});`,
      'const f = fitHierarchical(p, { pivot: 10, seed: 4, nWalkers: 10, nSteps: 10, threads: 2 });',
      "console.log('fitted', f.n);",
    ].join('\n');
    const out = execFileSync(process.execPath, ['--import', 'tsx', '--input-type=module', '-e', script], { cwd: process.cwd(), timeout: 60_000, encoding: 'utf8' });
    expect(out).toContain(`fitted ${sim.n}`);
  });
});
