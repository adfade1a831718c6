/**
 * The prerendered figures, by path under `content/figures/`: the one list prerender writes
 * and the pages read, so the two cannot drift apart.
 */
import type { TopLevelSpec } from 'vega-lite';
import type { MassFunctionContent, ObjectContent, QualityContent, RelationContent, SiteContent } from '../pipeline/content.ts';
import { posteriorSvg } from './posterior.ts';
import { massSpec, redshiftSpec } from './home.ts';
import { massFunctionSpec } from './massfunction.ts';
import { coverageSpec, essSpec, flagsByRedshiftSpec, flagsSpec, pitSpec, pvalueSpec } from './quality.ts';
import { relationPanelSpec, relationPointsSpec, relationSpec } from './relation.ts';
import { sedModel, sedSvg } from './sed.ts';
import { skySpec } from './sky.ts';

export interface FigureJob {
  /** Path under `content/figures/`, forward slashes. */
  path: string;
  spec: TopLevelSpec;
  /** Also write a PNG beside the SVG (same path, `.png`), for download and print. */
  png?: boolean;
}

export const FIGURES = Object.freeze({
  /** An object's three figures (`ObjectFigures` as JSON). */
  objectFigures: (slug: string) => `objects/${slug}.json`,
  /** Every bin of a relation in one figure (download and print; PNG beside it). */
  relation: (name: string) => `relations/${name}.svg`,
  /** One redshift bin of a relation (the page's small multiples). */
  relationPanel: (name: string, bin: number) => `relations/${name}/bin-${bin}.svg`,
  /** Static fallback of the interactive linked view. */
  relationPoints: (name: string) => `relations/${name}/points.svg`,
  sky: 'home/sky.svg',
  redshift: 'home/redshift.svg',
  mass: 'home/mass.svg',
  qualityEss: 'quality/ess.svg',
  qualityPvalue: 'quality/pvalue.svg',
  qualityFlags: 'quality/flags.svg',
  qualityFlagsByRedshift: 'quality/flags-by-redshift.svg',
  qualityCoverage: 'quality/coverage.svg',
  qualityPit: 'quality/pit.svg',
  massFunction: 'massfunction.svg',
});

/** The PNG written beside a figure that has one. */
/** Site-level figures offered for download (SVG, and PNG at print resolution where rasterised). */
export const DOWNLOADABLE_FIGURES: readonly string[] = [
  'home/sky.svg',
  'home/redshift.svg',
  'home/mass.svg',
  'quality/ess.svg',
  'quality/pvalue.svg',
  'quality/flags.svg',
  'quality/flags-by-redshift.svg',
  'quality/coverage.svg',
  'quality/pit.svg',
];

export function pngOf(svgPath: string): string {
  return svgPath.replace(/\.svg$/, '.png');
}

/** An object's figures as SVG text: the SED in flux density and in AB magnitudes, and the posterior matrix (null where there is nothing to draw). */
export interface ObjectFigures {
  sed: string | null;
  sedMag: string | null;
  posterior: string | null;
}

/** Draw an object's figures (pure and fast: the same call serves the prerender and the browser viewer). */
export function objectFigures(obj: ObjectContent): ObjectFigures {
  const hasSed = obj.photometry.length > 0 || obj.spectra.length > 0 || obj.model !== null;
  return {
    sed: hasSed ? sedSvg(sedModel(obj, { units: 'flux' })) : null,
    sedMag: hasSed ? sedSvg(sedModel(obj, { units: 'mag' })) : null,
    posterior: obj.marginals.length ? posteriorSvg(obj) : null,
  };
}

export function siteFigureJobs(
  site: SiteContent,
  relations: RelationContent[],
  quality: QualityContent | null,
  massFunction: MassFunctionContent | null,
  thresholds: { ess?: number; pvalue?: number } = {},
): FigureJob[] {
  const jobs: FigureJob[] = [];
  if (site.sky.cells.length) jobs.push({ path: FIGURES.sky, spec: skySpec(site), png: true });
  if (site.redshiftHist.counts.length) jobs.push({ path: FIGURES.redshift, spec: redshiftSpec(site), png: true });
  if (site.massHist.edges.length > 1) jobs.push({ path: FIGURES.mass, spec: massSpec(site), png: true });
  for (const r of relations) {
    jobs.push({ path: FIGURES.relation(r.name), spec: relationSpec(r), png: true });
    r.bins.forEach((_, i) => jobs.push({ path: FIGURES.relationPanel(r.name, i), spec: relationPanelSpec(r, i) }));
    if (r.points.length) jobs.push({ path: FIGURES.relationPoints(r.name), spec: relationPointsSpec(r) });
  }
  if (quality) {
    const labels = Object.fromEntries(site.flags.map((f) => [f.name, f.label]));
    jobs.push({ path: FIGURES.qualityEss, spec: essSpec(quality, thresholds.ess), png: true });
    jobs.push({ path: FIGURES.qualityPvalue, spec: pvalueSpec(quality, thresholds.pvalue), png: true });
    if (quality.flagCounts.length) jobs.push({ path: FIGURES.qualityFlags, spec: flagsSpec(quality), png: true });
    if (quality.flagsByRedshift.length) jobs.push({ path: FIGURES.qualityFlagsByRedshift, spec: flagsByRedshiftSpec(quality, labels), png: true });
    if (quality.calibration.length) {
      jobs.push({ path: FIGURES.qualityCoverage, spec: coverageSpec(quality), png: true });
      jobs.push({ path: FIGURES.qualityPit, spec: pitSpec(quality), png: true });
    }
  }
  if (massFunction && massFunction.bins.length) jobs.push({ path: FIGURES.massFunction, spec: massFunctionSpec(massFunction), png: true });
  return jobs;
}
