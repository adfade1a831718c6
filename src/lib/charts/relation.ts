/**
 * A population relation (e.g. the star-forming main sequence): the binned density of all
 * selected objects as grey cells, and per redshift bin the fitted mean relation with its
 * credible band, the running median with its bootstrap interval, the mass completeness limit,
 * a published reference relation when given, and the outliers as points.
 */
import type { TopLevelSpec } from 'vega-lite';
import type { BinFit, RelationContent } from '../pipeline/content.ts';
import { baseConfig, COLOURS, SCHEMA, SERIES } from './theme.ts';

const r4 = (x: number): number => Math.round(x * 1e4) / 1e4;

export function zBinLabel(b: { zLo: number; zHi: number }): string {
  return `${b.zLo} < z < ${b.zHi}`;
}

export interface RelationOptions {
  width?: number;
  height?: number;
  /** Only this redshift bin (index into `bins`); default all bins overlaid. */
  bin?: number;
}

export function relationSpec(rel: RelationContent, opts: RelationOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const height = opts.height ?? 400;
  const bins: { b: BinFit; i: number }[] = rel.bins.map((b, i) => ({ b, i })).filter(({ i }) => opts.bin === undefined || i === opts.bin);
  const labels = bins.map(({ b }) => zBinLabel(b));
  const colourOf = (i: number) => SERIES[i % SERIES.length];
  const colour = { field: 'bin', type: 'nominal', scale: { domain: labels, range: bins.map(({ i }) => colourOf(i)) }, legend: { title: 'Redshift bin', orient: 'bottom-right', fillColor: COLOURS.paper, padding: 4 } };

  const d = rel.density;
  const cells: { x: number; x2: number; y: number; y2: number; n: number }[] = [];
  let nMax = 0;
  for (let j = 0; j < d.ny; j++) {
    for (let i = 0; i < d.nx; i++) {
      const n = d.counts[j * d.nx + i];
      if (!(n > 0)) continue;
      nMax = Math.max(nMax, n);
      cells.push({ x: r4(d.x0 + i * d.dx), x2: r4(d.x0 + (i + 1) * d.dx), y: r4(d.y0 + j * d.dy), y2: r4(d.y0 + (j + 1) * d.dy), n });
    }
  }
  const xDomain: [number, number] = [r4(d.x0), r4(d.x0 + d.nx * d.dx)];
  const yDomain: [number, number] = [r4(d.y0), r4(d.y0 + d.ny * d.dy)];
  const xTitle = rel.x.unit ? `${rel.x.label} [${rel.x.unit}]` : rel.x.label;
  const yTitle = rel.y.unit ? `${rel.y.label} [${rel.y.unit}]` : rel.y.label;
  const x = { field: 'x', type: 'quantitative', scale: { domain: xDomain, nice: false, zero: false }, axis: { title: xTitle, grid: false } };
  const y = { field: 'y', type: 'quantitative', scale: { domain: yDomain, nice: false, zero: false }, axis: { title: yTitle, grid: false } };

  const layers: Record<string, unknown>[] = [];
  if (cells.length) {
    layers.push({
      data: { values: cells },
      mark: { type: 'rect', color: COLOURS.ink },
      encoding: {
        x,
        x2: { field: 'x2' },
        y,
        y2: { field: 'y2' },
        opacity: { field: 'n', type: 'quantitative', scale: { type: 'sqrt', domain: [0, nMax], range: [0.04, 0.45] }, legend: null },
      },
    });
  }
  const band: Record<string, unknown>[] = [];
  const mid: Record<string, unknown>[] = [];
  const runs: Record<string, unknown>[] = [];
  const refs: Record<string, unknown>[] = [];
  const limits: Record<string, unknown>[] = [];
  for (const { b } of bins) {
    const bin = zBinLabel(b);
    if (b.band) {
      for (let k = 0; k < b.band.x.length; k++) {
        band.push({ bin, x: r4(b.band.x[k]), lo: r4(b.band.lo[k]), hi: r4(b.band.hi[k]) });
        mid.push({ bin, x: r4(b.band.x[k]), y: r4(b.band.mid[k]) });
      }
    }
    if (b.running) {
      for (let k = 0; k < b.running.centres.length; k++) {
        if (!Number.isFinite(b.running.median[k])) continue;
        runs.push({ bin, x: r4(b.running.centres[k]), y: r4(b.running.median[k]), lo: r4(b.running.medianLo[k]), hi: r4(b.running.medianHi[k]), n: b.running.n[k] });
      }
    }
    if (b.reference) for (let k = 0; k < b.reference.x.length; k++) refs.push({ bin, x: r4(b.reference.x[k]), y: r4(b.reference.y[k]), label: b.reference.label });
    if (b.completenessLogM !== null && Number.isFinite(b.completenessLogM)) limits.push({ bin, x: r4(b.completenessLogM) });
  }
  if (band.length) {
    layers.push({ data: { values: band }, mark: { type: 'area', opacity: 0.28, clip: true }, encoding: { x, y: { ...y, field: 'lo' }, y2: { field: 'hi' }, color: colour } });
    layers.push({ data: { values: mid }, mark: { type: 'line', strokeWidth: 2, clip: true }, encoding: { x, y, color: colour } });
  }
  if (refs.length) {
    layers.push({ data: { values: refs }, mark: { type: 'line', strokeDash: [6, 4], strokeWidth: 1.5, clip: true }, encoding: { x, y, color: colour, detail: { field: 'bin' } } });
  }
  if (limits.length) {
    layers.push({ data: { values: limits }, mark: { type: 'rule', strokeDash: [2, 3], strokeWidth: 1.5 }, encoding: { x, color: colour } });
  }
  if (runs.length) {
    layers.push({ data: { values: runs }, mark: { type: 'rule', strokeWidth: 1.5, clip: true }, encoding: { x, y: { ...y, field: 'lo' }, y2: { field: 'hi' }, color: colour } });
    layers.push({ data: { values: runs }, mark: { type: 'point', shape: 'square', filled: true, size: 40, opacity: 1, stroke: COLOURS.paper, strokeWidth: 0.8, clip: true }, encoding: { x, y, color: colour } });
  }
  const outliers = rel.outliers.filter((o) => opts.bin === undefined || bins.some(({ b }) => o.z >= b.zLo && o.z < b.zHi));
  if (outliers.length) {
    layers.push({
      name: 'outliers',
      data: { values: outliers.map((o) => ({ x: r4(o.x), y: r4(o.y), id: o.id })) },
      mark: { type: 'point', shape: 'diamond', filled: false, size: 45, strokeWidth: 1.3, color: COLOURS.ink, opacity: 1, clip: true },
      encoding: { x, y },
    });
  }
  if (!layers.length) layers.push({ data: { values: [{ x: xDomain[0], y: yDomain[0] }] }, mark: { type: 'point', opacity: 0 }, encoding: { x, y } });

  const parts = [
    cells.length ? 'grey cells show the density of all selected objects' : null,
    band.length ? 'coloured lines and bands are the fitted mean relation and its 68% credible band per redshift bin' : null,
    runs.length ? 'squares are running medians with bootstrap intervals' : null,
    refs.length ? 'dashed lines are the reference relation' : null,
    limits.length ? 'dotted vertical lines mark the mass completeness limit' : null,
    outliers.length ? `open diamonds are the ${outliers.length} outlier${outliers.length > 1 ? 's' : ''}` : null,
  ].filter((p): p is string => p !== null);
  return {
    $schema: SCHEMA,
    title: { text: rel.title, subtitle: `${rel.y.label} against ${rel.x.label}, ${rel.population}` },
    description: `${rel.title}: ${parts.join('; ')}.`,
    config: baseConfig(),
    width,
    height,
    layer: layers,
    resolve: { scale: { opacity: 'independent' } },
  } as unknown as TopLevelSpec;
}

/**
 * Interactive companion of the relation figure for the browser: the linked points with an
 * interval brush (selection `brush`) and a click-to-open (`href` channel).
 */
export function relationPointsSpec(rel: RelationContent, opts: { width?: number; height?: number; pageOf?: (slug: string) => string } = {}): TopLevelSpec {
  const labels = rel.bins.map((b) => zBinLabel(b));
  const binOf = (z: number) => {
    const i = rel.bins.findIndex((b) => z >= b.zLo && z < b.zHi);
    return i < 0 ? 'outside bins' : labels[i];
  };
  const pageOf = opts.pageOf ?? ((slug: string) => `../../objects/${slug}/`);
  const values = rel.points.map((p) => ({ id: p.id, x: r4(p.x), y: r4(p.y), z: r4(p.z), bin: binOf(p.z), href: pageOf(p.slug) }));
  const domain = [...labels, 'outside bins'];
  return {
    $schema: SCHEMA,
    title: { text: `${rel.title}: individual objects` },
    description: `Up to ${values.length} objects of ${rel.title}, coloured by redshift bin; drag to select, click a point to open its page.`,
    config: baseConfig(),
    width: opts.width ?? 560,
    height: opts.height ?? 360,
    data: { name: 'points', values },
    params: [{ name: 'brush', select: { type: 'interval', encodings: ['x', 'y'] } }],
    mark: { type: 'point', filled: true, size: 18, opacity: 0.7, cursor: 'pointer' },
    encoding: {
      x: { field: 'x', type: 'quantitative', scale: { zero: false }, axis: { title: rel.x.label } },
      y: { field: 'y', type: 'quantitative', scale: { zero: false }, axis: { title: rel.y.label } },
      color: {
        condition: { param: 'brush', field: 'bin', type: 'nominal', scale: { domain, range: domain.map((_, i) => (i < labels.length ? SERIES[i % SERIES.length] : COLOURS.muted)) }, legend: { title: 'Redshift bin' } },
        value: COLOURS.shade,
      },
      href: { field: 'href' },
      tooltip: [{ field: 'id', title: 'id' }, { field: 'x', title: rel.x.label }, { field: 'y', title: rel.y.label }, { field: 'z', title: 'z' }],
    },
  } as unknown as TopLevelSpec;
}
