/**
 * A population relation (e.g. the star-forming main sequence) as small multiples, one panel per
 * redshift bin, all on the same axes: the binned density of the fitted galaxies (grey cells,
 * binned by the pipeline), the preferred method's mean relation with its 68% credible band, the
 * other methods' mean relations as lines (the naive fit dotted, in its own colour), running
 * medians with their bootstrap interval and the 16-84% spread of the galaxies, a published
 * reference relation inside its validity range, the mass-completeness limit as a vertical rule
 * (the incomplete side shaded), outliers as open diamonds and, for mocks, the true relation as a
 * dashed line.
 */
import { compile, type TopLevelSpec } from 'vega-lite';
import type { BinFit, RelationContent } from '../pipeline/content.ts';
import { baseConfig, COLOURS, SCHEMA, SERIES } from './theme.ts';

const r4 = (x: number): number => Math.round(x * 1e4) / 1e4;

export function zBinLabel(b: { zLo: number; zHi: number }): string {
  return `${b.zLo} < z < ${b.zHi}`;
}

/** How each fitting method is drawn: colour and dash, so the naive fit never looks like the others. */
export const METHOD_STYLE: Readonly<Record<string, { colour: string; dash: number[]; label: string }>> = Object.freeze({
  hierarchical: { colour: COLOURS.blue, dash: [1, 0], label: 'hierarchical' },
  deconvolved: { colour: COLOURS.green, dash: [1, 0], label: 'deconvolved' },
  mixture: { colour: COLOURS.orange, dash: [7, 2], label: 'mixture' },
  naive: { colour: COLOURS.vermillion, dash: [1.5, 2.5], label: 'naive (least squares on medians)' },
});
const TRUTH_STYLE = { colour: COLOURS.ink, dash: [6, 3] };
const REFERENCE_STYLE = { colour: COLOURS.purple, dash: [9, 3, 2, 3] };
const OTHER_METHOD = { colour: COLOURS.sky, dash: [4, 2] };

/** "Speagle J. S., Steinhardt C. L., …, 2014, ApJS …" -> "Speagle et al. 2014"; other labels cut at the first parenthesis. */
export function shortCitation(label: string): string {
  const head = label.split(' at z =')[0].split(' (')[0].trim();
  const year = /\b(1[89]\d\d|20\d\d)\b/.exec(head)?.[1];
  const first = /^([A-Z][A-Za-z'\u00c0-\u017f-]+)/.exec(head)?.[1];
  if (year && first) {
    const authors = head.slice(0, head.indexOf(year)).split(/,\s*/).filter((p) => /^[A-Z][A-Za-z'\u00c0-\u017f-]+(\s|$)/.test(p) && !/^[A-Z]\.?$/.test(p));
    return authors.length > 2 ? `${first} et al. ${year}` : authors.length === 2 ? `${first} & ${authors[1].split(' ')[0]} ${year}` : `${first} ${year}`;
  }
  return head.length > 48 ? head.slice(0, 47) + '…' : head;
}

/** A reference label split into its citation and its note (the pipeline writes "<citation> at z = <z> (<note>)"). */
export function splitReference(label: string): { citation: string; z: string | null; note: string | null } {
  const m = /^(.*?) at z = ([-0-9.]+) \((.*)\)$/s.exec(label);
  return m ? { citation: m[1], z: m[2], note: m[3] } : { citation: label, z: null, note: null };
}

/** The line series a relation can draw, in legend order, with their style. */
export function relationSeries(rel: RelationContent): { name: string; colour: string; dash: number[] }[] {
  const methods: string[] = [];
  const preferred = rel.bins.find((b) => b.band)?.band?.method;
  for (const b of rel.bins) for (const f of b.fits) if (!methods.includes(f.method)) methods.push(f.method);
  const ordered = [...methods].sort((p, q) => (p === preferred ? -1 : q === preferred ? 1 : methods.indexOf(p) - methods.indexOf(q)));
  const out = ordered.map((m) => {
    const st = METHOD_STYLE[m] ?? OTHER_METHOD;
    return { name: methodSeries(m, m === preferred), colour: st.colour, dash: st.dash };
  });
  if (rel.bins.some((b) => b.truth)) out.push({ name: TRUTH_SERIES, ...TRUTH_STYLE });
  const ref = rel.bins.find((b) => b.reference)?.reference;
  if (ref) out.push({ name: referenceSeries(ref.label), ...REFERENCE_STYLE });
  return out.map((s) => ({ name: s.name, colour: s.colour, dash: s.dash }));
}

export const TRUTH_SERIES = 'true relation (generator)';
function methodSeries(method: string, preferred: boolean): string {
  const label = METHOD_STYLE[method]?.label ?? method;
  return preferred ? `${label} fit, 68% band` : `${label} fit`;
}
function referenceSeries(label: string): string {
  return `reference: ${shortCitation(label)}`;
}

/** A parameter's axis title: its label, with the unit only when the label does not carry one. */
export function axisTitle(p: { label: string; unit: string }): string {
  return p.unit && !/[[(]/.test(p.label) ? `${p.label} [${p.unit}]` : p.label;
}

/** Axes shared by every panel of a relation, so the bins can be compared by eye. */
function frame(rel: RelationContent) {
  const d = rel.density;
  const xDomain: [number, number] = [r4(d.x0), r4(d.x0 + d.nx * d.dx)];
  const yDomain: [number, number] = [r4(d.y0), r4(d.y0 + d.ny * d.dy)];
  const xTitle = axisTitle(rel.x);
  const yTitle = axisTitle(rel.y);
  return { xDomain, yDomain, xTitle, yTitle };
}

function countsOf(rel: RelationContent, bin: number): number[] {
  return rel.densityByBin?.[bin] ?? rel.density.counts;
}

export interface RelationPanelOptions {
  width?: number;
  height?: number;
  /** Draw the legend (the combined figure does; page panels share an HTML key). */
  legend?: boolean;
}

type Layer = Record<string, unknown>;

/** Layers and title of one redshift bin's panel. */
function panel(rel: RelationContent, binIndex: number, opts: RelationPanelOptions): { spec: Layer; parts: string[] } {
  const b: BinFit = rel.bins[binIndex];
  const width = opts.width ?? 380;
  const height = opts.height ?? 285;
  const legend = opts.legend ?? false;
  const { xDomain, yDomain, xTitle, yTitle } = frame(rel);
  const series = relationSeries(rel);
  const x = { field: 'x', type: 'quantitative', scale: { domain: xDomain, nice: false, zero: false }, axis: { title: xTitle, grid: false, tickCount: 6 } };
  const y = { field: 'y', type: 'quantitative', scale: { domain: yDomain, nice: false, zero: false }, axis: { title: yTitle, grid: false, tickCount: 6 } };
  const lineEnc = {
    color: { field: 'series', type: 'nominal', scale: { domain: series.map((s) => s.name), range: series.map((s) => s.colour) }, legend: legend ? { title: null, symbolType: 'stroke', symbolStrokeWidth: 2, columns: 2, labelLimit: 360, orient: 'bottom' } : null },
    strokeDash: { field: 'series', type: 'nominal', scale: { domain: series.map((s) => s.name), range: series.map((s) => s.dash) }, legend: legend ? { title: null } : null },
  };
  const inX = (v: number) => v >= xDomain[0] && v <= xDomain[1];
  const layers: Layer[] = [];
  const parts: string[] = [];

  // the incomplete side of the mass limit, lightly shaded
  const lim = b.completenessLogM !== null && Number.isFinite(b.completenessLogM) && inX(b.completenessLogM) ? r4(b.completenessLogM) : null;
  if (lim !== null) layers.push({ data: { values: [{ x: xDomain[0], x2: lim }] }, mark: { type: 'rect', color: COLOURS.shade, opacity: 0.25 }, encoding: { x: { ...x, field: 'x' }, x2: { field: 'x2' } } });

  const d = rel.density;
  const counts = countsOf(rel, binIndex);
  let nMax = 0;
  for (let k = 0; k < rel.bins.length; k++) for (const n of countsOf(rel, k)) if (n > nMax) nMax = n;
  const cells: { x: number; x2: number; y: number; y2: number; n: number }[] = [];
  for (let j = 0; j < d.ny; j++) {
    for (let i = 0; i < d.nx; i++) {
      const n = counts[j * d.nx + i];
      if (n > 0) cells.push({ x: r4(d.x0 + i * d.dx), x2: r4(d.x0 + (i + 1) * d.dx), y: r4(d.y0 + j * d.dy), y2: r4(d.y0 + (j + 1) * d.dy), n });
    }
  }
  if (cells.length) {
    layers.push({
      data: { values: cells },
      mark: { type: 'rect', color: COLOURS.ink },
      encoding: { x, x2: { field: 'x2' }, y, y2: { field: 'y2' }, opacity: { field: 'n', type: 'quantitative', scale: { type: 'sqrt', domain: [0, nMax], range: [0.06, 0.5] }, legend: null } },
    });
    parts.push(rel.densityByBin ? 'grey cells are the density of the fitted galaxies in this bin' : 'grey cells are the density of all fitted galaxies');
  }

  const preferred = b.band?.method;
  if (b.band) {
    const st = METHOD_STYLE[b.band.method] ?? OTHER_METHOD;
    const vals = b.band.x.map((bx, k) => ({ x: r4(bx), lo: r4(b.band!.lo[k]), hi: r4(b.band!.hi[k]) }));
    layers.push({ data: { values: vals }, mark: { type: 'area', color: st.colour, opacity: 0.22, clip: true }, encoding: { x, y: { ...y, field: 'lo' }, y2: { field: 'hi' } } });
    parts.push(`the shaded band is the 68% credible band of the ${b.band.method} mean relation`);
  }

  // mean relations of every method (and the truth), over the range of the fitted galaxies
  const lx = b.band ? [b.band.x[0], b.band.x[b.band.x.length - 1]] : lim !== null ? [lim, xDomain[1]] : xDomain;
  const grid = (f: (v: number) => number, series: string, into: Layer[]) => {
    for (let k = 0; k <= 24; k++) {
      const v = lx[0] + ((lx[1] - lx[0]) * k) / 24;
      into.push({ series, x: r4(v), y: r4(f(v)) });
    }
  };
  const lines: Layer[] = [];
  const methods: string[] = [];
  for (const f of b.fits) {
    grid((v) => f.a.median + f.b.median * (v - rel.pivot), methodSeries(f.method, f.method === preferred), lines);
    methods.push(f.method);
  }
  if (methods.length) parts.push(`lines are the mean relations of the ${methods.join(', ')} fit${methods.length > 1 ? 's' : ''}${methods.includes('naive') ? ' (naive dotted)' : ''}`);
  if (b.truth) {
    const t = b.truth;
    grid((v) => t.a + t.b * (v - rel.pivot), TRUTH_SERIES, lines);
    parts.push('the dashed black line is the true relation of the mock');
  }
  if (b.reference) {
    const name = referenceSeries(b.reference.label);
    b.reference.x.forEach((rx, k) => {
      if (inX(rx)) lines.push({ series: name, x: r4(rx), y: r4(b.reference!.y[k]) });
    });
    parts.push(`the purple dash-dot line is ${shortCitation(b.reference.label)} inside its stated validity range`);
  }
  if (lines.length) layers.push({ name: `lines_${binIndex}`, data: { values: lines }, mark: { type: 'line', strokeWidth: 1.8, clip: true }, encoding: { x, y, ...lineEnc, detail: { field: 'series' } } });

  if (lim !== null) {
    layers.push({ data: { values: [{ x: lim }] }, mark: { type: 'rule', color: COLOURS.muted, strokeDash: [2, 3], strokeWidth: 1.4 }, encoding: { x } });
    layers.push({ data: { values: [{ x: lim, y: yDomain[1], t: 'mass limit' }] }, mark: { type: 'text', color: COLOURS.muted, fontSize: 10, align: 'right', baseline: 'top', dx: -3, dy: 3 }, encoding: { x, y, text: { field: 't' } } });
    parts.push('the dotted vertical line is the mass-completeness limit (shaded: below it)');
  }

  if (b.running) {
    const runs: Layer[] = [];
    for (let k = 0; k < b.running.centres.length; k++) {
      if (!Number.isFinite(b.running.median[k])) continue;
      runs.push({ x: r4(b.running.centres[k]), y: r4(b.running.median[k]), lo: r4(b.running.medianLo[k]), hi: r4(b.running.medianHi[k]), p16: r4(b.running.p16[k]), p84: r4(b.running.p84[k]), n: b.running.n[k] });
    }
    if (runs.length) {
      layers.push({ data: { values: runs }, mark: { type: 'rule', color: COLOURS.muted, strokeWidth: 1, clip: true }, encoding: { x, y: { ...y, field: 'p16' }, y2: { field: 'p84' } } });
      layers.push({ data: { values: runs.flatMap((r) => [{ x: r.x, y: r.p16 }, { x: r.x, y: r.p84 }]) }, mark: { type: 'tick', orient: 'horizontal', color: COLOURS.muted, thickness: 1, size: 7, clip: true }, encoding: { x, y } });
      layers.push({ data: { values: runs }, mark: { type: 'rule', color: COLOURS.ink, strokeWidth: 2.6, clip: true }, encoding: { x, y: { ...y, field: 'lo' }, y2: { field: 'hi' } } });
      layers.push({
        name: `running_${binIndex}`,
        data: { values: runs.map((r) => ({ ...r, kind: 'running median' })) },
        mark: { type: 'point', shape: 'square', filled: true, color: COLOURS.paper, stroke: COLOURS.ink, strokeWidth: 1.3, size: 34, opacity: 1, clip: true },
        encoding: { x, y },
      });
      parts.push('squares are running medians with their bootstrap 68% interval (thick bar) and the 16-84% spread of the galaxies (thin bar)');
    }
  }

  const outliers = rel.outliers.filter((o) => o.z >= b.zLo && o.z < b.zHi && inX(o.x));
  if (outliers.length) {
    layers.push({
      name: `outliers_${binIndex}`,
      data: { values: outliers.map((o) => ({ x: r4(o.x), y: r4(o.y) })) },
      mark: { type: 'point', shape: 'diamond', filled: false, size: 48, strokeWidth: 1.3, color: COLOURS.vermillion, opacity: 1, clip: true },
      encoding: { x, y },
    });
    parts.push(`open diamonds are the ${outliers.length} outlier${outliers.length > 1 ? 's' : ''}`);
  }
  if (!layers.length) layers.push({ data: { values: [{ x: xDomain[0], y: yDomain[0] }] }, mark: { type: 'point', opacity: 0 }, encoding: { x, y } });
  const fitted = b.fits.length ? `${b.n} galaxies fitted` : `${b.n} galaxies, too few to fit`;
  return {
    spec: { title: { text: zBinLabel(b), subtitle: fitted, anchor: 'start', fontSize: 13, subtitleFontSize: 11 }, width, height, layer: layers },
    parts,
  };
}

/** One redshift bin of a relation as its own figure (the page shows these side by side). */
export function relationPanelSpec(rel: RelationContent, binIndex: number, opts: RelationPanelOptions = {}): TopLevelSpec {
  const { spec, parts } = panel(rel, binIndex, opts);
  const b = rel.bins[binIndex];
  return {
    $schema: SCHEMA,
    ...spec,
    description: `${rel.title} in ${zBinLabel(b)} (${rel.y.label} against ${rel.x.label}): ${parts.join('; ') || 'nothing to draw'}.`,
    config: baseConfig(),
    resolve: { scale: { opacity: 'independent' } },
  } as unknown as TopLevelSpec;
}

/**
 * Every redshift bin of a relation in one figure (small multiples on shared axes, one legend):
 * the downloadable and printable version of the page's panels.
 */
export function relationSpec(rel: RelationContent, opts: { columns?: number; width?: number; height?: number } = {}): TopLevelSpec {
  const columns = Math.min(opts.columns ?? 3, Math.max(1, rel.bins.length));
  const panels = rel.bins.map((_, i) => panel(rel, i, { width: opts.width ?? 300, height: opts.height ?? 230, legend: true }));
  const parts = [...new Set(panels.flatMap((p) => p.parts.map((t) => t.replace(/the \d+ outliers?/, 'the outliers'))))];
  return {
    $schema: SCHEMA,
    title: { text: rel.title, subtitle: `${rel.y.label} against ${rel.x.label}, ${rel.population} galaxies, y = a + b (x − ${rel.pivot})` },
    description: `${rel.title}, one panel per redshift bin on shared axes: ${parts.join('; ') || 'nothing to draw'}.`,
    config: baseConfig(),
    columns,
    concat: panels.length ? panels.map((p) => p.spec) : [{ data: { values: [{}] }, mark: { type: 'point', opacity: 0 } }],
    spacing: 24,
    resolve: { scale: { opacity: 'independent', color: 'shared', strokeDash: 'shared' } },
  } as unknown as TopLevelSpec;
}

/**
 * Interactive companion of the relation figure for the browser: the linked points with an
 * interval brush (selection `brush`) and tooltips; the page opens an object on click from the
 * datum's `href` (relative to the relation page).
 */
export function relationPointsSpec(rel: RelationContent, opts: { width?: number; height?: number; pageOf?: (slug: string) => string } = {}): TopLevelSpec {
  const labels = rel.bins.map((b) => zBinLabel(b));
  const binOf = (z: number) => {
    const i = rel.bins.findIndex((b) => z >= b.zLo && z < b.zHi);
    return i < 0 ? 'outside bins' : labels[i];
  };
  const pageOf = opts.pageOf ?? ((slug: string) => `../../objects/${slug}/`);
  const values = rel.points.map((p) => ({ id: p.id, x: r4(p.x), y: r4(p.y), z: r4(p.z), bin: binOf(p.z), href: pageOf(p.slug) }));
  const used = new Set(values.map((v) => v.bin));
  const domain = [...labels, 'outside bins'].filter((l) => used.has(l));
  const { xDomain, yDomain, xTitle, yTitle } = frame(rel);
  return {
    $schema: SCHEMA,
    title: { text: `${rel.title}: individual galaxies`, subtitle: `${values.length} galaxies, posterior means, coloured by redshift bin` },
    description: `${values.length} galaxies of ${rel.title} at their posterior means, coloured by redshift bin. With JavaScript: drag to select galaxies and list them, hover for values, click a point to open its page.`,
    config: baseConfig(),
    width: opts.width ?? 560,
    height: opts.height ?? 340,
    data: { name: 'points', values },
    params: [{ name: 'brush', select: { type: 'interval', encodings: ['x', 'y'], clear: 'dblclick' } }],
    mark: { type: 'point', filled: true, size: 20, opacity: 0.75, cursor: 'pointer' },
    encoding: {
      x: { field: 'x', type: 'quantitative', scale: { domain: xDomain, nice: false, zero: false }, axis: { title: xTitle, grid: false } },
      y: { field: 'y', type: 'quantitative', scale: { domain: yDomain, nice: false, zero: false }, axis: { title: yTitle, grid: false } },
      color: {
        condition: { param: 'brush', empty: true, field: 'bin', type: 'nominal', scale: { domain, range: domain.map((l) => (l === 'outside bins' ? COLOURS.muted : SERIES[labels.indexOf(l) % SERIES.length])) }, legend: { title: 'Redshift bin', orient: 'right' } },
        value: COLOURS.shade,
      },
      tooltip: [{ field: 'id', title: 'id' }, { field: 'x', title: rel.x.label, format: '.3f' }, { field: 'y', title: rel.y.label, format: '.3f' }, { field: 'z', title: 'z', format: '.3f' }],
    },
  } as unknown as TopLevelSpec;
}

/**
 * The linked view compiled to Vega at build time, so the browser needs only the Vega runtime
 * (not the Vega-Lite compiler) to make it interactive.
 */
export function relationPointsVega(rel: RelationContent, opts: Parameters<typeof relationPointsSpec>[1] = {}): Record<string, unknown> {
  return compile(relationPointsSpec(rel, opts)).spec as unknown as Record<string, unknown>;
}
