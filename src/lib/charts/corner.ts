/**
 * Corner plot of one object's posterior: a k x k lower-triangular grid with the 1-D
 * marginals (weighted histogram as a step line, KDE as a smooth line, median and 68%
 * interval as rules) on the diagonal and the 2-D marginals below it as contour paths that
 * enclose 68% and 95% of the posterior mass, each labelled by that mass, over a light scatter
 * of equal-weight draws. The true value is marked only when the content carries one (mocks).
 *
 * Contours arrive as polylines from the pipeline, so a panel is a few paths, not a grid of
 * density cells (cells cost about 20 times the render time and 100 times the bytes).
 *
 * Written straight to SVG from the object's content by `cornerSvg`, in Node for the
 * prerendered pages and in the browser for the viewer; the grid of panels is fixed by the
 * number of parameters.
 */
import type { Contour2d, Marginal, ObjectContent, ParamRow } from '../pipeline/content.ts';
import { COLOURS } from './theme.ts';
import { axis } from './svg/axis.ts';
import { positionScale, type PositionScale } from './svg/scale.ts';
import { baselineOffset, escapeXml, linePath, px } from './svg/write.ts';
import { clipRect, idPrefix, panelFrame, svgRoot, symbols, titleBlock } from './sed.ts';

export interface CornerOptions {
  /** Total width in pixels (default 560); each panel is width / k. */
  width?: number;
  /** Most scatter points per 2-D panel (default 50). */
  maxPoints?: number;
}

const r4 = (x: number): number => Math.round(x * 1e4) / 1e4;

/** Text of an enclosed-mass level: 0.68 -> "68%", 0.954 -> "95.4%". */
export function massLabel(mass: number): string {
  const pct = Math.round(mass * 1000) / 10;
  return `${pct}%`;
}

/** Median with asymmetric 68% interval, at a precision set by the interval width. */
export function formatInterval(p: ParamRow): string {
  const up = p.p84 - p.p50;
  const down = p.p50 - p.p16;
  const w = Math.min(Math.abs(up), Math.abs(down)) || Math.abs(up) || 1;
  const digits = Math.max(0, Math.min(4, 1 - Math.floor(Math.log10(w))));
  return `${p.p50.toFixed(digits)} +${up.toFixed(digits)} −${down.toFixed(digits)}`;
}

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
    const axis = c.x === name ? 0 : c.y === name ? 1 : -1;
    if (axis < 0) continue;
    for (const lv of c.levels) for (const path of lv.paths) for (const pt of path) take(axis === 0 ? pt[0] : pt[1]);
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
  return [r4(lo - pad), r4(hi + pad)];
}


const PAD = 5;
/** Between panels. */
const SPACING = 8;
/** Room above the top row for the diagonal panels' two-line titles. */
const DIAG_TITLE = 25;

interface Panel {
  x: PositionScale;
  y: PositionScale;
}

/** The corner plot of one object as SVG. */
export function cornerSvg(obj: ObjectContent, opts: CornerOptions = {}): string {
  const margByName = new Map(obj.marginals.map((m) => [m.param, m]));
  const names = obj.params.map((p) => p.name).filter((n) => margByName.has(n));
  for (const m of obj.marginals) if (!names.includes(m.param)) names.push(m.param);
  const rows = new Map(obj.params.map((p) => [p.name, p]));
  const k = names.length;
  const width = opts.width ?? 560;
  const cell = Math.max(70, Math.min(150, Math.floor((width - 60) / Math.max(k, 1)) - 6));
  const maxPoints = opts.maxPoints ?? 50;
  const domains = new Map(names.map((n) => [n, domainOf(n, rows.get(n), margByName.get(n), obj.contours)]));
  const hasTruth = names.some((n) => rows.get(n)?.truth !== undefined);
  const labelOf = (n: string) => rows.get(n)?.label ?? n;
  const levelsSeen = new Set<number>();
  for (const c of obj.contours) for (const lv of c.levels) levelsSeen.add(lv.mass);
  const levels = [...levelsSeen].sort((a, b) => a - b);
  const clip = idPrefix('cp', obj.id);
  const xScale = (n: string) => positionScale('linear', domains.get(n)!, [0, cell]);
  const yScale = (n: string) => positionScale('linear', domains.get(n)!, [cell, 0]);
  const axisOpts = { tickCount: 4, labelFontSize: 10, labelOverlap: 'parity' as const, labelFlush: true };

  let left = PAD;
  let bottom = 0;
  let right = 0;
  const panels: string[] = [];
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < k; j++) {
      const at = `translate(${j * (cell + SPACING)},${i * (cell + SPACING)})`;
      if (j > i) {
        if (i !== 0 || j !== k - 1) continue;
        const a = annotation(cell, levels, hasTruth);
        panels.push(`<g transform="${at}">${a.svg}</g>`);
        right = Math.max(right, j * (cell + SPACING) + a.width);
        continue;
      }
      const xn = names[j];
      const yn = names[i];
      const x = xScale(xn);
      let body = panelFrame(cell, cell);
      if (i === k - 1) {
        const ax = axis({ orient: 'bottom', height: cell, scale: x, title: labelOf(xn), ...axisOpts });
        body += ax.svg;
        bottom = Math.max(bottom, ax.extent);
        right = Math.max(right, j * (cell + SPACING) + cell + 0.5);
      }
      if (i === j) {
        body += marginal(cell, x, margByName.get(xn) as Marginal, rows.get(xn), clip);
      } else {
        const y = yScale(yn);
        if (j === 0) {
          const ay = axis({ orient: 'left', scale: y, title: labelOf(yn), ...axisOpts });
          body += ay.svg;
          left = Math.max(left, Math.ceil(ay.extent) + PAD);
        }
        const c = obj.contours.find((cc) => (cc.x === xn && cc.y === yn) || (cc.x === yn && cc.y === xn));
        body += contour({ x, y }, c, c ? c.x !== xn : false, rows.get(xn)?.truth, rows.get(yn)?.truth, maxPoints, clip);
      }
      panels.push(`<g transform="${at}">${body}</g>`);
    }
  }
  const head = titleBlock(`Posterior of ${obj.id}`, null);
  const top = PAD + head.height + 5 + DIAG_TITLE;
  const grid = Math.max(k, 1) * cell + (Math.max(k, 1) - 1) * SPACING;
  const widthPx = left + Math.ceil(Math.max(grid, right)) + PAD;
  const heightPx = top + grid + Math.ceil(bottom) + PAD;
  const levelText = levels.map(massLabel).join(' and ') || '68% and 95%';
  const description =
    `Corner plot of the posterior of ${obj.id} over ${k} parameters (${names.map(labelOf).join(', ')}): ` +
    `one-dimensional marginal distributions on the diagonal and, below it, two-dimensional contours enclosing ${levelText} of the posterior mass` +
    (hasTruth ? '; the true value of this mock object is marked.' : '.');
  const body =
    `<defs>${clipRect(clip, cell, cell)}</defs>` +
    `<g transform="translate(${PAD},${PAD})">${head.svg}</g>` +
    `<g transform="translate(${left},${top})">${panels.join('')}</g>`;
  return svgRoot(widthPx, heightPx, `Posterior of ${obj.id}`, description, body);
}

function annotation(cell: number, levels: number[], hasTruth: boolean): { svg: string; width: number } {
  const lines = [
    'Contours enclose',
    `${(levels.length ? levels : [0.68, 0.95]).map(massLabel).join(' and ')} of the`,
    'posterior mass.',
    'Dashed rules: median',
    'and 68% interval.',
    ...(hasTruth ? ['Red: true value.'] : []),
  ];
  // lines on a point scale over [0, min(cell, 16 per line)] with half a step of padding at each end
  const step = Math.min(cell, 16 * lines.length) / lines.length;
  const dy = baselineOffset('top', 10);
  let svg = `<g font-size="10" fill="${COLOURS.ink}">`;
  lines.forEach((t, n) => (svg += `<text x="0" y="${px(step * (n + 0.5) + dy)}">${escapeXml(t)}</text>`));
  return { svg: svg + '</g>', width: Math.max(...lines.map((t) => Math.floor(0.8 * 10 * t.length))) };
}

function marginal(cell: number, x: PositionScale, m: Marginal, row: ParamRow | undefined, clip: string): string {
  const nb = m.density.length;
  let dMax = 1e-300;
  for (const v of m.density) if (v > dMax) dMax = v;
  for (const v of m.kdeY) if (v > dMax) dMax = v;
  const y = positionScale('linear', [0, dMax * 1.08], [cell, 0]);
  // the histogram as a step line: each bin's density from its left edge to the next edge
  let d = '';
  for (let b = 0; b < nb; b++) {
    const x0 = x(r4(m.edges[b])), y0 = y(r4(m.density[b]));
    d += b === 0 ? `M${px(x0)},${px(y0)}` : `L${px(x0)},${px(y(r4(m.density[b - 1])))}L${px(x0)},${px(y0)}`;
  }
  if (nb) d += `L${px(x(r4(m.edges[nb])))},${px(y(r4(m.density[nb - 1])))}`;
  let s = `<g clip-path="url(#${clip})">`;
  if (d) s += `<path d="${d}" stroke="${COLOURS.muted}"/>`;
  if (m.kdeX.length) s += `<path d="${linePath(m.kdeX.map((v) => x(r4(v))), m.kdeY.map((v) => y(r4(v))))}" stroke="${COLOURS.blue}" stroke-width="1.5"/>`;
  if (row) {
    let q = '';
    for (const v of [row.p16, row.p50, row.p84]) q += `M${px(x(r4(v)))},0V${cell}`;
    s += `<path d="${q}" stroke="${COLOURS.ink}" stroke-dasharray="3,2"/>`;
    if (row.truth !== undefined) s += `<path d="M${px(x(r4(row.truth)))},0V${cell}" stroke="${COLOURS.vermillion}" stroke-width="1.5"/>`;
  }
  s += '</g>';
  if (row) {
    // two-line title centred 3 px above the panel
    const t = `<text x="${px(cell / 2)}" y="${-25 + baselineOffset('top', 10)}">${escapeXml(row.label)}<tspan x="${px(cell / 2)}" dy="12">${escapeXml(formatInterval(row))}</tspan></text>`;
    s += `<g font-size="10" text-anchor="middle" fill="${COLOURS.ink}">${t}</g>`;
  }
  return s;
}

function contour(p: Panel, c: Contour2d | undefined, swap: boolean, truthX: number | undefined, truthY: number | undefined, maxPoints: number, clip: string): string {
  let s = `<g clip-path="url(#${clip})">`;
  if (c && c.points.length) {
    const step = Math.max(1, Math.ceil(c.points.length / maxPoints));
    const pts: { x: number; y: number }[] = [];
    for (let n = 0; n < c.points.length; n += step) {
      const q = c.points[n];
      pts.push({ x: p.x(r4(swap ? q[1] : q[0])), y: p.y(r4(swap ? q[0] : q[1])) });
    }
    s += symbols(pts, { shape: 'circle', size: 5, fill: COLOURS.muted, opacity: 0.45 });
  }
  let labels = '';
  if (c) {
    const sorted = [...c.levels].sort((a, b) => a.mass - b.mass);
    sorted.forEach((lv, li) => {
      // the innermost level is labelled below its lowest point, the others above their highest
      const below = lv === sorted[0] && sorted.length > 1;
      let top: { x: number; y: number } | null = null;
      let d = '';
      for (const path of lv.paths) {
        const xs: number[] = [], ys: number[] = [];
        for (const pt of path) {
          const x = r4(swap ? pt[1] : pt[0]);
          const y = r4(swap ? pt[0] : pt[1]);
          xs.push(p.x(x));
          ys.push(p.y(y));
          if (!top || (below ? y < top.y : y > top.y)) top = { x, y };
        }
        d += linePath(xs, ys);
      }
      if (d) s += `<path d="${d}" stroke="${COLOURS.blue}"${li === 0 ? ' stroke-width="1.6"' : ' stroke-width="1.1" stroke-dasharray="4,2"'}/>`;
      if (top) {
        const t = top as { x: number; y: number };
        const dy = below ? 1 + baselineOffset('top', 9) : -1 + baselineOffset('bottom', 9);
        labels += `<text x="${px(p.x(t.x))}" y="${px(p.y(t.y) + dy)}">${massLabel(lv.mass)}</text>`;
      }
    });
  }
  s += '</g>';
  if (labels) s += `<g font-size="9" text-anchor="middle" fill="${COLOURS.blue}">${labels}</g>`;
  // the true value over everything else
  if (truthX !== undefined && truthY !== undefined) s += `<g clip-path="url(#${clip})">${symbols([{ x: p.x(r4(truthX)), y: p.y(r4(truthY)) }], { shape: 'cross', size: 70, fill: COLOURS.vermillion })}</g>`;
  return s;
}
