/** Charts: derived content in, Vega-Lite specs (site figures) or SVG (object figures) out (pure; no I/O). */
export { sedModel, sedSvg, sedPoints, abMagFromUJy, maskedRanges, type SedModel, type SedOptions, type SedUnits } from './sed.ts';
export { posteriorSvg, massLabel, type PosteriorOptions } from './posterior.ts';
export { relationSpec, relationPanelSpec, relationPointsSpec, relationSeries, shortCitation, zBinLabel, METHOD_STYLE, TRUTH_SERIES, type RelationPanelOptions } from './relation.ts';
export { histogramSpec, type HistogramSeries, type HistogramOptions } from './histogram.ts';
export { skySpec } from './sky.ts';
export { redshiftSpec, massSpec } from './home.ts';
export { essSpec, pvalueSpec, flagsSpec, flagsByRedshiftSpec, coverageSpec, pitSpec } from './quality.ts';
export { massFunctionSpec, schechterPerDex } from './massfunction.ts';
export { FIGURES, pngOf, objectFigures, siteFigureJobs, type FigureJob, type ObjectFigures } from './figures.ts';
export { COLOURS, SERIES, DARK_REMAP } from './theme.ts';
