/** The release page's population figures: redshift distribution and stellar mass per population. */
import type { TopLevelSpec } from 'vega-lite';
import type { SiteContent } from '../pipeline/content.ts';
import { histogramSpec } from './histogram.ts';

export function redshiftSpec(site: Pick<SiteContent, 'redshiftHist' | 'counts'>): TopLevelSpec {
  return histogramSpec(site.redshiftHist.edges, [{ name: 'objects', counts: site.redshiftHist.counts }], {
    title: 'Redshift distribution',
    description: `Histogram of the redshifts of the ${site.counts.objects} objects in the release.`,
    xTitle: 'Redshift',
  });
}

export function massSpec(site: Pick<SiteContent, 'massHist' | 'parameters'>): TopLevelSpec {
  const mass = site.parameters.find((p) => p.role === 'mass');
  const label = mass ? (mass.unit ? `${mass.label} [${mass.unit}]` : mass.label) : 'log stellar mass';
  return histogramSpec(
    site.massHist.edges,
    [
      { name: 'star-forming', counts: site.massHist.starForming },
      { name: 'quiescent', counts: site.massHist.quiescent },
    ],
    {
      title: 'Stellar mass by population',
      description: 'Histograms of posterior-median stellar mass for star-forming and quiescent galaxies, drawn overlapping (not stacked).',
      xTitle: label,
    },
  );
}
