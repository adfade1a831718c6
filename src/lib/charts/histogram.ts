/**
 * Histograms from pre-binned counts (edges and counts), one or several series, each drawn as a
 * light fill under a step outline in the series colour (the look of the object pages' marginal
 * densities, so the site's figures read as one family); the site never bins data itself.
 */
import type { TopLevelSpec } from 'vega-lite';
import { baseConfig, COLOURS, SCHEMA, SERIES } from './theme.ts';

export interface HistogramSeries {
  name: string;
  counts: number[];
}

export interface HistogramOptions {
  title: string;
  description: string;
  xTitle: string;
  yTitle?: string;
  width?: number;
  height?: number;
  /** Vertical reference lines, e.g. a threshold. */
  rules?: { x: number; label: string }[];
  /** A horizontal reference level, e.g. the uniform expectation of a PIT histogram. */
  level?: { y: number; label: string };
  logY?: boolean;
  /** A logarithmic x axis, for bins of equal width in log10(x). */
  logX?: boolean;
}

const r6 = (x: number): number => Math.round(x * 1e6) / 1e6;

export function histogramSpec(edges: number[], series: HistogramSeries[], opts: HistogramOptions): TopLevelSpec {
  const values: { lo: number; hi: number; n: number; series: string }[] = [];
  for (const s of series) {
    for (let i = 0; i < s.counts.length && i + 1 < edges.length; i++) values.push({ lo: r6(edges[i]), hi: r6(edges[i + 1]), n: s.counts[i], series: s.name });
  }
  const multi = series.length > 1;
  const x = { field: 'lo', type: 'quantitative', scale: { ...(opts.logX ? { type: 'log' } : {}), domain: [r6(edges[0] ?? 0), r6(edges[edges.length - 1] ?? 1)], nice: false, zero: false }, axis: { title: opts.xTitle, grid: false } };
  const y = { field: 'n', type: 'quantitative', stack: null, scale: opts.logY ? { type: 'symlog' } : {}, axis: { title: opts.yTitle ?? 'Number of objects', grid: true, tickCount: 5 } };
  const colour = multi
    ? { color: { field: 'series', type: 'nominal', scale: { domain: series.map((s) => s.name), range: series.map((_, i) => SERIES[i % SERIES.length]) }, legend: { title: null, orient: 'top-right', symbolType: 'square', symbolOpacity: 0.5 } } }
    : {};
  // the outline: each bin's count from its left edge to its right edge, then down to the next
  const steps: { lo: number; n: number; series: string }[] = [];
  for (const s of series) {
    const k = Math.min(s.counts.length, edges.length - 1);
    if (k > 0) steps.push({ lo: r6(edges[0]), n: 0, series: s.name });
    for (let i = 0; i < k; i++) steps.push({ lo: r6(edges[i]), n: s.counts[i], series: s.name });
    if (k > 0) steps.push({ lo: r6(edges[k]), n: s.counts[k - 1], series: s.name }, { lo: r6(edges[k]), n: 0, series: s.name });
  }
  const layers: Record<string, unknown>[] = [
    {
      data: { values },
      mark: { type: 'rect', fillOpacity: multi ? 0.18 : 0.28, strokeWidth: 0, ...(multi ? {} : { color: COLOURS.blue }) },
      encoding: { x, x2: { field: 'hi' }, y, ...colour },
    },
    {
      data: { values: steps },
      mark: { type: 'line', interpolate: 'step-after', strokeWidth: 1.4, ...(multi ? {} : { color: COLOURS.blue }) },
      encoding: { x, y: { ...y, axis: null }, detail: { field: 'series' }, ...(multi ? { color: { ...(colour as { color: Record<string, unknown> }).color, legend: null } } : {}) },
    },
  ];
  for (const r of opts.rules ?? []) {
    layers.push({ data: { values: [{ lo: r.x, label: r.label }] }, mark: { type: 'rule', color: COLOURS.vermillion, strokeDash: [4, 3], strokeWidth: 1.5 }, encoding: { x } });
    layers.push({ data: { values: [{ lo: r.x, label: r.label }] }, mark: { type: 'text', color: COLOURS.vermillion, align: 'left', dx: 3, baseline: 'top', y: 2, fontSize: 10 }, encoding: { x, text: { field: 'label' } } });
  }
  if (opts.level) {
    layers.push({ data: { values: [{ n: opts.level.y }] }, mark: { type: 'rule', color: COLOURS.ink, strokeDash: [4, 3] }, encoding: { y: { field: 'n', type: 'quantitative' } } });
  }
  return {
    $schema: SCHEMA,
    title: { text: opts.title },
    description: opts.description,
    config: baseConfig(),
    width: opts.width ?? 420,
    height: opts.height ?? 220,
    layer: layers,
  } as unknown as TopLevelSpec;
}
