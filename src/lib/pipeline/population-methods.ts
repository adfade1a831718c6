/**
 * Adapters from the pipeline's arrays to the relation methods of the core.
 */
import type { RelationConfig, ReleaseConfig } from '../bundle/schema.ts';
import { binOf, convergeFrom, stepsFor, type PopulationInputs } from './population.ts';
import type { PopulationDraws } from './summarise.ts';
import type { BinFit, MethodFit } from './content.ts';
import type { RelationFit } from '../core/relations/linear.ts';
import type { Cosmology } from '../core/cosmology.ts';
import { fitHierarchical } from '../core/relations/hierarchical.ts';
import { runningMedian } from '../core/relations/running.ts';
import { referenceRelation } from '../core/relations/reference.ts';
import { fitMixture } from '../core/relations/mixture.ts';
import type { DeconvolvedData } from '../core/relations/deconvolved.ts';


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

/**
 * Per-draw redshift-bin membership for one bin: the redshift-role parameter `iz`, the bin
 * `bin` of `edges`, and the weight f of each selected object (its share of draws in the bin).
 */
export interface DrawBin {
  iz: number;
  edges: number[];
  bin: number;
  weight: Float64Array;
}

/**
 * The hierarchical fit on each selected object's equal-weight resample of draws. With `drawBin`
 * only the draws whose own redshift falls in the bin enter, and each object's log marginal
 * likelihood is weighted by its f (`HierarchicalData.objectWeight`).
 */
export function hierarchicalIfAvailable(
  rel: RelationConfig, inp: PopulationInputs, idx: number[], ix: number, iy: number, seed: number, warnings: string[],
  /** Completeness cut on x (the sample holds only galaxies above it): modelled in the likelihood. */
  xMin?: number,
  /** Redshift offset of each selected object from the bin centre (the within-bin evolution term). */
  dz?: Float64Array,
  drawBin?: DrawBin,
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
      if (drawBin && binOf(pop.values[drawBin.iz][i * m + d], drawBin.edges) !== drawBin.bin) continue;
      x[o] = xv;
      y[o] = yv;
      lp[o] = pop.hasLogPrior ? pop.logPrior[i * m + d] : px!(xv) + py!(yv);
      o++;
    }
    offsets[s + 1] = o;
  }
  const hSteps = stepsFor(o * 12, 2.5e8, 600, 2000);
  const fit = fitHierarchical({ x: x.subarray(0, o), y: y.subarray(0, o), w: w.subarray(0, o), logPrior: lp.subarray(0, o), offsets, ...(dz ? { dz } : {}), ...(drawBin ? { objectWeight: drawBin.weight } : {}) }, { pivot: rel.pivot, seed, maxDraws: m, nWalkers: 12, nSteps: hSteps, converge: convergeFrom(hSteps), ...(xMin !== undefined ? { selection: { xMin } } : {}) });
  let small = 0;
  for (const e of fit.effectiveDraws) if (e < 5) small++;
  if (small > 0) fit.warnings.push(`${small} of ${nSel} objects have fewer than 5 effective draws carrying the likelihood; their marginal likelihoods are noisy`);
  let mean = 0;
  for (const e of fit.effectiveDraws) mean += e / fit.effectiveDraws.length;
  const out: MethodFit = {
    method: 'hierarchical',
    n: fit.n,
    a: fit.a, b: fit.b, s: fit.s,
    ...(fit.c ? { c: fit.c } : {}),
    diagnostics: {
      ...Object.fromEntries(Object.entries(fit.diagnostics).filter(([, v]) => v !== undefined)) as Record<string, number | number[]>,
      meanEffectiveDraws: Number(mean.toFixed(2)),
      objectsWithFewEffectiveDraws: small,
      drawsPerObject: m,
      interimPrior: pop.hasLogPrior ? 'log_prior column' : 'declared priors',
      likelihoodPrecision: fit.precision === 'single' ? 'single while sampling, double for the mode search' : 'double',
      selectionXMin: xMin ?? 'none',
      ...(drawBin ? { binMembership: 'per draw' } : {}),
      xModelMu: fit.xModel.mu.median,
      xModelTau: fit.xModel.tau.median,
    },
    warnings: fit.warnings,
  };
  return { fit: out, raw: fit };
}

const arr = (a: Float64Array, d = 5) => Array.from(a, (v) => (Number.isFinite(v) ? Number(v.toPrecision(d)) : NaN));

/**
 * Running median of y in 8 equal bins of x, bootstrapping objects and one posterior draw each.
 * With `drawBin` a draw counts only when its own redshift falls in the redshift bin (the
 * bootstrap picks one of all the object's draws and drops the object from the replicate when
 * that draw is outside the bin).
 */
export function runningIfAvailable(pop: PopulationDraws, idx: number[], ix: number, iy: number, x: Float64Array, seed: number, drawBin?: DrawBin): BinFit['running'] {
  const m = pop.m;
  let lo = Infinity, hi = -Infinity;
  for (const v of x) {
    lo = Math.min(lo, v);
    hi = Math.max(hi, v);
  }
  if (!(hi > lo)) return null;
  const nb = 8;
  const edges = Float64Array.from({ length: nb + 1 }, (_, j) => lo + ((hi - lo) * j) / nb);
  const xs = new Float64Array(idx.length * m), ys = new Float64Array(idx.length * m), w = new Float64Array(idx.length * m).fill(1);
  const offsets = new Int32Array(idx.length + 1);
  const mask = drawBin ? new Uint8Array(idx.length * m) : null;
  let o = 0;
  idx.forEach((i, s) => {
    for (let d = 0; d < m; d++) {
      const xv = pop.values[ix][i * m + d], yv = pop.values[iy][i * m + d];
      if (!Number.isFinite(xv) || !Number.isFinite(yv)) continue;
      xs[o] = xv;
      ys[o] = yv;
      if (mask) mask[o] = binOf(pop.values[drawBin!.iz][i * m + d], drawBin!.edges) === drawBin!.bin ? 1 : 0;
      o++;
    }
    offsets[s + 1] = o;
  });
  const r = runningMedian({ x: xs.subarray(0, o), y: ys.subarray(0, o), w: w.subarray(0, o), offsets }, { edges, nBoot: 200, seed, ...(mask ? { drawMask: mask.subarray(0, o) } : {}) });
  return { centres: arr(r.centres), median: arr(r.median), p16: arr(r.p16), p84: arr(r.p84), medianLo: arr(r.medianLo), medianHi: arr(r.medianHi), n: arr(r.n, 4) };
}

/** A published relation converted to the release's IMF, drawn only inside its validity range at the bin's central redshift. */
export function referenceIfAvailable(rel: RelationConfig, config: ReleaseConfig, cosmo: Cosmology, zLo: number, zHi: number): BinFit['reference'] {
  if (!rel.reference) return null;
  const ref = referenceRelation(rel.reference, config.model.imf, cosmo);
  const z = 0.5 * (zLo + zHi);
  if (z < ref.validity.zMin || z > ref.validity.zMax) return null;
  const xs: number[] = [], ys: number[] = [];
  for (let j = 0; j <= 20; j++) {
    const x = ref.validity.xMin + ((ref.validity.xMax - ref.validity.xMin) * j) / 20;
    xs.push(Number(x.toFixed(4)));
    ys.push(Number(ref.evaluate(x, z).toFixed(4)));
  }
  return { x: xs, y: ys, label: `${ref.citation} at z = ${z.toFixed(2)} (${ref.note})` };
}

/** Two-component mixture (sequence plus a broad component) on every galaxy of the bin, without a population cut. */
export function mixtureFit(d: DeconvolvedData, pivot: number, seed: number): { fit: MethodFit; membership: Float64Array } {
  const mSteps = stepsFor(d.x.length * 16, 3e7, 400, 1500);
  const f = fitMixture(d, { pivot, seed, nWalkers: 16, nSteps: mSteps, converge: convergeFrom(mSteps) });
  return {
    fit: {
      method: 'mixture',
      n: f.n,
      a: f.a,
      b: f.b,
      s: f.s,
      ...(f.c ? { c: f.c } : {}),
      diagnostics: {
        ...(Object.fromEntries(Object.entries(f.diagnostics).filter(([, v]) => v !== undefined)) as Record<string, number | number[]>),
        sequenceFraction: Number(f.sequenceFraction.median.toFixed(4)),
        broadMean: Number(f.broad.mean.median.toFixed(4)),
        broadSd: Number(f.broad.sd.median.toFixed(4)),
      },
      warnings: f.warnings,
    },
    membership: f.membership,
  };
}
