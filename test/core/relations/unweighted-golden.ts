/**
 * Outputs of the deconvolved, mixture and running-median fits on small seeded inputs without
 * per-object weights. `unweighted-golden.json` holds them as computed before the optional
 * per-object weights were added; the test requires them unchanged to the last bit.
 */
import { fitDeconvolved } from '../../../src/lib/core/relations/deconvolved.ts';
import { fitMixture } from '../../../src/lib/core/relations/mixture.ts';
import { runningMedian } from '../../../src/lib/core/relations/running.ts';
import { makeRng } from '../../../src/lib/core/random.ts';
import { gaussianPopulation, skewedPopulation } from './simulate.ts';

const truth = { a: 1, b: 0.8, s: 0.3, mu: 10, tau: 0.5, pivot: 10 };

export function unweightedOutputs(): Record<string, unknown> {
  const p = gaussianPopulation(120, truth, 31, { sx: [0.05, 0.1], sy: [0.1, 0.3], rho: 0.3 });
  const rng = makeRng(5);
  const dz = Float64Array.from(p.x, () => 0.4 * (rng.next() - 0.5));
  const est = (f: { a: unknown; b: unknown; s: unknown; c?: unknown; draws: Float64Array; warnings: string[] }) => ({ a: f.a, b: f.b, s: f.s, c: f.c ?? null, draws: Array.from(f.draws.subarray(0, 30)), warnings: f.warnings });
  const dec = fitDeconvolved(p, { pivot: 10, seed: 3, nSteps: 300 });
  const decZ = fitDeconvolved({ ...p, dz }, { pivot: 10, seed: 3, nSteps: 300 });
  const mix = fitMixture(p, { pivot: 10, seed: 4, nSteps: 200 });
  const mixZ = fitMixture({ ...p, dz }, { pivot: 10, seed: 4, nSteps: 200 });
  const s = skewedPopulation(truth, 8, { n: 80, draws: 20, xMin: 9, sF: 0.3, sG: 0.2 });
  const run = runningMedian(s, { edges: Float64Array.of(9, 9.5, 10, 10.5, 11), nBoot: 50, seed: 2 });
  return {
    deconvolved: est(dec),
    deconvolvedDz: est(decZ),
    mixture: { ...est(mix), membership: Array.from(mix.membership.subarray(0, 30)), f: mix.sequenceFraction },
    mixtureDz: { ...est(mixZ), membership: Array.from(mixZ.membership.subarray(0, 30)) },
    running: Object.fromEntries(Object.entries(run).map(([k, v]) => [k, Array.from(v as Float64Array)])),
  };
}
