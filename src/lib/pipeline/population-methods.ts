/**
 * Adapters from the pipeline's arrays to the relation methods of the core.
 */
import type { RelationConfig, ReleaseConfig } from '../bundle/schema.ts';
import { stepsFor, type PopulationInputs } from './population.ts';
import type { PopulationDraws } from './summarise.ts';
import type { BinFit, MethodFit } from './content.ts';
import type { RelationFit } from '../core/relations/linear.ts';
import type { Cosmology } from '../core/cosmology.ts';
import { fitHierarchical } from '../core/relations/hierarchical.ts';

export function fitMixtureIfAvailable(_inp: PopulationInputs, _population: string[], _warnings: string[]): Float64Array | null {
  return null;
}

/** Log interim prior of a draw from the priors declared in release.json (independent per parameter). */
function declaredLogPrior(config: ReleaseConfig, name: string): ((v: number) => number) | null {
  const p = config.parameters.find((q) => q.name === name)?.prior;
  if (!p || p.kind === 'column') return null;
  if (p.kind === 'uniform') {
    const c = -Math.log(p.max - p.min);
    return (v) => (v >= p.min && v <= p.max ? c : -Infinity);
  }
  const c = -0.5 * Math.log(2 * Math.PI) - Math.log(p.sigma);
  return (v) => c - 0.5 * ((v - p.mean) / p.sigma) ** 2;
}

/** The hierarchical fit on each selected object's equal-weight resample of draws. */
export function hierarchicalIfAvailable(
  rel: RelationConfig, inp: PopulationInputs, idx: number[], ix: number, iy: number, seed: number, warnings: string[],
): { fit: MethodFit; raw: RelationFit } | null {
  const { pop, config } = inp;
  const m = pop.m;
  const nSel = idx.length;
  const x = new Float64Array(nSel * m), y = new Float64Array(nSel * m), w = new Float64Array(nSel * m).fill(1), lp = new Float64Array(nSel * m);
  const offsets = new Int32Array(nSel + 1);
  const px = declaredLogPrior(config, rel.x), py = declaredLogPrior(config, rel.y);
  if (!pop.hasLogPrior && (!px || !py)) {
    warnings.push(`${rel.name}: the hierarchical fit needs the interim prior; the samples have no log_prior column and release.json declares no prior for ${!px ? rel.x : rel.y}, so the method was not run`);
    return null;
  }
  let o = 0;
  for (let s = 0; s < nSel; s++) {
    const i = idx[s];
    for (let d = 0; d < m; d++) {
      const xv = pop.values[ix][i * m + d], yv = pop.values[iy][i * m + d];
      if (!Number.isFinite(xv) || !Number.isFinite(yv)) continue;
      x[o] = xv;
      y[o] = yv;
      lp[o] = pop.hasLogPrior ? pop.logPrior[i * m + d] : px!(xv) + py!(yv);
      o++;
    }
    offsets[s + 1] = o;
  }
  const fit = fitHierarchical({ x: x.subarray(0, o), y: y.subarray(0, o), w: w.subarray(0, o), logPrior: lp.subarray(0, o), offsets }, { pivot: rel.pivot, seed, maxDraws: m, nWalkers: 16, nSteps: stepsFor(o * 16, 3e8, 400, 1500) });
  let small = 0;
  for (const e of fit.effectiveDraws) if (e < 5) small++;
  if (small > 0) fit.warnings.push(`${small} of ${nSel} objects have fewer than 5 effective draws carrying the likelihood; their marginal likelihoods are noisy`);
  let mean = 0;
  for (const e of fit.effectiveDraws) mean += e / fit.effectiveDraws.length;
  const out: MethodFit = {
    method: 'hierarchical',
    n: fit.n,
    a: fit.a, b: fit.b, s: fit.s,
    diagnostics: {
      ...Object.fromEntries(Object.entries(fit.diagnostics).filter(([, v]) => v !== undefined)) as Record<string, number | number[]>,
      meanEffectiveDraws: Number(mean.toFixed(2)),
      objectsWithFewEffectiveDraws: small,
      drawsPerObject: m,
      interimPrior: pop.hasLogPrior ? 'log_prior column' : 'declared priors',
      xModelMu: fit.xModel.mu.median,
      xModelTau: fit.xModel.tau.median,
    },
    warnings: fit.warnings,
  };
  return { fit: out, raw: fit };
}

export function runningIfAvailable(_pop: PopulationDraws, _idx: number[], _ix: number, _iy: number, _x: Float64Array, _seed: number): BinFit['running'] {
  return null;
}

export function referenceIfAvailable(_rel: RelationConfig, _config: ReleaseConfig, _cosmo: Cosmology, _zLo: number, _zHi: number): BinFit['reference'] {
  return null;
}
