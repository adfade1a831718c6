/**
 * The release's evidence: fit-quality distributions for every bundle, mock calibration
 * when true values exist, and the stellar mass function by 1/Vmax.
 */
import type { Bundle } from '../bundle/load.ts';
import type { PopulationDraws, SummaryTable } from './summarise.ts';
import type { PopulationResult } from './population.ts';
import { roleIndex } from './population.ts';
import type { MassFunctionContent, QualityContent } from './content.ts';
import type { Cosmology } from '../core/cosmology.ts';
import { FLAG_INFO } from '../core/flags.ts';
import { slugOf } from '../core/slug.ts';
import type { CalibrationStats } from './samples-pass.ts';
import { pitHistogram, bias, nmad, outlierFraction, calibrationFlag, residuals, LEVEL_1SIGMA } from '../core/population/calibration.ts';
import { massFunction1OverVmax, massFunctionBootstrap, fitSchechter } from '../core/population/massfunction.ts';
import { massCompleteness } from '../core/population/completeness.ts';
import { normalCdf } from '../core/stats/special.ts';

export interface EvidenceInputs {
  bundle: Bundle;
  summary: SummaryTable;
  pop: PopulationDraws;
  cosmo: Cosmology;
  popResult: PopulationResult;
  /** Coverage and PIT per parameter with true values (`samples-pass.ts`), from every draw. */
  calibration: CalibrationStats;
}

function hist(values: Float64Array | number[], edges: number[]): number[] {
  const counts = new Array<number>(edges.length - 1).fill(0);
  for (const v of values) {
    if (!Number.isFinite(v)) continue;
    let k = edges.length - 2;
    for (let j = 0; j < edges.length - 1; j++)
      if (v < edges[j + 1]) {
        k = j;
        break;
      }
    if (v >= edges[0]) counts[k]++;
  }
  return counts;
}

const r4 = (v: number) => (Number.isFinite(v) ? Number(v.toPrecision(4)) : NaN);

/** ESS histogram bins: five per decade, 0.2 dex each. */
export const ESS_BINS_PER_DECADE = 5;

/**
 * Edges of bins of equal width in log10(x), `perDecade` to a decade, on the grid 10^(k / perDecade),
 * covering every positive finite value and `include` (a threshold the figure marks). Counts on
 * such bins, drawn on a logarithmic axis, show the distribution of log10(x) without distortion.
 */
export function logEdges(values: ArrayLike<number>, perDecade: number, include?: number): number[] {
  let lo = Infinity;
  let hi = -Infinity;
  for (let i = 0; i < values.length; i++) {
    const v = values[i]!;
    if (!(v > 0) || !Number.isFinite(v)) continue;
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  if (include !== undefined && include > 0) {
    lo = Math.min(lo, include);
    hi = Math.max(hi, include);
  }
  if (!(lo <= hi)) lo = hi = 1;
  const kLo = Math.floor(Math.log10(lo) * perDecade + 1e-9);
  let kHi = Math.floor(Math.log10(hi) * perDecade + 1e-9) + 1;
  if (kHi <= kLo) kHi = kLo + 1;
  return Array.from({ length: kHi - kLo + 1 }, (_, j) => Number((10 ** ((kLo + j) / perDecade)).toPrecision(6)));
}

export function buildEvidence(inp: EvidenceInputs): { quality: QualityContent; massfunction: MassFunctionContent | null } {
  const { bundle, summary, pop, cosmo } = inp;
  const { config, objects } = bundle;
  const n = objects.n;

  // ESS in bins of equal width in log10(ESS), p-values on linear bins
  const essEdges = logEdges(summary.ess, ESS_BINS_PER_DECADE, config.quality.minEss);
  const pEdges = Array.from({ length: 21 }, (_, i) => i / 20);
  const flagCounts = FLAG_INFO.map((f) => {
    const count = summary.flags.reduce((s, v) => s + ((v & f.bit) !== 0 ? 1 : 0), 0);
    return { name: f.name, label: f.label, count, fraction: n ? count / n : 0 };
  });
  const zEdges = config.relations[0]?.zBins ?? [0, 0.5, 1, 2, 3, 6];
  const flagsByRedshift = zEdges.slice(1).map((zHi, b) => {
    const zLo = zEdges[b];
    const idx: number[] = [];
    for (let i = 0; i < n; i++) if (objects.redshift[i] >= zLo && (objects.redshift[i] < zHi || (b === zEdges.length - 2 && objects.redshift[i] === zHi))) idx.push(i);
    const fractions: Record<string, number> = {};
    for (const f of FLAG_INFO) fractions[f.name] = idx.length ? idx.filter((i) => summary.flags[i] & f.bit).length / idx.length : 0;
    return { zLo, zHi, n: idx.length, fractions };
  });
  const worst = Array.from({ length: n }, (_, i) => i)
    .filter((i) => Number.isFinite(summary.chi2Pvalue[i]))
    .sort((a, b) => summary.chi2Pvalue[a] - summary.chi2Pvalue[b] || summary.chi2[b] - summary.chi2[a] || (objects.id[a] < objects.id[b] ? -1 : 1))
    .slice(0, 25)
    .map((i) => ({ id: objects.id[i], slug: slugOf(objects.id[i]), chi2: r4(summary.chi2[i]), pvalue: Number(summary.chi2Pvalue[i].toExponential(3)), flags: summary.flags[i] }));

  // mock calibration from the full draws
  const calibration: QualityContent['calibration'] = [];
  const isMock = Object.keys(objects.truth).length > 0;
  if (isMock) {
    config.parameters.forEach((p, j) => {
      const truth = objects.truth[p.name];
      const stats = inp.calibration.get(p.name);
      if (!truth || !stats) return;
      const cov = stats.coverage;
      const pits = stats.pit;
      const ph = pitHistogram(pits, 10);
      const d = residuals(summary.p50[j], truth);
      const nm = nmad(d);
      const c68 = cov.find((c) => Math.abs(c.level - LEVEL_1SIGMA) < 1e-9)!;
      const flagged = calibrationFlag(c68.fraction, c68.n);
      // widths too small by k make the 68.27% interval cover 2 Phi(1/k) - 1
      const k = c68.fraction > 0 && c68.fraction < 1 ? 1 / Math.max(1e-9, inverseCoverageFactor(c68.fraction)) : NaN;
      calibration.push({
        param: p.name,
        label: p.label,
        n: c68.n,
        coverage: cov.map((c) => ({ level: c.level, fraction: r4(c.fraction), se: r4(c.binomialSe) })),
        pitHist: Array.from((ph as unknown as { density?: Float64Array; counts?: Float64Array }).counts ?? (ph as unknown as { density: Float64Array }).density ?? [], (v) => r4(v)),
        bias: r4(bias(d)),
        nmad: r4(nm),
        outlierFraction: r4(outlierFraction(d, 3 * nm)),
        outlierRule: '|median - truth| > 3 NMAD',
        coverage68: r4(c68.fraction),
        flagged,
        verdict: flagged
          ? `The 68.27% intervals hold the true value for ${(c68.fraction * 100).toFixed(1)}% of objects, more than three binomial standard errors (${(3 * c68.binomialSe * 100).toFixed(1)} points) from nominal: the posterior widths look ${c68.fraction < LEVEL_1SIGMA ? `too narrow, by a factor of about ${k.toFixed(2)} if the posteriors are Gaussian` : 'too wide'}.`
          : `The 68.27% intervals hold the true value for ${(c68.fraction * 100).toFixed(1)}% of objects, within three binomial standard errors of nominal.`,
      });
      void normalCdf;
    });
  }
  const quality: QualityContent = {
    isMock,
    essHist: { edges: essEdges, counts: hist(summary.ess, essEdges) },
    pvalueHist: { edges: pEdges, counts: hist(summary.chi2Pvalue, pEdges) },
    flagCounts,
    flagsByRedshift,
    worstFits: worst,
    calibration,
  };

  // stellar mass function
  let massfunction: MassFunctionContent | null = null;
  const iM = roleIndex(config, 'log_mass');
  const magLim = config.survey.magLimit;
  if (iM >= 0 && objects.mag && magLim !== undefined) {
    const zBins = zEdges;
    const massEdges = Float64Array.from({ length: 19 }, (_, i) => 8 + i * 0.25);
    const opts = { areaDeg2: config.survey.areaDeg2, magLim, zBins, massEdges, cosmo };
    const logM = summary.p50[iM];
    const mf = massFunction1OverVmax(logM, objects.mag, objects.redshift, opts);
    const m = pop.m;
    const drawOffsets = Int32Array.from({ length: n + 1 }, (_, i) => i * m);
    let boot: ReturnType<typeof massFunctionBootstrap> | null = null;
    try {
      const values = Float64Array.from(pop.values[iM], (v, idx) => (Number.isFinite(v) ? v : logM[Math.floor(idx / m)]));
      boot = massFunctionBootstrap({ offsets: drawOffsets, values, weights: new Float64Array(n * m).fill(1) }, objects.mag, objects.redshift, opts, 100, config.seed);
    } catch {
      boot = null;
    }
    const comp = massCompleteness(logM, objects.mag, objects.redshift, magLim, zBins);
    massfunction = {
      areaDeg2: config.survey.areaDeg2,
      notes: [
        '1/Vmax (Schmidt 1968): each galaxy counts once per the comoving volume over which it would pass the magnitude limit, within its redshift bin; no k-correction.',
        'Poisson errors: sqrt(sum 1/Vmax^2) per dex. Bootstrap: 100 replicates resampling galaxies and one posterior draw of log M* each; 16-84% range.',
        'Schechter (1976) fit by maximum likelihood on the counts above the mass-completeness limit (Pozzetti et al. 2010); 68% errors from the inverse Hessian.',
      ],
      bins: mf.map((zb, b) => {
        const lim = comp[b]?.logMLim;
        let sch: MassFunctionContent['bins'][number]['schechter'] = null;
        try {
          const fit = fitSchechter(
            zb.bins.map((x) => ({ logMLo: x.logMLo, logMHi: x.logMHi, n: x.n, vEffMpc3: x.vEffMpc3 })),
            { minLogM: Number.isFinite(lim) ? lim : undefined },
          );
          if (fit.converged && fit.nGalaxies > 10)
            sch = {
              phiStar: { median: fit.params.phiStar, lo: fit.params.phiStar - fit.errors.phiStar, hi: fit.params.phiStar + fit.errors.phiStar },
              logMStar: { median: fit.params.logMStar, lo: fit.params.logMStar - fit.errors.logMStar, hi: fit.params.logMStar + fit.errors.logMStar },
              alpha: { median: fit.params.alpha, lo: fit.params.alpha - fit.errors.alpha, hi: fit.params.alpha + fit.errors.alpha },
            };
        } catch {
          sch = null;
        }
        return {
          zLo: zb.zLo,
          zHi: zb.zHi,
          completenessLogM: Number.isFinite(lim) ? lim : null,
          points: zb.bins
            .map((x, j) => ({ logM: x.logM, phi: x.phi, phiErr: x.phiErr, bootLo: boot?.[b]?.bins[j]?.phiP16 ?? null, bootHi: boot?.[b]?.bins[j]?.phiP84 ?? null, n: x.n }))
            .filter((x) => x.n > 0),
          schechter: sch,
        };
      }),
    };
  }
  return { quality, massfunction };
}

/** Solve 2 Phi(u) - 1 = c for u: Gaussian posteriors whose widths are too small by k = 1/u give 68.27% coverage c. */
function inverseCoverageFactor(c: number): number {
  // solve 2 Phi(u) - 1 = c for u by bisection
  let lo = 0, hi = 10;
  for (let it = 0; it < 60; it++) {
    const mid = (lo + hi) / 2;
    if (2 * normalCdf(mid) - 1 < c) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}
