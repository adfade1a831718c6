/**
 * The summaries as they were before streaming and worker threads (a frozen copy), kept as the
 * reference the new implementation must reproduce exactly on the same bundle.
 */
import type { Bundle } from '../../src/lib/bundle/load.ts';
import type { ReleaseConfig } from '../../src/lib/bundle/schema.ts';
import { normaliseWeights, kishEss } from '../../src/lib/core/stats/weights.ts';
import { summarise, weightedCovariance, correlationFromCovariance, autocorrEss, type ParamSummary } from '../../src/lib/core/stats/summary.ts';
import { chi2Sf } from '../../src/lib/core/stats/special.ts';
import { chartsFor } from '../../src/lib/pipeline/summarise-kernel.ts';
import { isMultimodal, priorEdgeMass } from '../../src/lib/core/stats/diagnostics.ts';
import { FLAGS } from '../../src/lib/core/flags.ts';
import { makeRng, deriveSeed } from '../../src/lib/core/random.ts';
import type { Contour2d, Marginal } from '../../src/lib/pipeline/content.ts';

export interface SummaryTable {
  n: number;
  k: number;
  /** [param][object] */
  mean: Float64Array[];
  std: Float64Array[];
  p025: Float64Array[];
  p16: Float64Array[];
  p50: Float64Array[];
  p84: Float64Array[];
  p975: Float64Array[];
  hdi68lo: Float64Array[];
  hdi68hi: Float64Array[];
  hdi95lo: Float64Array[];
  hdi95hi: Float64Array[];
  multimodal: Uint8Array[];
  edgeMass: Float64Array[];
  /** Covariance matrices, k*k per object. */
  cov: Float64Array;
  nSamples: Int32Array;
  ess: Float64Array;
  essKind: ('kish' | 'autocorrelation')[];
  chi2: Float64Array;
  dof: Float64Array;
  chi2Pvalue: Float64Array;
  flags: Int32Array;
  summariesOnly: Uint8Array;
}

/** Equal-weight resample of each object's draws, for population fits and bootstraps. */
export interface PopulationDraws {
  m: number;
  /** [param] -> n*m values; object i owns [i*m, (i+1)*m). NaN where the object has no draws. */
  values: Float64Array[];
  /** Interim log prior of each kept draw (NaN when unknown). */
  logPrior: Float64Array;
  hasLogPrior: boolean;
}

export interface ObjectCharts {
  marginals: Marginal[];
  contours: Contour2d[];
  correlation: number[][] | null;
}

export const MASS_LEVELS = [0.68, 0.95] as const;

/**
 * Multimodality rule: a weighted Gaussian KDE at Silverman's bandwidth; a secondary peak
 * counts when its basin holds at least `minMass` of the posterior and the valley between
 * it and its neighbour is below half the lower peak's height.
 */
export const MULTIMODAL_OPTS = (minMass: number) => ({ minMass, bandwidthFactor: 1, maxValleyRatio: 0.5 });

function allocF(n: number, k: number, fill = NaN): Float64Array[] {
  return Array.from({ length: k }, () => new Float64Array(n).fill(fill));
}

/** Degrees of freedom of an object's chi-square: bands minus the configured number (default: the free parameters). */
export function degreesOfFreedom(nBands: number, config: ReleaseConfig): number {
  const sub = config.quality.dofSubtract ?? config.parameters.length;
  return nBands - sub;
}

function round(v: number, digits = 5): number {
  if (!Number.isFinite(v)) return v;
  return Number(v.toPrecision(digits));
}

// The corner-plot data is the kernel's own `chartsFor` (its method is tested in
// test/pipeline/summarise-kernel.test.ts); what this reference checks is how the summaries are run.

export interface SummariseOptions {
  popDraws?: number;
  seed: number;
  /** Called once per object, in catalogue order, with its corner-plot data. */
  onCharts?: (index: number, charts: ObjectCharts) => void | Promise<void>;
}

/** Summarise every object's posterior. */
export async function referenceSummariseAll(bundle: Bundle, opts: SummariseOptions): Promise<{ table: SummaryTable; pop: PopulationDraws }> {
  const { config, objects, samples, photometry } = bundle;
  const n = objects.n;
  const params = config.parameters;
  const k = params.length;
  const names = params.map((p) => p.name);
  const q = config.quality;
  const m = opts.popDraws ?? 64;

  const t: SummaryTable = {
    n,
    k,
    mean: allocF(n, k),
    std: allocF(n, k),
    p025: allocF(n, k),
    p16: allocF(n, k),
    p50: allocF(n, k),
    p84: allocF(n, k),
    p975: allocF(n, k),
    hdi68lo: allocF(n, k),
    hdi68hi: allocF(n, k),
    hdi95lo: allocF(n, k),
    hdi95hi: allocF(n, k),
    multimodal: Array.from({ length: k }, () => new Uint8Array(n)),
    edgeMass: allocF(n, k),
    cov: new Float64Array(n * k * k).fill(NaN),
    nSamples: new Int32Array(n),
    ess: new Float64Array(n).fill(NaN),
    essKind: new Array(n).fill('kish'),
    chi2: new Float64Array(n).fill(NaN),
    dof: new Float64Array(n).fill(NaN),
    chi2Pvalue: new Float64Array(n).fill(NaN),
    flags: new Int32Array(n),
    summariesOnly: new Uint8Array(n),
  };
  const pop: PopulationDraws = {
    m,
    values: Array.from({ length: k }, () => new Float64Array(n * m).fill(NaN)),
    logPrior: new Float64Array(n * m).fill(NaN),
    hasLogPrior: !!samples?.logPrior,
  };

  // bands per object for the chi-square degrees of freedom
  const bandsPerObject = new Int32Array(n);
  if (objects.nBands) bandsPerObject.set(objects.nBands);
  else if (photometry)
    for (let i = 0; i < n; i++) {
      let c = 0;
      for (let r = photometry.offsets[i]; r < photometry.offsets[i + 1]; r++) {
        const row = photometry.order[r];
        if (!(photometry.upperLimit && photometry.upperLimit[row])) c++;
      }
      bandsPerObject[i] = c;
    }

  let buf: Float64Array[] = Array.from({ length: k }, () => new Float64Array(1024));
  let wbuf = new Float64Array(1024);
  for (let i = 0; i < n; i++) {
    const id = objects.id[i];
    let flags = 0;
    // chi-square survival probability
    const chi2 = objects.chi2 ? objects.chi2[i] : NaN;
    t.chi2[i] = chi2;
    if (Number.isFinite(chi2) && bandsPerObject[i] > 0) {
      const dof = degreesOfFreedom(bandsPerObject[i], config);
      if (dof > 0) {
        t.dof[i] = dof;
        t.chi2Pvalue[i] = chi2Sf(chi2, dof);
        if (t.chi2Pvalue[i] < q.minChi2Pvalue) flags |= FLAGS.POOR_FIT;
      }
    }
    const a = samples ? samples.offsets[i] : 0;
    const b = samples ? samples.offsets[i + 1] : 0;
    const len = b - a;
    if (!samples || len === 0) {
      // summaries supplied in the objects table
      t.summariesOnly[i] = 1;
      flags |= FLAGS.SUMMARIES_ONLY;
      params.forEach((p, j) => {
        const s = objects.summaries[p.name];
        if (!s) return;
        t.p16[j][i] = s.p16[i];
        t.p50[j][i] = s.p50[i];
        t.p84[j][i] = s.p84[i];
        t.mean[j][i] = s.p50[i];
        t.std[j][i] = (s.p84[i] - s.p16[i]) / 2;
        // Gaussian approximation for the population fits
        const sd = t.std[j][i];
        t.cov[i * k * k + j * k + j] = sd * sd;
      });
      for (let a2 = 0; a2 < k; a2++) for (let b2 = 0; b2 < k; b2++) if (a2 !== b2) t.cov[i * k * k + a2 * k + b2] = 0;
      t.flags[i] = flags;
      continue;
    }
    if (buf[0].length < len) {
      buf = Array.from({ length: k }, () => new Float64Array(len * 2));
      wbuf = new Float64Array(len * 2);
    }
    const xs = buf.map((bb) => bb.subarray(0, len));
    const raw = wbuf.subarray(0, len);
    const src = samples.weight ?? samples.logWeight!;
    for (let r = 0; r < len; r++) {
      const row = samples.order[a + r];
      raw[r] = src[row];
      for (let j = 0; j < k; j++) xs[j][r] = samples.params[j][row];
    }
    const w = normaliseWeights(samples.weight ? { weights: raw } : { logWeights: raw }, id);
    t.nSamples[i] = len;
    if (samples.chain) {
      const chain = new Int32Array(len);
      for (let r = 0; r < len; r++) chain[r] = samples.chain[samples.order[a + r]];
      let ess = Infinity;
      for (let j = 0; j < k; j++) ess = Math.min(ess, autocorrEss(xs[j], chain));
      t.ess[i] = ess;
      t.essKind[i] = 'autocorrelation';
    } else t.ess[i] = kishEss(w);
    if (t.ess[i] < q.minEss) flags |= FLAGS.LOW_ESS;

    for (let j = 0; j < k; j++) {
      const s: ParamSummary = summarise(xs[j], w);
      t.mean[j][i] = s.mean;
      t.std[j][i] = s.std;
      t.p025[j][i] = s.p025;
      t.p16[j][i] = s.p16;
      t.p50[j][i] = s.p50;
      t.p84[j][i] = s.p84;
      t.p975[j][i] = s.p975;
      t.hdi68lo[j][i] = s.hdi68[0];
      t.hdi68hi[j][i] = s.hdi68[1];
      t.hdi95lo[j][i] = s.hdi95[0];
      t.hdi95hi[j][i] = s.hdi95[1];
      if (isMultimodal(xs[j], w, MULTIMODAL_OPTS(q.multimodalMinMass))) {
        t.multimodal[j][i] = 1;
        flags |= FLAGS.MULTIMODAL;
      }
      const prior = params[j].prior;
      if (prior?.kind === 'uniform') {
        const em = priorEdgeMass(xs[j], w, { min: prior.min, max: prior.max }, q.priorEdgeWidth);
        t.edgeMass[j][i] = em;
        if (em > q.priorEdgeMass) flags |= FLAGS.PRIOR_EDGE;
      }
    }
    const cov = weightedCovariance(xs, w);
    t.cov.set(cov, i * k * k);
    t.flags[i] = flags;

    // equal-weight resample (systematic resampling, seeded per object)
    const rng = makeRng(deriveSeed(opts.seed, 'pop', id));
    const u0 = rng.next() / m;
    let acc = 0;
    let r = 0;
    for (let d = 0; d < m; d++) {
      const u = u0 + d / m;
      while (r < len - 1 && acc + w[r] < u) acc += w[r++];
      const row = samples.order[a + r];
      for (let j = 0; j < k; j++) pop.values[j][i * m + d] = xs[j][r];
      if (samples.logPrior) pop.logPrior[i * m + d] = samples.logPrior[row];
    }

    if (opts.onCharts) {
      const charts = chartsFor(names, xs, w, deriveSeed(opts.seed, 'corner', id));
      charts.correlation = Array.from({ length: k }, (_, r1) =>
        Array.from(correlationFromCovariance(cov, k).subarray(r1 * k, r1 * k + k), (v) => round(v, 3)),
      );
      await opts.onCharts(i, charts);
    }
  }
  return { table: t, pop };
}
