/**
 * The posterior matrix of one object: a k x k grid over its parameters.
 *
 * - Diagonal: each parameter's marginal density (kernel density estimate) with its central 68%
 *   and 95% credible intervals shaded under the curve, the weighted histogram as a light step
 *   line behind it (so the smoothing can be judged), the median as a line from the axis to the
 *   curve, and the parameter's name in the panel.
 * - Below the diagonal: each pair's 68% and 95% highest-density credible regions, shaded (the
 *   regions enclose that fraction of the posterior mass; the pipeline gives their outlines).
 * - Above the diagonal: each pair's weighted correlation coefficient, written and tinted by sign
 *   and strength, so the whole matrix is used and linear dependence can be read off directly.
 * - The true value of a mock object is a diamond, in every panel it falls in, with a legend
 *   entry; the figure says so only when the content carries one.
 *
 * Summary numbers are not repeated on the figure: they are in the table beside it. Colours
 * are the release's blue for the posterior (as the relations' credible bands) and ink for the
 * median and the truth (as the relations' true relation). Written straight to SVG, in Node for
 * the prerendered pages and in the browser for the viewer; the grid is fixed by the number of
 * parameters.
 */
import type { Contour2d, Marginal, ObjectContent, ParamRow } from '../pipeline/content.ts';
import { COLOURS } from './theme.ts';
import { axis } from './svg/axis.ts';
import { clipRect, idPrefix, legend, panelFrame, svgRoot, titleBlock, type LegendEntry } from './svg/figure.ts';
import { positionScale, type PositionScale } from './svg/scale.ts';
import { escapeXml, polyPath, px, simplePath, textWidth } from './svg/write.ts';

export interface PosteriorOptions {
  /** Total width in pixels (default 560); each panel is about width / k. */
  width?: number;
}

/** Text of an enclosed-mass level: 0.68 -> "68%", 0.954 -> "95.4%". */
export function massLabel(mass: number): string {
  const pct = Math.round(mass * 1000) / 10;
  return `${pct}%`;
}

const PAD = 5;
const SPACING = 6;
/** Fill opacity of the outer (95%) and inner (68%) regions and intervals; the inner is drawn over the outer. */
const OUTER = 0.22;
const INNER = 0.42;
/** Outlines and curves are simplified to within this many pixels of the pipeline's (Douglas-Peucker): invisible, and a third of the bytes. */
const SIMPLIFY = 0.35;

/** A parameter's plotted range: the histogram's span, the 2-D outlines, the 95% interval and the truth, padded by 6%. */
function domainOf(name: string, row: ParamRow | undefined, marg: Marginal | undefined, contours: Contour2d[]): [number, number] {
  let lo = Infinity;
  let hi = -Infinity;
  const take = (v: number) => {
    if (!Number.isFinite(v)) return;
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  };
  if (marg) {
    take(marg.edges[0]);
    take(marg.edges[marg.edges.length - 1]);
  }
  for (const c of contours) {
    if (c.x !== name && c.y !== name) continue;
    const a = c.x === name ? 0 : 1;
    for (const lv of c.levels) for (const path of lv.paths) for (const pt of path) take(pt[a]);
  }
  if (row) {
    take(row.p025);
    take(row.p975);
    if (row.truth !== undefined) take(row.truth);
  }
  if (!(hi > lo)) {
    const c = Number.isFinite(lo) ? lo : 0;
    return [c - 1, c + 1];
  }
  const pad = 0.06 * (hi - lo);
  return [lo - pad, hi + pad];
}

function diamond(x: number, y: number, r = 4): string {
  return `M${px(x)},${px(y - r)}l${r},${r},${-r},${r},${-r},${-r}z`;
}

const TRUTH_STYLE = `fill="${COLOURS.paper}" stroke="${COLOURS.ink}" stroke-width="1.3"`;

/** Signed correlation coefficient with two decimals and a true minus sign. */
function rhoText(r: number): string {
  const s = Math.abs(r).toFixed(2);
  return r < 0 && s !== '0.00' ? `−${s}` : `+${s}`;
}

/**
 * Path data of the whole matrix, by style: each panel adds its shapes at its own offset, and
 * each style is written once as one path (panels never overlap, and no shape leaves its panel:
 * the plotted ranges hold every outline, curve and true value).
 */
class Layers {
  frames = '';
  outer = '';
  inner = '';
  band95 = '';
  band68 = '';
  hist = '';
  kde = '';
  median = '';
  truth = '';
  text = '';
  labels = '';
  tints: string[] = [];
}

const shift = (v: number[], d: number) => v.map((x) => x + d);

/** The posterior matrix of one object as SVG. */
export function posteriorSvg(obj: ObjectContent, opts: PosteriorOptions = {}): string {
  const margByName = new Map(obj.marginals.map((m) => [m.param, m]));
  const names = obj.params.map((p) => p.name).filter((n) => margByName.has(n));
  for (const m of obj.marginals) if (!names.includes(m.param)) names.push(m.param);
  const rows = new Map(obj.params.map((p) => [p.name, p]));
  const order = new Map(obj.params.map((p, i) => [p.name, i]));
  const k = names.length;
  const width = opts.width ?? 560;
  const cell = Math.max(64, Math.min(150, Math.floor((width - 60) / Math.max(k, 1)) - SPACING));
  const domains = new Map(names.map((n) => [n, domainOf(n, rows.get(n), margByName.get(n), obj.contours)]));
  const hasTruth = names.some((n) => rows.get(n)?.truth !== undefined);
  const labelOf = (n: string) => rows.get(n)?.label ?? n;
  const levelsSeen = new Set<number>();
  for (const c of obj.contours) for (const lv of c.levels) levelsSeen.add(lv.mass);
  const levels = [...levelsSeen].sort((a, b) => a - b);
  const [inner, outer] = levels.length >= 2 ? [levels[0], levels[levels.length - 1]] : [0.68, 0.95];
  const xScale = (n: string) => positionScale('linear', domains.get(n)!, [0, cell]);
  const yScale = (n: string) => positionScale('linear', domains.get(n)!, [cell, 0]);
  const axisOpts = { tickCount: 4, labelFontSize: 10, titleFontSize: cell < 90 ? 11 : 12, labelOverlap: 'parity' as const, labelFlush: true, labelBound: true, charWidth: 0.65 };
  const step = cell + SPACING;

  const L = new Layers();
  let left = PAD;
  let bottom = 0;
  const axes: string[] = [];
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < k; j++) {
      const ox = j * step, oy = i * step;
      const xn = names[j];
      const yn = names[i];
      if (j > i) {
        const r = correlationOf(obj, order.get(yn), order.get(xn));
        if (r !== null) correlationCell(L, cell, ox, oy, r);
        continue;
      }
      L.frames += `M${ox + 0.5},${oy + 0.5}h${cell}v${cell}h-${cell}z`;
      const x = xScale(xn);
      let ax = '';
      if (i === k - 1) {
        const a = axis({ orient: 'bottom', height: cell, scale: x, title: splitLabel(labelOf(xn), cell), ...axisOpts });
        ax += a.svg;
        bottom = Math.max(bottom, a.extent);
      }
      if (i === j) marginalPanel(L, cell, ox, oy, x, margByName.get(xn) as Marginal, rows.get(xn), labelOf(xn));
      else {
        const y = yScale(yn);
        if (j === 0) {
          const a = axis({ orient: 'left', scale: y, title: splitLabel(labelOf(yn), cell), ...axisOpts });
          ax += a.svg;
          left = Math.max(left, Math.ceil(a.extent) + PAD);
        }
        const c = obj.contours.find((cc) => (cc.x === xn && cc.y === yn) || (cc.x === yn && cc.y === xn));
        pairPanel(L, ox, oy, x, y, c, c ? c.x !== xn : false, rows.get(xn)?.truth, rows.get(yn)?.truth, inner, outer);
      }
      if (ax) axes.push(`<g transform="translate(${ox},${oy})">${ax}</g>`);
    }
  }
  const title = `Posterior of ${obj.id}`;
  const head = titleBlock(title, null);
  const grid = Math.max(k, 1) * cell + (Math.max(k, 1) - 1) * SPACING;
  const key = legend(
    [
      { label: `${massLabel(inner)} credible`, glyph: `<path d="M2,2h16v10h-16z" fill="${COLOURS.blue}" fill-opacity="${px(INNER + OUTER - INNER * OUTER)}" stroke="${COLOURS.blue}"/>` },
      { label: `${massLabel(outer)} credible`, glyph: `<path d="M2,2h16v10h-16z" fill="${COLOURS.blue}" fill-opacity="${OUTER}"/>` },
      { label: 'median', glyph: `<path d="M10,1V13" stroke="${COLOURS.ink}" stroke-width="1.2"/>` },
      ...(hasTruth ? [{ label: 'true value (mock)', glyph: `<path d="${diamond(10, 7)}" ${TRUTH_STYLE}/>` }] : []),
      ...(obj.correlation ? [{ label: 'weighted correlation ρ (> 0, < 0)', glyph: `<path d="M2,2h8v10h-8z" fill="${COLOURS.blue}" fill-opacity="0.3"/><path d="M10,2h8v10h-8z" fill="${COLOURS.vermillion}" fill-opacity="0.3"/>` }] : []),
    ] as LegendEntry[],
    Math.max(grid, 300),
  );
  const legendTop = PAD + head.height + 6;
  const top = legendTop + key.height + 10;
  const widthPx = left + Math.ceil(Math.max(grid + 0.5, key.width)) + PAD;
  const heightPx = top + grid + Math.ceil(bottom) + PAD;
  const description =
    `Posterior matrix of ${obj.id} over ${k} parameters (${names.map(labelOf).join(', ')}): ` +
    `on the diagonal, each parameter's marginal density with its central ${massLabel(inner)} and ${massLabel(outer)} credible intervals shaded and the median marked; ` +
    `below it, the ${massLabel(inner)} and ${massLabel(outer)} credible regions of each pair of parameters` +
    (obj.correlation ? '; above it, the weighted correlation coefficient of each pair' : '') +
    (hasTruth ? '; the true value of this mock object is marked with a diamond.' : '.');
  const path = (d: string, style: string) => (d ? `<path d="${d}" ${style}/>` : '');
  const blue = COLOURS.blue;
  const body =
    `<g transform="translate(${PAD},${PAD})">${head.svg}</g>` +
    `<g transform="translate(${left},${legendTop})">${key.svg}</g>` +
    `<g transform="translate(${left},${top})">` +
    L.tints.join('') +
    path(L.frames, `stroke="${COLOURS.grid}"`) +
    axes.join('') +
    path(L.band95, `fill="${blue}" fill-opacity="${OUTER}"`) +
    path(L.band68, `fill="${blue}" fill-opacity="${INNER}"`) +
    path(L.hist, `stroke="${COLOURS.muted}" stroke-width="0.8" stroke-opacity="0.7"`) +
    path(L.kde, `stroke="${blue}" stroke-width="1.5"`) +
    // regions may have holes (a posterior with more than one mode): even-odd filling keeps them open
    path(L.outer, `fill="${blue}" fill-opacity="${OUTER}" fill-rule="evenodd" stroke="${blue}" stroke-width="0.6" stroke-opacity="0.6"`) +
    path(L.inner, `fill="${blue}" fill-opacity="${INNER}" fill-rule="evenodd" stroke="${blue}"`) +
    path(L.median, `stroke="${COLOURS.ink}" stroke-width="1.2"`) +
    path(L.truth, TRUTH_STYLE) +
    (L.text ? `<g font-size="${cell < 90 ? 11 : 12}" text-anchor="middle" fill="${COLOURS.ink}">${L.text}</g>` : '') +
    (L.labels ? `<g font-size="10" fill="${COLOURS.muted}">${L.labels}</g>` : '') +
    '</g>';
  return svgRoot(widthPx, heightPx, title, description, body);
}

/**
 * An axis title that fits its panel: a label wider than the panel is split before its unit
 * ("log M* [M☉]" over two lines as "log M*" and "[M☉]"); the axis draws each part on a line.
 */
function splitLabel(label: string, cell: number): string {
  if (0.62 * 12 * label.length <= cell) return label;
  // before the unit in brackets, else at the space nearest the middle
  let at = label.lastIndexOf(' [');
  if (at <= 0) {
    let best = -1;
    for (let i = label.indexOf(' '); i > 0; i = label.indexOf(' ', i + 1)) if (best < 0 || Math.abs(i - label.length / 2) < Math.abs(best - label.length / 2)) best = i;
    at = best;
  }
  return at > 0 ? `${label.slice(0, at)}\n${label.slice(at + 1)}` : label;
}

function correlationOf(obj: ObjectContent, a: number | undefined, b: number | undefined): number | null {
  if (!obj.correlation || a === undefined || b === undefined) return null;
  const r = obj.correlation[a]?.[b];
  return Number.isFinite(r) ? (r as number) : null;
}

/** One cell above the diagonal: the coefficient, on a tint whose colour is its sign and whose strength is |rho|. */
function correlationCell(L: Layers, cell: number, ox: number, oy: number, r: number): void {
  const colour = r < 0 ? COLOURS.vermillion : COLOURS.blue;
  const size = cell < 90 ? 11 : 12;
  L.tints.push(`<path d="M${ox + 0.5},${oy + 0.5}h${cell}v${cell}h-${cell}z" fill="${colour}" fill-opacity="${px(0.04 + 0.4 * Math.abs(r))}" stroke="${COLOURS.grid}"/>`);
  L.text += `<text x="${px(ox + cell / 2 + 0.5)}" y="${px(oy + cell / 2 + 0.5 + Math.round(0.3 * size))}">ρ ${rhoText(r)}</text>`;
}

/** The polygon under a curve between a and b (with the curve interpolated at both ends), in pixels. */
function bandUnder(xs: number[], ys: number[], a: number, b: number, X: PositionScale, Y: PositionScale, ox: number, oy: number): string {
  if (!(b > a) || xs.length < 2) return '';
  const px0: number[] = [X(a), X(a)], py0: number[] = [Y(0), Y(interpolate(xs, ys, a))];
  for (let i = 0; i < xs.length; i++)
    if (xs[i] > a && xs[i] < b) {
      px0.push(X(xs[i]));
      py0.push(Y(ys[i]));
    }
  px0.push(X(b), X(b));
  py0.push(Y(interpolate(xs, ys, b)), Y(0));
  return polyPath(shift(px0, ox), shift(py0, oy), true);
}

/** Linear interpolation of a sampled curve at v (held at the ends). */
function interpolate(xs: number[], ys: number[], v: number): number {
  if (xs.length < 2) return ys[0] ?? 0;
  let i = 1;
  while (i < xs.length - 1 && xs[i] < v) i++;
  const t = (v - xs[i - 1]) / (xs[i] - xs[i - 1] || 1);
  return ys[i - 1] + Math.max(0, Math.min(1, t)) * (ys[i] - ys[i - 1]);
}

function marginalPanel(L: Layers, cell: number, ox: number, oy: number, x: PositionScale, m: Marginal, row: ParamRow | undefined, label: string): void {
  const nb = m.density.length;
  let dMax = 1e-300;
  for (const v of m.density) if (v > dMax) dMax = v;
  for (const v of m.kdeY) if (v > dMax) dMax = v;
  // headroom above the peak for the parameter's name
  const y = positionScale('linear', [0, dMax * 1.3], [cell, 0]);
  if (row && m.kdeX.length > 1) {
    L.band95 += bandUnder(m.kdeX, m.kdeY, row.p025, row.p975, x, y, ox, oy);
    L.band68 += bandUnder(m.kdeX, m.kdeY, row.p16, row.p84, x, y, ox, oy);
  }
  // the histogram as a light step line: each bin's density from its left edge to the next
  if (nb) {
    const hx: number[] = [], hy: number[] = [];
    for (let b = 0; b < nb; b++) {
      hx.push(ox + x(m.edges[b]), ox + x(m.edges[b + 1]));
      hy.push(oy + y(m.density[b]), oy + y(m.density[b]));
    }
    L.hist += polyPath(hx, hy);
  }
  if (m.kdeX.length) L.kde += simplePath(m.kdeX.map((v) => ox + x(v)), m.kdeY.map((v) => oy + y(v)), SIMPLIFY);
  if (row) {
    const top = m.kdeX.length > 1 ? y(interpolate(m.kdeX, m.kdeY, row.p50)) : 0;
    L.median += `M${px(ox + x(row.p50))},${oy + cell}V${px(oy + top)}`;
    if (row.truth !== undefined) L.truth += diamond(ox + x(row.truth), oy + cell - 5);
  }
  // the parameter's name, top left inside the panel (the axes carry it only at the edges of the matrix)
  const fits = (t: string) => 0.62 * 10 * t.length <= cell - 8;
  const name = fits(label) ? label : label.replace(/ \[.*\]$/, '');
  if (fits(name)) L.labels += `<text x="${ox + 4}" y="${oy + 13}">${escapeXml(name)}</text>`;
}

function pairPanel(L: Layers, ox: number, oy: number, x: PositionScale, y: PositionScale, c: Contour2d | undefined, swap: boolean, truthX: number | undefined, truthY: number | undefined, inner: number, outer: number): void {
  if (c) {
    const path = (mass: number) => {
      const lv = c.levels.find((l) => Math.abs(l.mass - mass) < 1e-9);
      if (!lv) return '';
      let d = '';
      for (const p of lv.paths) d += simplePath(p.map((pt) => ox + x(swap ? pt[1] : pt[0])), p.map((pt) => oy + y(swap ? pt[0] : pt[1])), SIMPLIFY, true);
      return d;
    };
    L.outer += path(outer);
    L.inner += path(inner);
  }
  if (truthX !== undefined && truthY !== undefined) L.truth += diamond(ox + x(truthX), oy + y(truthY));
}
