/**
 * The population stage as it was before per-draw redshift-bin membership (a frozen copy of
 * population.ts and population-methods.ts), kept as the reference the new implementation must
 * reproduce exactly when no parameter has the redshift role. Later changes that have nothing to
 * do with bin membership are copied in (the hierarchical fit's likelihood precision, in its
 * diagnostics and method note; the samplers' convergence rule, `convergeFrom`), so the
 * comparison stays about membership alone.
 */
import type { ReleaseConfig, RelationConfig } from '../../src/lib/bundle/schema.ts';
import type { ObjectsData } from '../../src/lib/bundle/load.ts';
import type { PopulationDraws, SummaryTable } from '../../src/lib/pipeline/summarise.ts';
import type { BinFit, MethodFit, RelationContent, ParameterInfo, Estimate } from '../../src/lib/pipeline/content.ts';
import { classifyBySsfr, STAR_FORMING, QUIESCENT } from '../../src/lib/core/population/classify.ts';
import { massCompleteness } from '../../src/lib/core/population/completeness.ts';
import { fitDeconvolved, fitNaive } from '../../src/lib/core/relations/deconvolved.ts';
import { credibleBand, type RelationFit } from '../../src/lib/core/relations/linear.ts';
import { deriveSeed } from '../../src/lib/core/random.ts';
import { FLAGS } from '../../src/lib/core/flags.ts';
import { slugOf } from '../../src/lib/core/slug.ts';
import type { Cosmology } from '../../src/lib/core/cosmology.ts';
import { fitHierarchical } from '../../src/lib/core/relations/hierarchical.ts';
import { runningMedian } from '../../src/lib/core/relations/running.ts';
import { referenceRelation } from '../../src/lib/core/relations/reference.ts';
import { fitMixture } from '../../src/lib/core/relations/mixture.ts';
import { convergeFrom } from '../../src/lib/pipeline/population.ts';
import type { DeconvolvedData } from '../../src/lib/core/relations/deconvolved.ts';

export interface PopulationResult {
  population: string[];
  pSequence: Float64Array | null;
  relations: RelationContent[];
  offsets: { name: string; offset: Float64Array; tension: Float64Array }[];
  completeness: { zLo: number; zHi: number; logMLim: number }[] | null;
  /** Fits used by the headline numbers. */
  warnings: string[];
}

export function roleIndex(config: ReleaseConfig, role: string): number {
  return config.parameters.findIndex((p) => p.role === role);
}

export function paramInfo(config: ReleaseConfig, name: string): ParameterInfo {
  const p = config.parameters.find((q) => q.name === name)!;
  return { name: p.name, label: p.label, unit: p.unit, description: p.description, ucd: p.ucd, role: p.role, prior: p.prior as ParameterInfo['prior'] };
}

const est = (e: Estimate): Estimate => ({ median: e.median, lo: e.lo, hi: e.hi });

function methodFit(f: RelationFit, diag: Record<string, number | number[] | string> = {}): MethodFit {
  const d: Record<string, number | number[] | string> = { ...diag };
  for (const [k, v] of Object.entries(f.diagnostics)) if (v !== undefined) d[k] = v as number | number[];
  return { method: f.method, n: f.n, a: est(f.a), b: est(f.b), s: est(f.s), ...(f.c ? { c: est(f.c) } : {}), diagnostics: d, warnings: f.warnings };
}

/** MCMC length from a work budget (likelihood terms), so small bins get long chains and big ones stay fast. */
export function stepsFor(termsPerStep: number, budget: number, min: number, max: number): number {
  return Math.max(min, Math.min(max, Math.round(budget / Math.max(1, termsPerStep))));
}

function binOf(z: number, edges: number[]): number {
  if (!(z >= edges[0]) || z > edges[edges.length - 1]) return -1;
  for (let k = 0; k < edges.length - 1; k++) if (z < edges[k + 1] || k === edges.length - 2) return k;
  return -1;
}

export interface PopulationInputs {
  config: ReleaseConfig;
  objects: ObjectsData;
  summary: SummaryTable;
  pop: PopulationDraws;
  cosmo: Cosmology;
  /** True relation parameters of a mock, per relation and z bin, when known (for display only). */
  truth?: Record<string, { a: number; b: number; s: number }[]>;
}

export function referenceRunPopulation(inp: PopulationInputs): PopulationResult {
  const { config, objects, summary, pop } = inp;
  const n = objects.n;
  const k = summary.k;
  const warnings: string[] = [];
  const iM = roleIndex(config, 'log_mass');
  const iS = roleIndex(config, 'log_sfr');

  // populations by the sSFR rule on posterior medians
  const population = new Array<string>(n).fill('');
  if (iM >= 0 && iS >= 0) {
    const cls = classifyBySsfr(summary.p50[iM], summary.p50[iS], config.populations.threshold);
    for (let i = 0; i < n; i++) population[i] = cls[i] === STAR_FORMING ? 'star-forming' : cls[i] === QUIESCENT ? 'quiescent' : '';
  }

  // mass completeness per relation bins (Pozzetti et al. 2010)
  const magLim = config.survey.magLimit;
  const completenessFor = (edges: number[]) =>
    iM >= 0 && objects.mag && magLim !== undefined ? massCompleteness(summary.p50[iM], objects.mag, objects.redshift, magLim, edges) : null;

  // The two-component mixture of the main sequence gives each galaxy above the completeness
  // limit a probability of belonging to the sequence; where it exists it replaces the hard
  // sSFR cut for the population label, so the star-forming fits are not truncated by it.
  let mixture: Float64Array | null = null;
  const mixtureFits = new Map<string, (MethodFit | null)[]>();
  for (const rel of config.relations) {
    if (!rel.methods.includes('mixture')) continue;
    const m = sequenceMembership(rel, inp, completenessFor(rel.zBins));
    mixtureFits.set(rel.name, m.fits);
    if (!mixture) {
      mixture = m.membership;
      for (let i = 0; i < n; i++) if (Number.isFinite(mixture[i])) population[i] = mixture[i] >= 0.5 ? 'star-forming' : 'quiescent';
    }
  }

  const relations: RelationContent[] = [];
  const offsets: PopulationResult['offsets'] = [];
  for (const rel of config.relations) {
    const res = fitRelation(rel, inp, population, completenessFor(rel.zBins), warnings, mixtureFits.get(rel.name));
    relations.push(res.content);
    offsets.push({ name: rel.name, offset: res.offset, tension: res.tension });
    for (let i = 0; i < n; i++) if (Math.abs(res.tension[i]) > config.quality.outlierTension) summary.flags[i] |= FLAGS.RELATION_OUTLIER;
  }
  const comp = iM >= 0 && config.relations[0] ? completenessFor(config.relations[0].zBins) : null;
  void k;
  return {
    population,
    pSequence: mixture,
    relations,
    offsets,
    completeness: comp ? comp.map((c) => ({ zLo: c.zLo, zHi: c.zHi, logMLim: c.logMLim })) : null,
    warnings,
  };
}

/** Galaxies of redshift bin b with finite posterior means, and those above the bin's mass-completeness limit. */
function binMembers(rel: RelationConfig, inp: PopulationInputs, completeness: { logMLim: number }[] | null) {
  const { config, objects, summary } = inp;
  const ix = config.parameters.findIndex((p) => p.name === rel.x);
  const iy = config.parameters.findIndex((p) => p.name === rel.y);
  const iM = roleIndex(config, 'log_mass');
  const edges = rel.zBins;
  const inBin: number[][] = edges.slice(1).map(() => []);
  const aboveLimit: number[][] = edges.slice(1).map(() => []);
  for (let i = 0; i < objects.n; i++) {
    const b = binOf(objects.redshift[i], edges);
    if (b < 0 || !Number.isFinite(summary.mean[ix][i]) || !Number.isFinite(summary.mean[iy][i])) continue;
    inBin[b].push(i);
    if (rel.aboveCompleteness && completeness && iM >= 0) {
      const lim = completeness[b]?.logMLim;
      if (Number.isFinite(lim) && summary.p50[iM][i] < lim) continue;
    }
    aboveLimit[b].push(i);
  }
  return { ix, iy, inBin, aboveLimit };
}

/**
 * Each galaxy's posterior mean and 2x2 covariance, and its redshift offset from the bin centre:
 * the relation evolves inside a bin, and in a flux-limited sample low-mass galaxies sit at its
 * low-redshift end, so every fit carries a linear term c (z - zc) and a is the relation at zc.
 */
function deconvolvedData(inp: PopulationInputs, idx: number[], ix: number, iy: number, zc: number | null) {
  const { summary, objects } = inp;
  const k = summary.k;
  const c = (i: number, r: number, q: number) => summary.cov[i * k * k + r * k + q];
  return {
    x: Float64Array.from(idx, (i) => summary.mean[ix][i]),
    y: Float64Array.from(idx, (i) => summary.mean[iy][i]),
    cxx: Float64Array.from(idx, (i) => c(i, ix, ix)),
    cyy: Float64Array.from(idx, (i) => c(i, iy, iy)),
    cxy: Float64Array.from(idx, (i) => c(i, ix, iy)),
    ...(zc !== null ? { dz: Float64Array.from(idx, (i) => objects.redshift[i] - zc) } : {}),
  };
}

/** Mixture fit per redshift bin on every galaxy above the completeness limit. */
function sequenceMembership(rel: RelationConfig, inp: PopulationInputs, completeness: { logMLim: number }[] | null): { membership: Float64Array; fits: (MethodFit | null)[] } {
  const membership = new Float64Array(inp.objects.n).fill(NaN);
  const { ix, iy, aboveLimit } = binMembers(rel, inp, completeness);
  const fits = aboveLimit.map((all, b) => {
    if (all.length < 10) return null;
    const zc = rel.redshiftTerm ? 0.5 * (rel.zBins[b] + rel.zBins[b + 1]) : null;
    const mf = mixtureFit(deconvolvedData(inp, all, ix, iy, zc), rel.pivot, deriveSeed(inp.config.seed, rel.name, b, 'mixture'));
    all.forEach((i, j) => (membership[i] = mf.membership[j]));
    return mf.fit;
  });
  return { membership, fits };
}

function fitRelation(
  rel: RelationConfig,
  inp: PopulationInputs,
  population: string[],
  completeness: { zLo: number; zHi: number; logMLim: number }[] | null,
  warnings: string[],
  mixtureFits?: (MethodFit | null)[],
): { content: RelationContent; offset: Float64Array; tension: Float64Array } {
  const { config, objects, summary, pop } = inp;
  const n = objects.n;
  const k = summary.k;
  const ix = config.parameters.findIndex((p) => p.name === rel.x);
  const iy = config.parameters.findIndex((p) => p.name === rel.y);
  const iM = roleIndex(config, 'log_mass');
  const edges = rel.zBins;
  const xMean = summary.mean[ix], yMean = summary.mean[iy];
  const offset = new Float64Array(n).fill(NaN);
  const tension = new Float64Array(n).fill(NaN);
  const bins: BinFit[] = [];
  const methodNotes: string[] = [];
  const selected: number[][] = edges.slice(1).map(() => []);
  const inBin: number[][] = edges.slice(1).map(() => []);
  const aboveLimit: number[][] = edges.slice(1).map(() => []);

  for (let i = 0; i < n; i++) {
    const b = binOf(objects.redshift[i], edges);
    if (b < 0 || !Number.isFinite(xMean[i]) || !Number.isFinite(yMean[i])) continue;
    inBin[b].push(i);
    if (rel.aboveCompleteness && completeness && iM >= 0) {
      const lim = completeness[b]?.logMLim;
      if (Number.isFinite(lim) && summary.p50[iM][i] < lim) continue;
    }
    aboveLimit[b].push(i);
    if (rel.population !== 'all' && population[i] !== rel.population) continue;
    selected[b].push(i);
  }

  const covAt = (i: number, r: number, c: number) => summary.cov[i * k * k + r * k + c];
  for (let b = 0; b < edges.length - 1; b++) {
    const idx = selected[b];
    const zLo = edges[b], zHi = edges[b + 1];
    const lim = completeness?.[b]?.logMLim;
    const bin: BinFit = { zLo, zHi, n: idx.length, completenessLogM: Number.isFinite(lim) ? lim! : null, fits: [], running: null, band: null, reference: null };
    const truth = inp.truth?.[rel.name]?.[b];
    if (truth) bin.truth = truth;
    if (idx.length < 5) {
      warnings.push(`${rel.name}: redshift bin ${zLo}-${zHi} has ${idx.length} selected objects; not fitted`);
      bins.push(bin);
      continue;
    }
    const zc = 0.5 * (zLo + zHi);
    const d = deconvolvedData(inp, idx, ix, iy, rel.redshiftTerm ? zc : null);
    const seed = deriveSeed(config.seed, rel.name, b);
    let preferred: RelationFit | null = null;
    if (rel.methods.includes('deconvolved')) {
      const nSteps = stepsFor(idx.length * 16, 3e7, 400, 2000);
      const f = fitDeconvolved(d, { pivot: rel.pivot, seed, nWalkers: 16, nSteps, converge: convergeFrom(nSteps) });
      bin.fits.push(methodFit(f));
      preferred = f;
    }
    const hier = rel.methods.includes('hierarchical') ? hierarchicalIfAvailable(rel, inp, idx, ix, iy, seed, warnings, ix === iM && Number.isFinite(lim) && rel.aboveCompleteness ? lim : undefined, d.dz) : null;
    if (hier) {
      bin.fits.push(hier.fit);
      preferred = hier.raw;
    }
    if (rel.methods.includes('naive')) {
      const med = { x: Float64Array.from(idx, (i) => summary.p50[ix][i]), y: Float64Array.from(idx, (i) => summary.p50[iy][i]) };
      bin.fits.push(methodFit(fitNaive(med.x, med.y, rel.pivot, seed, d.dz)));
    }
    const mix = mixtureFits?.[b];
    if (mix) bin.fits.push(mix);
    if (rel.methods.includes('running-median')) bin.running = runningIfAvailable(pop, idx, ix, iy, d.x, seed);
    if (preferred) {
      const xs = new Float64Array(40);
      let lo = Infinity, hi = -Infinity;
      for (const v of d.x) {
        if (v < lo) lo = v;
        if (v > hi) hi = v;
      }
      for (let g = 0; g < 40; g++) xs[g] = lo + ((hi - lo) * g) / 39;
      const band = credibleBand(preferred, xs);
      bin.band = { method: preferred.method, x: Array.from(band.x), lo: Array.from(band.lo), mid: Array.from(band.mid), hi: Array.from(band.hi) };
      // offsets and tensions for every object in the bin (selected or not)
      const a = preferred.a.median, bb = preferred.b.median, s = preferred.s.median, cz = preferred.c?.median ?? 0;
      for (const i of inBin[b]) {
        const off = yMean[i] - (a + bb * (xMean[i] - rel.pivot) + cz * (objects.redshift[i] - zc));
        const v = s * s + covAt(i, iy, iy) - 2 * bb * covAt(i, ix, iy) + bb * bb * covAt(i, ix, ix);
        offset[i] = off;
        tension[i] = off / Math.sqrt(v);
      }
    }
    if (rel.reference) bin.reference = referenceIfAvailable(rel, config, inp.cosmo, zLo, zHi);
    bins.push(bin);
  }

  methodNotes.push(
    'Deconvolved: each galaxy enters with its posterior mean and 2x2 posterior covariance; the likelihood variance is s^2 + Cyy - 2b Cxy + b^2 Cxx (Hogg, Bovy and Lang 2010). The posterior of (a, b, s) is sampled with the Goodman and Weare (2010) affine-invariant ensemble sampler.',
    'Naive: ordinary least squares on posterior medians, shown so readers can see the bias that ignoring the posterior widths and correlations brings.',
  );
  if (rel.methods.includes('hierarchical'))
    methodNotes.push('Hierarchical: the draws of each galaxy are reweighted by the population model over the interim prior of the fit (Hogg, Myers and Bovy 2010), with a Gaussian model of the x distribution fitted jointly (in the spirit of Kelly 2007). While sampling, each galaxy\'s sum over its draws is computed in single precision (every term to about 1e-7 of itself, far below the sampling noise); the mode search that starts the sampler uses double precision.');
  if (mixtureFits)
    methodNotes.push('Mixture: every galaxy above the completeness limit, star-forming or not, enters a two-component model (the sequence plus a broad component, in the spirit of the outlier mixture of Hogg, Bovy and Lang 2010), so no hard sSFR cut truncates the sequence; each galaxy gets its probability of belonging to the sequence (catalogue column p_sequence).');
  if (rel.methods.includes('running-median'))
    methodNotes.push('Running median: median and 16-84% spread of y in bins of x; the bootstrap resamples both the galaxies and one posterior draw per galaxy.');

  // density of the selected objects (binned at build time so its size does not grow with the catalogue)
  const all = selected.flat();
  const nx = 40, ny = 30;
  let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
  for (const i of all) {
    x0 = Math.min(x0, xMean[i]); x1 = Math.max(x1, xMean[i]);
    y0 = Math.min(y0, yMean[i]); y1 = Math.max(y1, yMean[i]);
  }
  if (!Number.isFinite(x0)) { x0 = 0; x1 = 1; y0 = 0; y1 = 1; }
  const dx = (x1 - x0) / nx || 1, dy = (y1 - y0) / ny || 1;
  const counts = new Array<number>(nx * ny).fill(0);
  for (const i of all) {
    const cx = Math.min(nx - 1, Math.floor((xMean[i] - x0) / dx));
    const cy = Math.min(ny - 1, Math.floor((yMean[i] - y0) / dy));
    counts[cy * nx + cx]++;
  }
  // the same grid per redshift bin, for the small-multiple panels
  const densityByBin = selected.map((idx) => {
    const c = new Array<number>(nx * ny).fill(0);
    for (const i of idx) c[Math.min(ny - 1, Math.floor((yMean[i] - y0) / dy)) * nx + Math.min(nx - 1, Math.floor((xMean[i] - x0) / dx))]++;
    return c;
  });
  const outliers: RelationContent['outliers'] = [];
  const thr = config.quality.outlierTension;
  for (const i of all)
    if (Math.abs(tension[i]) > thr)
      outliers.push({ id: objects.id[i], slug: slugOf(objects.id[i]), x: xMean[i], y: yMean[i], z: objects.redshift[i], tension: tension[i], reason: `${tension[i] > 0 ? 'above' : 'below'} the relation by ${Math.abs(tension[i]).toFixed(1)} times the combined scatter` });
  outliers.sort((p, q) => Math.abs(q.tension) - Math.abs(p.tension) || (p.id < q.id ? -1 : 1));
  const step = Math.max(1, Math.ceil(all.length / 3000));
  const sortedAll = [...all].sort((p, q) => p - q);
  const points = sortedAll.filter((_, j) => j % step === 0).map((i) => ({ id: objects.id[i], slug: slugOf(objects.id[i]), x: xMean[i], y: yMean[i], z: objects.redshift[i] }));

  const priorUsed = pop.hasLogPrior ? 'per-draw log_prior column of the samples table' : 'the interim priors declared in release.json';
  return {
    content: {
      name: rel.name,
      title: rel.title,
      x: paramInfo(config, rel.x),
      y: paramInfo(config, rel.y),
      population: rel.population,
      pivot: rel.pivot,
      zBins: edges,
      bins,
      density: { x0, dx, y0, dy, nx, ny, counts },
      densityByBin,
      outliers: outliers.slice(0, 500),
      points,
      methodNotes,
      caveats: [
        'Interim-prior dependence: every fit inherits the priors of the SED fits; the hierarchical method divides them out, the others do not.',
        `Selection: only ${rel.population === 'all' ? 'galaxies' : rel.population + ' galaxies'} above the mass-completeness limit of each redshift bin are fitted; a hard population cut can bias the slope.`,
        'Completeness: the limit is estimated from the magnitude limit (Pozzetti et al. 2010); below it the sample misses faint, low-mass galaxies.',
      ],
      priorUsed,
    },
    offset,
    tension,
  };
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
  /** Completeness cut on x (the sample holds only galaxies above it): modelled in the likelihood. */
  xMin?: number,
  /** Redshift offset of each selected object from the bin centre (the within-bin evolution term). */
  dz?: Float64Array,
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
  const fit = fitHierarchical({ x: x.subarray(0, o), y: y.subarray(0, o), w: w.subarray(0, o), logPrior: lp.subarray(0, o), offsets, ...(dz ? { dz } : {}) }, { pivot: rel.pivot, seed, maxDraws: m, nWalkers: 12, nSteps: stepsFor(o * 12, 2.5e8, 600, 2000), converge: convergeFrom(stepsFor(o * 12, 2.5e8, 600, 2000)), ...(xMin !== undefined ? { selection: { xMin } } : {}) });
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
      xModelMu: fit.xModel.mu.median,
      xModelTau: fit.xModel.tau.median,
    },
    warnings: fit.warnings,
  };
  return { fit: out, raw: fit };
}

const arr = (a: Float64Array, d = 5) => Array.from(a, (v) => (Number.isFinite(v) ? Number(v.toPrecision(d)) : NaN));

/** Running median of y in 8 equal bins of x, bootstrapping objects and one posterior draw each. */
export function runningIfAvailable(pop: PopulationDraws, idx: number[], ix: number, iy: number, x: Float64Array, seed: number): BinFit['running'] {
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
  let o = 0;
  idx.forEach((i, s) => {
    for (let d = 0; d < m; d++) {
      const xv = pop.values[ix][i * m + d], yv = pop.values[iy][i * m + d];
      if (!Number.isFinite(xv) || !Number.isFinite(yv)) continue;
      xs[o] = xv;
      ys[o] = yv;
      o++;
    }
    offsets[s + 1] = o;
  });
  const r = runningMedian({ x: xs.subarray(0, o), y: ys.subarray(0, o), w: w.subarray(0, o), offsets }, { edges, nBoot: 200, seed });
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
