/**
 * Corner plot of one object's posterior: a k x k lower-triangular grid with the 1-D
 * marginals (weighted histogram as a step line, KDE as a smooth line, median and 68%
 * interval as rules) on the diagonal and the 2-D marginals below it as contour paths that
 * enclose 68% and 95% of the posterior mass, each labelled by that mass, over a light scatter
 * of equal-weight draws. The true value is marked only when the content carries one (mocks).
 *
 * Contours arrive as polylines from the pipeline, so a panel is a few paths, not a grid of
 * density cells (cells cost about 20 times the render time and 100 times the bytes).
 */
import type { TopLevelSpec } from 'vega-lite';
import type { Contour2d, Marginal, ObjectContent, ParamRow } from '../pipeline/content.ts';
import { baseConfig, COLOURS, SCHEMA } from './theme.ts';

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

export function cornerSpec(obj: ObjectContent, opts: CornerOptions = {}): TopLevelSpec {
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

  const panels: Record<string, unknown>[] = [];
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < k; j++) {
      const xn = names[j];
      const yn = names[i];
      const bottom = i === k - 1;
      const left = j === 0;
      const xEnc = {
        field: 'x',
        type: 'quantitative',
        scale: { domain: domains.get(xn), nice: false, zero: false },
        axis: bottom ? { title: labelOf(xn), tickCount: 4, grid: false, labelFontSize: 10, labelOverlap: true, labelFlush: true } : null,
      };
      if (j > i) {
        panels.push(j === k - 1 && i === 0 ? annotationPanel(cell, k, levels, hasTruth) : emptyPanel(cell));
        continue;
      }
      if (i === j) {
        panels.push(marginalPanel(cell, xEnc, margByName.get(xn) as Marginal, rows.get(xn), `truth_${i}`));
        continue;
      }
      const c = obj.contours.find((cc) => (cc.x === xn && cc.y === yn) || (cc.x === yn && cc.y === xn));
      const yEnc = {
        field: 'y',
        type: 'quantitative',
        scale: { domain: domains.get(yn), nice: false, zero: false },
        axis: left ? { title: labelOf(yn), tickCount: 4, grid: false, labelFontSize: 10, labelOverlap: true, labelFlush: true } : null,
      };
      panels.push(contourPanel(cell, xEnc, yEnc, c, c ? c.x !== xn : false, rows.get(xn)?.truth, rows.get(yn)?.truth, maxPoints, `truth_${i}_${j}`));
    }
  }
  const levelText = levels.map(massLabel).join(' and ') || '68% and 95%';
  return {
    $schema: SCHEMA,
    title: { text: `Posterior of ${obj.id}` },
    description:
      `Corner plot of the posterior of ${obj.id} over ${k} parameters (${names.map(labelOf).join(', ')}): ` +
      `one-dimensional marginal distributions on the diagonal and, below it, two-dimensional contours enclosing ${levelText} of the posterior mass` +
      (hasTruth ? '; the true value of this mock object is marked.' : '.'),
    config: { ...baseConfig(), concat: { spacing: 6 } },
    columns: Math.max(k, 1),
    bounds: 'flush',
    concat: panels.length ? panels : [emptyPanel(cell)],
    spacing: 8,
  } as unknown as TopLevelSpec;
}

function emptyPanel(cell: number): Record<string, unknown> {
  return { width: cell, height: cell, view: { stroke: null }, data: { values: [{}] }, mark: { type: 'point', opacity: 0 } };
}

function annotationPanel(cell: number, k: number, levels: number[], hasTruth: boolean): Record<string, unknown> {
  const lines = [
    'Contours enclose',
    `${(levels.length ? levels : [0.68, 0.95]).map(massLabel).join(' and ')} of the`,
    'posterior mass.',
    'Dashed rules: median',
    'and 68% interval.',
    ...(hasTruth ? ['Red: true value.'] : []),
  ];
  return {
    width: cell,
    height: cell,
    view: { stroke: null },
    data: { values: lines.map((t, n) => ({ t, n })) },
    mark: { type: 'text', align: 'left', baseline: 'top', fontSize: 10, color: COLOURS.ink, x: 0, limit: 0 },
    encoding: {
      y: { field: 'n', type: 'ordinal', axis: null, scale: { domain: lines.map((_, n) => n), range: [0, Math.min(cell, 16 * lines.length)] } },
      text: { field: 't' },
    },
  };
}

function marginalPanel(cell: number, xEnc: Record<string, unknown>, m: Marginal, row: ParamRow | undefined, truthName: string): Record<string, unknown> {
  const hist: { x: number; d: number }[] = [];
  for (let b = 0; b < m.density.length; b++) hist.push({ x: r4(m.edges[b]), d: r4(m.density[b]) });
  if (m.density.length) hist.push({ x: r4(m.edges[m.density.length]), d: r4(m.density[m.density.length - 1]) });
  const kde = m.kdeX.map((x, n) => ({ x: r4(x), d: r4(m.kdeY[n]) }));
  const dMax = Math.max(1e-300, ...m.density, ...m.kdeY);
  const yEnc = { field: 'd', type: 'quantitative', scale: { domain: [0, dMax * 1.08], nice: false }, axis: null };
  const layers: Record<string, unknown>[] = [
    { data: { values: hist }, mark: { type: 'line', interpolate: 'step-after', color: COLOURS.muted, strokeWidth: 1, clip: true }, encoding: { x: xEnc, y: yEnc } },
  ];
  if (kde.length) layers.push({ data: { values: kde }, mark: { type: 'line', color: COLOURS.blue, strokeWidth: 1.5, clip: true }, encoding: { x: xEnc, y: yEnc } });
  if (row) {
    layers.push({
      data: { values: [{ x: row.p16, q: 'p16' }, { x: row.p50, q: 'p50' }, { x: row.p84, q: 'p84' }].map((v) => ({ ...v, x: r4(v.x) })) },
      mark: { type: 'rule', color: COLOURS.ink, strokeWidth: 1, strokeDash: [3, 2], clip: true },
      encoding: { x: xEnc },
    });
    if (row.truth !== undefined) {
      layers.push({ name: truthName, data: { values: [{ x: r4(row.truth) }] }, mark: { type: 'rule', color: COLOURS.vermillion, strokeWidth: 1.5, clip: true }, encoding: { x: xEnc } });
    }
  }
  return {
    width: cell,
    height: cell,
    title: row ? { text: [row.label, formatInterval(row)], fontSize: 10, anchor: 'middle', limit: 0, offset: 3 } : undefined,
    layer: layers,
  };
}

function contourPanel(
  cell: number,
  xEnc: Record<string, unknown>,
  yEnc: Record<string, unknown>,
  c: Contour2d | undefined,
  swap: boolean,
  truthX: number | undefined,
  truthY: number | undefined,
  maxPoints: number,
  truthName: string,
): Record<string, unknown> {
  const layers: Record<string, unknown>[] = [];
  if (c && c.points.length) {
    const step = Math.max(1, Math.ceil(c.points.length / maxPoints));
    const pts: { x: number; y: number }[] = [];
    for (let n = 0; n < c.points.length; n += step) {
      const p = c.points[n];
      pts.push(swap ? { x: r4(p[1]), y: r4(p[0]) } : { x: r4(p[0]), y: r4(p[1]) });
    }
    layers.push({ data: { values: pts }, mark: { type: 'point', shape: 'circle', size: 5, filled: true, color: COLOURS.muted, opacity: 0.45, clip: true }, encoding: { x: xEnc, y: yEnc } });
  }
  const lines: { x: number; y: number; level: string; path: string; i: number }[] = [];
  const labels: { x: number; y: number; level: string; below: boolean }[] = [];
  if (c) {
    const sorted = [...c.levels].sort((a, b) => a.mass - b.mass);
    for (const lv of sorted) {
      const label = massLabel(lv.mass);
      // the innermost level is labelled below its lowest point, the others above their highest
      const below = lv === sorted[0] && sorted.length > 1;
      let top: { x: number; y: number } | null = null;
      lv.paths.forEach((path, pi) => {
        path.forEach((pt, i) => {
          const x = r4(swap ? pt[1] : pt[0]);
          const y = r4(swap ? pt[0] : pt[1]);
          lines.push({ x, y, level: label, path: `${label}-${pi}`, i });
          if (!top || (below ? y < top.y : y > top.y)) top = { x, y };
        });
      });
      if (top) labels.push({ ...(top as { x: number; y: number }), level: label, below });
    }
  }
  if (lines.length) {
    const domain = [...new Set(lines.map((l) => l.level))];
    layers.push({
      data: { values: lines },
      mark: { type: 'line', color: COLOURS.blue, clip: true },
      encoding: {
        x: xEnc,
        y: yEnc,
        detail: { field: 'path' },
        order: { field: 'i', type: 'quantitative' },
        strokeDash: { field: 'level', type: 'nominal', scale: { domain, range: domain.map((_, n) => (n === 0 ? [1, 0] : [4, 2])) }, legend: null },
        strokeWidth: { field: 'level', type: 'ordinal', scale: { domain, range: domain.map((_, n) => (n === 0 ? 1.6 : 1.1)) }, legend: null },
      },
    });
    for (const below of [false, true]) {
      const vals = labels.filter((l) => l.below === below).map(({ x, y, level }) => ({ x, y, level }));
      if (!vals.length) continue;
      layers.push({
        data: { values: vals },
        mark: { type: 'text', fontSize: 9, baseline: below ? 'top' : 'bottom', dy: below ? 1 : -1, color: COLOURS.blue },
        encoding: { x: xEnc, y: yEnc, text: { field: 'level' } },
      });
    }
  }
  if (truthX !== undefined && truthY !== undefined) {
    layers.push({
      name: truthName,
      data: { values: [{ x: r4(truthX), y: r4(truthY) }] },
      mark: { type: 'point', shape: 'cross', size: 70, filled: true, color: COLOURS.vermillion, opacity: 1, clip: true },
      encoding: { x: xEnc, y: yEnc },
    });
  }
  if (!layers.length) layers.push({ data: { values: [{ x: 0, y: 0 }] }, mark: { type: 'point', opacity: 0 }, encoding: { x: xEnc, y: yEnc } });
  return { width: cell, height: cell, layer: layers };
}
