/**
 * Quality diagnostics of the release: effective sample sizes, chi-square probabilities,
 * flag rates overall and by redshift, and (for mocks) calibration of credible intervals:
 * empirical coverage against nominal level and probability-integral-transform histograms.
 */
import type { TopLevelSpec } from 'vega-lite';
import type { QualityContent } from '../pipeline/content.ts';
import { histogramSpec } from './histogram.ts';
import { baseConfig, COLOURS, SCHEMA, SERIES } from './theme.ts';

const r4 = (x: number): number => Math.round(x * 1e4) / 1e4;

/**
 * The ESS histogram: its bins are of equal width in log10(ESS) (evidence.ts, `logEdges`), so
 * they are drawn on a logarithmic axis, where bar heights (counts) compare fairly.
 */
export function essSpec(q: QualityContent, threshold?: number): TopLevelSpec {
  return histogramSpec(q.essHist.edges, [{ name: 'objects', counts: q.essHist.counts }], {
    title: 'Effective sample size',
    description: `Histogram of the effective number of independent posterior draws per object, in bins of equal width in log10 of the ESS on a logarithmic axis${threshold !== undefined ? `; the dashed line marks the low-ESS threshold of ${threshold}` : ''}.`,
    xTitle: 'Effective sample size (logarithmic axis)',
    logX: true,
    rules: threshold !== undefined ? [{ x: threshold, label: 'threshold' }] : [],
  });
}

export function pvalueSpec(q: QualityContent, threshold?: number): TopLevelSpec {
  const n = q.pvalueHist.counts.reduce((a, b) => a + b, 0);
  const bins = q.pvalueHist.counts.length;
  return histogramSpec(q.pvalueHist.edges, [{ name: 'objects', counts: q.pvalueHist.counts }], {
    title: 'Chi-square probability of the best fit',
    description: `Histogram of the chi-square survival probability of each object's best fit; well-modelled data with correct errors give a flat histogram (dashed line at ${bins ? r4(n / bins) : 0} per bin).`,
    xTitle: 'p-value of chi-square',
    level: bins ? { y: n / bins, label: 'uniform' } : undefined,
    rules: threshold !== undefined ? [{ x: threshold, label: 'poor-fit threshold' }] : [],
  });
}

export function flagsSpec(q: QualityContent): TopLevelSpec {
  const values = q.flagCounts.map((f) => ({ label: f.label, fraction: r4(f.fraction), count: f.count }));
  return {
    $schema: SCHEMA,
    title: { text: 'Quality flags raised' },
    description: `Fraction of objects with each quality flag: ${values.map((v) => `${v.label} ${(v.fraction * 100).toFixed(1)}%`).join(', ')}.`,
    config: baseConfig(),
    width: 360,
    height: { step: 22 },
    data: { values },
    layer: [
      {
        mark: { type: 'bar', color: COLOURS.blue, fillOpacity: 0.28, stroke: COLOURS.blue, strokeWidth: 1.2 },
        encoding: {
          y: { field: 'label', type: 'nominal', sort: null, axis: { title: null, labelLimit: 400 } },
          x: { field: 'fraction', type: 'quantitative', axis: { title: 'Fraction of objects', format: '.0%', grid: true, tickCount: 5 } },
        },
      },
      {
        mark: { type: 'text', align: 'left', dx: 3, color: COLOURS.ink, fontSize: 10 },
        encoding: { y: { field: 'label', type: 'nominal', sort: null }, x: { field: 'fraction', type: 'quantitative' }, text: { field: 'count', type: 'quantitative' } },
      },
    ],
  } as unknown as TopLevelSpec;
}

export function flagsByRedshiftSpec(q: QualityContent, labels: Record<string, string> = {}): TopLevelSpec {
  const names = [...new Set(q.flagsByRedshift.flatMap((b) => Object.keys(b.fractions)))].sort();
  const values = q.flagsByRedshift.flatMap((b) => names.map((n) => ({ z: r4((b.zLo + b.zHi) / 2), zLo: b.zLo, zHi: b.zHi, flag: labels[n] ?? n, fraction: r4(b.fractions[n] ?? 0) })));
  const domain = names.map((n) => labels[n] ?? n);
  return {
    $schema: SCHEMA,
    title: { text: 'Flag rates by redshift' },
    description: `Fraction of objects with each quality flag in ${q.flagsByRedshift.length} redshift bins.`,
    config: baseConfig(),
    width: 420,
    height: 220,
    data: { values },
    mark: { type: 'line', point: true, strokeWidth: 1.5 },
    encoding: {
      x: { field: 'z', type: 'quantitative', scale: { zero: false }, axis: { title: 'Redshift (bin centre)' } },
      y: { field: 'fraction', type: 'quantitative', axis: { title: 'Fraction of objects', format: '.0%' } },
      color: { field: 'flag', type: 'nominal', scale: { domain, range: domain.map((_, i) => SERIES[i % SERIES.length]) }, legend: { title: null, orient: 'right' } },
      shape: { field: 'flag', type: 'nominal', scale: { domain }, legend: null },
    },
  } as unknown as TopLevelSpec;
}

export function coverageSpec(q: QualityContent): TopLevelSpec {
  const values = q.calibration.flatMap((c) => c.coverage.map((v) => ({ param: c.label, level: v.level, fraction: r4(v.fraction), lo: r4(v.fraction - v.se), hi: r4(v.fraction + v.se) })));
  const domain = q.calibration.map((c) => c.label);
  const colour = { field: 'param', type: 'nominal', scale: { domain, range: domain.map((_, i) => SERIES[i % SERIES.length]) }, legend: { title: null, orient: 'bottom-right' } };
  const x = { field: 'level', type: 'quantitative', scale: { domain: [0, 1] }, axis: { title: 'Nominal credible level', format: '.0%' } };
  const y = { field: 'fraction', type: 'quantitative', scale: { domain: [0, 1] }, axis: { title: 'Fraction of true values inside', format: '.0%' } };
  return {
    $schema: SCHEMA,
    title: { text: 'Coverage of central credible intervals' },
    description: `Fraction of mock objects whose true value lies inside the central credible interval, against the interval's nominal level, for ${domain.join(', ')}; calibrated posteriors lie on the diagonal.`,
    config: baseConfig(),
    width: 320,
    height: 320,
    layer: [
      { data: { values: [{ level: 0, fraction: 0 }, { level: 1, fraction: 1 }] }, mark: { type: 'line', color: COLOURS.muted, strokeDash: [4, 3] }, encoding: { x, y } },
      { data: { values }, mark: { type: 'rule', strokeWidth: 1.2 }, encoding: { x, y: { ...y, field: 'lo' }, y2: { field: 'hi' }, color: colour } },
      { data: { values }, mark: { type: 'line', point: true, strokeWidth: 1.5 }, encoding: { x, y, color: colour } },
    ],
  } as unknown as TopLevelSpec;
}

export function pitSpec(q: QualityContent): TopLevelSpec {
  const values = q.calibration.flatMap((c) => {
    const k = c.pitHist.length;
    return c.pitHist.map((f, i) => ({ param: c.label, lo: r4(i / k), hi: r4((i + 1) / k), f: r4(f * k) }));
  });
  return {
    $schema: SCHEMA,
    title: { text: 'Probability integral transform' },
    description: `Histograms of the posterior CDF evaluated at the true value for ${q.calibration.map((c) => c.label).join(', ')}; calibrated posteriors give a flat histogram at density 1 (dashed), a central hump means intervals too wide, a U shape too narrow.`,
    config: baseConfig(),
    data: { values },
    facet: { field: 'param', type: 'nominal', title: null, sort: q.calibration.map((c) => c.label) },
    columns: 3,
    spec: {
      width: 180,
      height: 120,
      layer: [
        {
          mark: { type: 'rect', color: COLOURS.blue, fillOpacity: 0.28, stroke: COLOURS.blue, strokeWidth: 1 },
          encoding: {
            x: { field: 'lo', type: 'quantitative', scale: { domain: [0, 1] }, axis: { title: 'PIT', tickCount: 5 } },
            x2: { field: 'hi' },
            y: { field: 'f', type: 'quantitative', axis: { title: 'Density', tickCount: 4 } },
          },
        },
        { mark: { type: 'rule', color: COLOURS.ink, strokeDash: [4, 3] }, encoding: { y: { datum: 1 } } },
      ],
    },
  } as unknown as TopLevelSpec;
}
