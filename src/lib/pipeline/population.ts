/**
 * Population stage: classify galaxies, derive mass completeness, fit each declared
 * relation per redshift bin by every requested method, and measure each galaxy's
 * offset and tension from its bin's fit.
 *
 * Redshift-bin membership: by the catalogue redshift, unless a parameter has the role
 * 'redshift'; then it is assigned per posterior draw (`drawMembership`): a galaxy belongs to
 * bin k with probability f_k, the share of its draws whose redshift falls in the bin, and
 * enters bin k's fits with only those draws and its likelihood term weighted by f_k.
 */
import type { ReleaseConfig, RelationConfig } from '../bundle/schema.ts';
import type { ObjectsData } from '../bundle/load.ts';
import type { PopulationDraws, SummaryTable } from './summarise.ts';
import type { BinFit, MethodFit, RelationContent, ParameterInfo, Estimate } from './content.ts';
import { classifyBySsfr, STAR_FORMING, QUIESCENT } from '../core/population/classify.ts';
import { massCompleteness } from '../core/population/completeness.ts';
import { fitDeconvolved, fitNaive, type DeconvolvedData } from '../core/relations/deconvolved.ts';
import { credibleBand, type RelationFit } from '../core/relations/linear.ts';
import { deriveSeed } from '../core/random.ts';
import { FLAGS } from '../core/flags.ts';
import { slugOf } from '../core/slug.ts';
import type { Cosmology } from '../core/cosmology.ts';
import * as extra from './population-methods.ts';

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

/**
 * Convergence rule of every relation fit's sampler: starting from `nSteps`, the chain is doubled
 * while any split R-hat exceeds 1.05, up to four times its first length (the pages warn above
 * 1.1, the usual threshold, common practice; Gelman et al. 2013, Bayesian Data Analysis, sect. 11.4,
 * section number from memory).
 */
export function convergeFrom(nSteps: number): { rhat: number; maxSteps: number } {
  return { rhat: 1.05, maxSteps: 4 * nSteps };
}

/** Redshift bin of z: [edges[k], edges[k+1]), the last bin closed; -1 outside. */
export function binOf(z: number, edges: number[]): number {
  if (!(z >= edges[0]) || z > edges[edges.length - 1]) return -1;
  for (let k = 0; k < edges.length - 1; k++) if (z < edges[k + 1] || k === edges.length - 2) return k;
  return -1;
}

/**
 * Floor of per-draw membership: an object enters bin k's fits only when its share of draws in
 * the bin, f_k, is at least this and at least `MEMBERSHIP_MIN_DRAWS` of its draws are in the
 * bin (fewer give a degenerate in-bin covariance). Below it the object's small share of that
 * bin is dropped (at most this fraction of its posterior per bin).
 */
export const MEMBERSHIP_MIN_FRACTION = 0.05;
export const MEMBERSHIP_MIN_DRAWS = 3;

/** The members of one redshift bin under per-draw membership, in increasing object index. */
export interface BinMembers {
  idx: number[];
  /** f_ik: share of the object's draws (equal weights, finite redshift) whose redshift is in the bin. */
  f: Float64Array;
  /** Number of its draws in the bin. */
  count: Int32Array;
  /** Mean and 2x2 covariance (1 / count normalisation) of x and y over the in-bin draws. */
  x: Float64Array;
  y: Float64Array;
  cxx: Float64Array;
  cyy: Float64Array;
  cxy: Float64Array;
  /** Posterior mean redshift of the in-bin draws. */
  z: Float64Array;
}

export interface DrawMembership {
  /** Name of the redshift-role parameter whose draws set the membership. */
  parameter: string;
  bins: BinMembers[];
  /** Per object: the bin holding the largest f (the lower one on a tie) among those it is a member of; -1 if none. */
  dominant: Int32Array;
  /** Objects with no finite redshift draw, placed by their catalogue redshift with f = 1 (e.g. summaries without samples). */
  fallback: number;
}

/**
 * Per-draw bin membership for `edges` from the population draws of the redshift-role
 * parameter `iz`: for each object, f_k = (draws with z in bin k) / (draws with finite z), the
 * posterior weight in bin k (the population draws are an equal-weight resample of the
 * posterior). An object is a member of bin k when f_k >= MEMBERSHIP_MIN_FRACTION and
 * >= MEMBERSHIP_MIN_DRAWS of its draws are in the bin; its bin-k moments are those of its
 * in-bin draws. An object without any finite redshift draw falls back to the bin of its
 * catalogue redshift, with f = 1 and its summary moments (as without per-draw membership).
 */
export function drawMembership(inp: PopulationInputs, iz: number, ix: number, iy: number, edges: number[]): DrawMembership {
  const { pop, summary, objects, config } = inp;
  const n = objects.n, m = pop.m, k = summary.k;
  const nb = edges.length - 1;
  const acc = Array.from({ length: nb }, () => ({ idx: [] as number[], f: [] as number[], count: [] as number[], x: [] as number[], y: [] as number[], cxx: [] as number[], cyy: [] as number[], cxy: [] as number[], z: [] as number[] }));
  const dominant = new Int32Array(n).fill(-1);
  const zs = pop.values[iz], xs = pop.values[ix], ys = pop.values[iy];
  const cnt = new Int32Array(nb), sx = new Float64Array(nb), sy = new Float64Array(nb), sz = new Float64Array(nb);
  const bin = new Int32Array(m);
  let fallback = 0;
  for (let i = 0; i < n; i++) {
    cnt.fill(0);
    sx.fill(0);
    sy.fill(0);
    sz.fill(0);
    let total = 0;
    for (let d = 0; d < m; d++) {
      const z = zs[i * m + d];
      bin[d] = -1;
      if (!Number.isFinite(z)) continue;
      total++;
      const xv = xs[i * m + d], yv = ys[i * m + d];
      if (!Number.isFinite(xv) || !Number.isFinite(yv)) continue;
      const b = binOf(z, edges);
      if (b < 0) continue;
      bin[d] = b;
      cnt[b]++;
      sx[b] += xv;
      sy[b] += yv;
      sz[b] += z;
    }
    let best = -1, bestF = 0;
    if (total === 0) {
      const b = binOf(objects.redshift[i], edges);
      if (b < 0 || !Number.isFinite(summary.mean[ix][i]) || !Number.isFinite(summary.mean[iy][i])) continue;
      fallback++;
      const a = acc[b];
      const c = (r: number, q: number) => summary.cov[i * k * k + r * k + q];
      a.idx.push(i);
      a.f.push(1);
      a.count.push(0);
      a.x.push(summary.mean[ix][i]);
      a.y.push(summary.mean[iy][i]);
      a.cxx.push(c(ix, ix));
      a.cyy.push(c(iy, iy));
      a.cxy.push(c(ix, iy));
      a.z.push(objects.redshift[i]);
      dominant[i] = b;
      continue;
    }
    for (let b = 0; b < nb; b++) {
      const f = cnt[b] / total;
      if (cnt[b] < MEMBERSHIP_MIN_DRAWS || f < MEMBERSHIP_MIN_FRACTION) continue;
      const mx = sx[b] / cnt[b], my = sy[b] / cnt[b];
      let cxx = 0, cyy = 0, cxy = 0;
      for (let d = 0; d < m; d++) {
        if (bin[d] !== b) continue;
        const dx = xs[i * m + d] - mx, dy = ys[i * m + d] - my;
        cxx += dx * dx;
        cyy += dy * dy;
        cxy += dx * dy;
      }
      const a = acc[b];
      a.idx.push(i);
      a.f.push(f);
      a.count.push(cnt[b]);
      a.x.push(mx);
      a.y.push(my);
      a.cxx.push(cxx / cnt[b]);
      a.cyy.push(cyy / cnt[b]);
      a.cxy.push(cxy / cnt[b]);
      a.z.push(sz[b] / cnt[b]);
      if (f > bestF) {
        bestF = f;
        best = b;
      }
    }
    dominant[i] = best;
  }
  const bins = acc.map((a) => ({
    idx: a.idx,
    f: Float64Array.from(a.f),
    count: Int32Array.from(a.count),
    x: Float64Array.from(a.x),
    y: Float64Array.from(a.y),
    cxx: Float64Array.from(a.cxx),
    cyy: Float64Array.from(a.cyy),
    cxy: Float64Array.from(a.cxy),
    z: Float64Array.from(a.z),
  }));
  return { parameter: config.parameters[iz].name, bins, dominant, fallback };
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

export function runPopulation(inp: PopulationInputs): PopulationResult {
  const { config, objects, summary, pop } = inp;
  const n = objects.n;
  const k = summary.k;
  const warnings: string[] = [];
  const iM = roleIndex(config, 'log_mass');
  const iS = roleIndex(config, 'log_sfr');
  const iZ = roleIndex(config, 'redshift');
  // per-draw redshift-bin membership, once per relation, when redshift is a sampled parameter
  const memberships = new Map<RelationConfig, DrawMembership>();
  const membershipOf = (rel: RelationConfig): DrawMembership | null => {
    if (iZ < 0) return null;
    let mb = memberships.get(rel);
    if (!mb) {
      const ix = config.parameters.findIndex((p) => p.name === rel.x);
      const iy = config.parameters.findIndex((p) => p.name === rel.y);
      mb = drawMembership(inp, iZ, ix, iy, rel.zBins);
      memberships.set(rel, mb);
    }
    return mb;
  };

  // populations by the sSFR rule on posterior medians
  const population = new Array<string>(n).fill('');
  if (iM >= 0 && iS >= 0) {
    const cls = classifyBySsfr(summary.p50[iM], summary.p50[iS], config.populations.threshold);
    for (let i = 0; i < n; i++) population[i] = cls[i] === STAR_FORMING ? 'star-forming' : cls[i] === QUIESCENT ? 'quiescent' : '';
  }

  // mass completeness per relation bins (Pozzetti et al. 2010); with per-draw membership each
  // bin's members enter it at their in-bin posterior-mean redshift
  const magLim = config.survey.magLimit;
  const completenessFor = (rel: RelationConfig) => {
    const edges = rel.zBins;
    if (!(iM >= 0 && objects.mag && magLim !== undefined)) return null;
    const mb = membershipOf(rel);
    if (!mb) return massCompleteness(summary.p50[iM], objects.mag, objects.redshift, magLim, edges);
    return mb.bins.map((bm, b) => {
      const z = new Float64Array(n).fill(NaN);
      bm.idx.forEach((i, j) => (z[i] = bm.z[j]));
      return massCompleteness(summary.p50[iM], objects.mag!, z, magLim, [edges[b], edges[b + 1]])[0];
    });
  };

  // The two-component mixture of the main sequence gives each galaxy above the completeness
  // limit a probability of belonging to the sequence; where it exists it replaces the hard
  // sSFR cut for the population label, so the star-forming fits are not truncated by it.
  let mixture: Float64Array | null = null;
  const mixtureFits = new Map<string, (MethodFit | null)[]>();
  for (const rel of config.relations) {
    if (!rel.methods.includes('mixture')) continue;
    const m = sequenceMembership(rel, inp, completenessFor(rel), membershipOf(rel));
    mixtureFits.set(rel.name, m.fits);
    if (!mixture) {
      mixture = m.membership;
      for (let i = 0; i < n; i++) if (Number.isFinite(mixture[i])) population[i] = mixture[i] >= 0.5 ? 'star-forming' : 'quiescent';
    }
  }

  const relations: RelationContent[] = [];
  const offsets: PopulationResult['offsets'] = [];
  for (const rel of config.relations) {
    const res = fitRelation(rel, inp, population, completenessFor(rel), warnings, mixtureFits.get(rel.name), membershipOf(rel));
    relations.push(res.content);
    offsets.push({ name: rel.name, offset: res.offset, tension: res.tension });
    for (let i = 0; i < n; i++) if (Math.abs(res.tension[i]) > config.quality.outlierTension) summary.flags[i] |= FLAGS.RELATION_OUTLIER;
  }
  const comp = iM >= 0 && config.relations[0] ? completenessFor(config.relations[0]) : null;
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

/** Under per-draw membership: positions (into `mb.bins[b]`) of the members above the bin's mass-completeness limit, by the posterior median mass. */
function aboveLimitPerDraw(rel: RelationConfig, inp: PopulationInputs, completeness: { logMLim: number }[] | null, mb: DrawMembership): number[][] {
  const iM = roleIndex(inp.config, 'log_mass');
  return mb.bins.map((bm, b) => {
    const lim = completeness?.[b]?.logMLim;
    const cut = rel.aboveCompleteness && completeness && iM >= 0 && Number.isFinite(lim);
    const out: number[] = [];
    bm.idx.forEach((i, j) => {
      if (cut && inp.summary.p50[iM][i] < lim!) return;
      out.push(j);
    });
    return out;
  });
}

/**
 * The deconvolved-fit input of bin members at positions `pos` under per-draw membership: the
 * in-bin draws' mean and covariance, the weight f, and dz from the in-bin mean redshift.
 */
function perDrawData(bm: BinMembers, pos: number[], zc: number | null): DeconvolvedData & { objectWeight: Float64Array } {
  const at = (col: Float64Array) => Float64Array.from(pos, (j) => col[j]);
  return {
    x: at(bm.x),
    y: at(bm.y),
    cxx: at(bm.cxx),
    cyy: at(bm.cyy),
    cxy: at(bm.cxy),
    ...(zc !== null ? { dz: Float64Array.from(pos, (j) => bm.z[j] - zc) } : {}),
    objectWeight: at(bm.f),
  };
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

/**
 * Mixture fit per redshift bin on every galaxy above the completeness limit. With per-draw
 * membership each bin's fit weights its members by f_k, and a galaxy's probability of being
 * on the sequence is the f-weighted mean over the fitted bins it belongs to.
 */
function sequenceMembership(rel: RelationConfig, inp: PopulationInputs, completeness: { logMLim: number }[] | null, mb: DrawMembership | null): { membership: Float64Array; fits: (MethodFit | null)[] } {
  const membership = new Float64Array(inp.objects.n).fill(NaN);
  if (mb) {
    const num = new Float64Array(inp.objects.n), den = new Float64Array(inp.objects.n);
    const above = aboveLimitPerDraw(rel, inp, completeness, mb);
    const fits = above.map((pos, b) => {
      if (pos.length < 10) return null;
      const bm = mb.bins[b];
      const zc = rel.redshiftTerm ? 0.5 * (rel.zBins[b] + rel.zBins[b + 1]) : null;
      const mf = extra.mixtureFit(perDrawData(bm, pos, zc), rel.pivot, deriveSeed(inp.config.seed, rel.name, b, 'mixture'));
      pos.forEach((j, q) => {
        const i = bm.idx[j];
        num[i] += bm.f[j] * mf.membership[q];
        den[i] += bm.f[j];
      });
      return mf.fit;
    });
    for (let i = 0; i < inp.objects.n; i++) if (den[i] > 0) membership[i] = num[i] / den[i];
    return { membership, fits };
  }
  const { ix, iy, aboveLimit } = binMembers(rel, inp, completeness);
  const fits = aboveLimit.map((all, b) => {
    if (all.length < 10) return null;
    const zc = rel.redshiftTerm ? 0.5 * (rel.zBins[b] + rel.zBins[b + 1]) : null;
    const mf = extra.mixtureFit(deconvolvedData(inp, all, ix, iy, zc), rel.pivot, deriveSeed(inp.config.seed, rel.name, b, 'mixture'));
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
  mb: DrawMembership | null = null,
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
  // per-draw membership: positions into mb.bins[b] of the selected members (the catalogue
  // selection above then serves only the naive fit on medians)
  const selectedPos = mb
    ? aboveLimitPerDraw(rel, inp, completeness, mb).map((pos, b) => pos.filter((j) => rel.population === 'all' || population[mb.bins[b].idx[j]] === rel.population))
    : null;
  // the objects each bin shows (points, density, outliers): under per-draw membership each
  // object once, in the bin holding most of its redshift posterior
  const shown = mb ? selectedPos!.map((pos, b) => pos.map((j) => mb.bins[b].idx[j]).filter((i) => mb.dominant[i] === b)) : selected;

  const covAt = (i: number, r: number, c: number) => summary.cov[i * k * k + r * k + c];
  for (let b = 0; b < edges.length - 1; b++) {
    const bm = mb?.bins[b];
    const pos = selectedPos?.[b];
    const idx = bm ? pos!.map((j) => bm.idx[j]) : selected[b];
    const zLo = edges[b], zHi = edges[b + 1];
    const lim = completeness?.[b]?.logMLim;
    let nEff = 0;
    if (bm) for (const j of pos!) nEff += bm.f[j];
    const bin: BinFit = { zLo, zHi, n: idx.length, ...(bm ? { nEff: Number(nEff.toFixed(3)) } : {}), completenessLogM: Number.isFinite(lim) ? lim! : null, fits: [], running: null, band: null, reference: null };
    const truth = inp.truth?.[rel.name]?.[b];
    if (truth) bin.truth = truth;
    if (idx.length < 5) {
      warnings.push(`${rel.name}: redshift bin ${zLo}-${zHi} has ${idx.length} selected objects; not fitted`);
      bins.push(bin);
      continue;
    }
    const zc = 0.5 * (zLo + zHi);
    const d: DeconvolvedData = bm ? perDrawData(bm, pos!, rel.redshiftTerm ? zc : null) : deconvolvedData(inp, idx, ix, iy, rel.redshiftTerm ? zc : null);
    const drawBin = bm ? { iz: roleIndex(config, 'redshift'), edges, bin: b, weight: d.objectWeight! } : undefined;
    const seed = deriveSeed(config.seed, rel.name, b);
    let preferred: RelationFit | null = null;
    if (rel.methods.includes('deconvolved')) {
      const nSteps = stepsFor(idx.length * 16, 3e7, 400, 2000);
      const f = fitDeconvolved(d, { pivot: rel.pivot, seed, nWalkers: 16, nSteps, converge: convergeFrom(nSteps) });
      bin.fits.push(methodFit(f));
      preferred = f;
    }
    const hier = rel.methods.includes('hierarchical') ? extra.hierarchicalIfAvailable(rel, inp, idx, ix, iy, seed, warnings, ix === iM && Number.isFinite(lim) && rel.aboveCompleteness ? lim : undefined, d.dz, drawBin) : null;
    if (hier) {
      bin.fits.push(hier.fit);
      preferred = hier.raw;
    }
    if (rel.methods.includes('naive')) {
      // point estimates: binned by the catalogue redshift, also under per-draw membership
      const nIdx = bm ? selected[b] : idx;
      const nDz = bm ? (rel.redshiftTerm ? Float64Array.from(nIdx, (i) => objects.redshift[i] - zc) : undefined) : d.dz;
      if (nIdx.length >= 5) {
        const med = { x: Float64Array.from(nIdx, (i) => summary.p50[ix][i]), y: Float64Array.from(nIdx, (i) => summary.p50[iy][i]) };
        bin.fits.push(methodFit(fitNaive(med.x, med.y, rel.pivot, seed, nDz)));
      }
    }
    const mix = mixtureFits?.[b];
    if (mix) bin.fits.push(mix);
    if (rel.methods.includes('running-median')) bin.running = extra.runningIfAvailable(pop, idx, ix, iy, d.x, seed, drawBin);
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
      // per-draw membership: from the in-bin moments and mean redshift, in the object's main bin
      if (bm) {
        bm.idx.forEach((i, j) => {
          if (mb!.dominant[i] !== b) return;
          const off = bm.y[j] - (a + bb * (bm.x[j] - rel.pivot) + cz * (bm.z[j] - zc));
          const v = s * s + bm.cyy[j] - 2 * bb * bm.cxy[j] + bb * bb * bm.cxx[j];
          offset[i] = off;
          tension[i] = off / Math.sqrt(v);
        });
      }
      if (!bm) for (const i of inBin[b]) {
        const off = yMean[i] - (a + bb * (xMean[i] - rel.pivot) + cz * (objects.redshift[i] - zc));
        const v = s * s + covAt(i, iy, iy) - 2 * bb * covAt(i, ix, iy) + bb * bb * covAt(i, ix, ix);
        offset[i] = off;
        tension[i] = off / Math.sqrt(v);
      }
    }
    if (rel.reference) bin.reference = extra.referenceIfAvailable(rel, config, inp.cosmo, zLo, zHi);
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
    methodNotes.push(`Running median: median and 16-84% spread of y in bins of x; the bootstrap resamples both the galaxies and one posterior draw per galaxy.${mb ? ` A draw counts in a redshift bin only when its own ${mb.parameter} falls in the bin, so each galaxy counts with the share of its draws there (the Galaxies column is that expected count).` : ''}`);
  if (mb) {
    const floor = `f >= ${MEMBERSHIP_MIN_FRACTION} and at least ${MEMBERSHIP_MIN_DRAWS} draws in the bin`;
    methodNotes.unshift(
      `Redshift bins: membership is assigned per posterior draw of ${mb.parameter} (the parameter with the redshift role). A galaxy belongs to bin k with probability f_k, the share of its posterior draws whose ${mb.parameter} falls in the bin, and enters the bin's fits when ${floor}, with only those draws: their posterior mean and 2x2 covariance (deconvolved and mixture fits), the draws themselves (hierarchical fit, running median), its log-likelihood term weighted by f_k, and their mean redshift for the mass-completeness limit and for the redshift term z - z_c. Each bin reports n, the galaxies it fitted, and the effective number of members, the sum of their f_k. Points, density and outliers show each galaxy once, in the bin holding most of its redshift posterior.${mb.fallback > 0 ? ` ${mb.fallback} galaxies without redshift draws are placed by their catalogue redshift.` : ''}`,
    );
    const k0 = methodNotes.findIndex((t) => t.startsWith('Naive:'));
    if (k0 >= 0) methodNotes[k0] += ' Being a point-estimate fit, it bins the galaxies by their catalogue redshift.';
  }

  // density of the selected objects (binned at build time so its size does not grow with the catalogue)
  const all = shown.flat();
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
  const densityByBin = shown.map((idx) => {
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
        `Selection: only ${rel.population === 'all' ? 'galaxies' : rel.population + ' galaxies'} above the mass-completeness limit of each redshift bin are fitted; a hard population cut can bias the slope.${mb ? ` Redshift-bin membership is assigned per posterior draw of ${mb.parameter}: a galaxy counts in each bin with the share of its draws there (effective members per bin = the sum of those shares).` : ''}`,
        'Completeness: the limit is estimated from the magnitude limit (Pozzetti et al. 2010); below it the sample misses faint, low-mass galaxies.',
        ...(mb ? ['Per-draw membership weights each galaxy\'s likelihood term by its probability of being in the bin (a weighted likelihood): an approximation to modelling bin membership jointly with the relations of all bins, whose posterior widths are exact only when the probabilities are near 0 or 1.'] : []),
      ],
      priorUsed,
      ...(mb ? { binMembership: { kind: 'per-draw' as const, parameter: mb.parameter, minFraction: MEMBERSHIP_MIN_FRACTION, minDraws: MEMBERSHIP_MIN_DRAWS } } : {}),
    },
    offset,
    tension,
  };
}
