/**
 * Figures of the comparison with an earlier release: for each compared parameter, the
 * histogram of the shifts of the posterior medians in units of the combined uncertainty,
 * with the threshold drawn on both sides.
 */
import type { ChangesContent, ParameterChange } from '../pipeline/changes-content.ts';
import type { FigureJob } from './figures.ts';
import { histogramSpec } from './histogram.ts';

/** Path under `content/figures/` of a parameter's shift histogram. */
export const changesFigure = (param: string): string => `changes/${param}.svg`;

export function shiftSpec(p: ParameterChange, threshold: number, previousVersion: string) {
  const outside = p.histogram.below + p.histogram.above;
  return histogramSpec(p.histogram.edges, [{ name: p.label, counts: p.histogram.counts }], {
    title: `${p.label}: shift since ${previousVersion}`,
    description: `Histogram of the shift of the posterior median of ${p.label} for ${p.compared} objects in both releases, in units of the combined uncertainty; ${p.nMoved} beyond ±${threshold}, ${outside} outside the plotted range of ±${p.histogram.edges[p.histogram.edges.length - 1]}.`,
    xTitle: 'Shift of the median / combined uncertainty',
    rules: [
      { x: -threshold, label: `−${threshold}σ` },
      { x: threshold, label: `+${threshold}σ` },
    ],
    logY: true,
    width: 320,
    height: 160,
  });
}

export function changesFigureJobs(c: ChangesContent): FigureJob[] {
  return c.parameters.filter((p) => p.compared > 0).map((p) => ({ path: changesFigure(p.name), spec: shiftSpec(p, c.settings.thresholdSigma, c.previous.version) }));
}
