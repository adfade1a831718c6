/**
 * The spectral energy distribution of one object: observed photometry with error bars,
 * upper limits as downward arrows at their n-sigma value, the model SED and model photometry,
 * observed spectra with an error band and shaded masked ranges, and a residual panel
 * (data minus model over error) below. Flux density in microjansky or AB magnitude.
 *
 * The figure is written straight to SVG from one chart model (`sedModel`: scales, series and
 * legend in plain data) by `sedSvg`, in Node for the prerendered pages and in the browser for
 * the viewer, so both draw the same figure. Its layout is fixed: a 560 x 280 px panel over a
 * 560 x 100 px residual panel, whatever the data.
 */
import type { ObjectContent, PhotPoint } from '../pipeline/content.ts';
import { COLOURS } from './theme.ts';
import { axis } from './svg/axis.ts';
import { clipRect, idPrefix, legend, panelFrame, rules, svgRoot, symbols, titleBlock, type LegendEntry } from './svg/figure.ts';
import { positionScale, type PositionScale } from './svg/scale.ts';
import { areaPath, linePath, px, symbolPath, textWidth } from './svg/write.ts';

export type SedUnits = 'flux' | 'mag';

export interface SedOptions {
  units: SedUnits;
  width?: number;
  /** Significance of limits made from non-positive forced fluxes in magnitude mode. */
  limitNsigma?: number;
}

/** AB magnitude of a flux density in microjansky (Oke and Gunn 1983): m = 23.9 - 2.5 log10(f). */
export function abMagFromUJy(fUJy: number): number {
  return 23.9 - 2.5 * Math.log10(fUJy);
}

/** Plotted values are rounded to 1e-4 (microjansky or magnitudes); a flux that rounds to zero is not drawn on the log axis. */
const r4 = (x: number): number => Math.round(x * 1e4) / 1e4;

interface PlotPoint {
  band: string;
  wl: number;
  y: number;
  lo: number;
  hi: number;
}

interface LimitPoint {
  band: string;
  wl: number;
  y: number;
  /** Where the arrow ends (fainter). */
  tip: number;
  nsigma: number;
}

/** Split photometry into measurements and limits in the chosen units. */
export function sedPoints(phot: PhotPoint[], units: SedUnits, limitNsigma = 3): { meas: PlotPoint[]; limits: LimitPoint[]; model: { band: string; wl: number; y: number }[] } {
  const meas: PlotPoint[] = [];
  const limits: LimitPoint[] = [];
  const model: { band: string; wl: number; y: number }[] = [];
  const rv = r4;
  for (const p of phot) {
    if (!(p.wavelengthUm > 0)) continue;
    if (p.modelUJy !== null && p.modelUJy > 0) model.push({ band: p.label, wl: p.wavelengthUm, y: rv(units === 'mag' ? abMagFromUJy(p.modelUJy) : p.modelUJy) });
    let limit: { value: number; n: number } | null = null;
    if (p.upperLimit) limit = { value: p.limitUJy ?? (p.limitNsigma ?? limitNsigma) * p.errUJy, n: p.limitNsigma ?? limitNsigma };
    else if (units === 'mag' && !(p.fluxUJy > 0)) limit = { value: limitNsigma * p.errUJy, n: limitNsigma };
    if (limit) {
      if (!(limit.value > 0)) continue;
      if (units === 'mag') {
        const m = abMagFromUJy(limit.value);
        limits.push({ band: p.label, wl: p.wavelengthUm, y: r4(m), tip: r4(m + 0.75), nsigma: limit.n });
      } else {
        limits.push({ band: p.label, wl: p.wavelengthUm, y: rv(limit.value), tip: rv(limit.value / 2.5), nsigma: limit.n });
      }
      continue;
    }
    if (!Number.isFinite(p.fluxUJy) || !Number.isFinite(p.errUJy)) continue;
    if (units === 'mag') {
      const m = abMagFromUJy(p.fluxUJy);
      const bright = abMagFromUJy(p.fluxUJy + p.errUJy);
      // a bar whose faint end passes zero flux is drawn to 2.5 mag below the point
      const faint = p.fluxUJy - p.errUJy > 0 ? abMagFromUJy(p.fluxUJy - p.errUJy) : m + 2.5;
      meas.push({ band: p.label, wl: p.wavelengthUm, y: r4(m), lo: r4(bright), hi: r4(faint) });
    } else {
      meas.push({ band: p.label, wl: p.wavelengthUm, y: rv(p.fluxUJy), lo: rv(p.fluxUJy - p.errUJy), hi: rv(p.fluxUJy + p.errUJy) });
    }
  }
  return { meas, limits, model };
}

/** Contiguous masked ranges of a spectrum, as wavelength intervals. */
export function maskedRanges(wl: number[], mask: boolean[]): [number, number][] {
  const out: [number, number][] = [];
  let start = -1;
  for (let i = 0; i <= wl.length; i++) {
    const m = i < wl.length && mask[i];
    if (m && start < 0) start = i;
    if (!m && start >= 0) {
      const lo = start > 0 ? (wl[start - 1] + wl[start]) / 2 : wl[start];
      const hi = i < wl.length ? (wl[i - 1] + wl[i]) / 2 : wl[i - 1];
      out.push([r4(lo), r4(hi)]);
      start = -1;
    }
  }
  return out;
}

function extent(values: number[]): [number, number] {
  let lo = Infinity;
  let hi = -Infinity;
  for (const v of values) {
    if (!Number.isFinite(v)) continue;
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  return [lo, hi];
}


/** One series of the legend, in drawing order. */
export const SED_SERIES = ['observed', 'flux ≤ 0 (on axis floor)', 'upper limit', 'model SED', 'model photometry', 'spectrum'] as const;
export type SedSeries = (typeof SED_SERIES)[number];
/** Each series' legend glyph: the mark itself, drawn in a 20 x 14 box centred on (10, 7). */
const GLYPH: Record<SedSeries, string> = {
  observed: `<path d="M10,1V13" stroke="${COLOURS.ink}" stroke-width="1.2"/><path d="${symbolPath('circle', 10, 7, 36)}" fill="${COLOURS.ink}"/>`,
  'flux ≤ 0 (on axis floor)': `<path d="${symbolPath('circle', 10, 7, 40)}" stroke="${COLOURS.ink}" stroke-width="1.5"/>`,
  'upper limit': `<path d="M4,3h12" stroke="${COLOURS.ink}" stroke-width="1.5"/><path d="M10,3V9" stroke="${COLOURS.ink}" stroke-width="1.2"/><path d="${symbolPath('triangle-down', 10, 10, 50)}" fill="${COLOURS.ink}"/>`,
  'model SED': `<path d="M1,7h18" stroke="${COLOURS.blue}" stroke-width="1.5"/>`,
  'model photometry': `<path d="${symbolPath('square', 10, 7, 60)}" stroke="${COLOURS.vermillion}" stroke-width="1.5" stroke-opacity="0.7"/>`,
  spectrum: `<path d="M1,4h18v6h-18z" fill="${COLOURS.green}" opacity="0.25"/><path d="M1,8l4-2,3,3,4-4,3,2,4-1" stroke="${COLOURS.green}"/>`,
};

/** Everything the SED figure draws, in data units: the chart model shared by Node and the browser. */
export interface SedModel {
  id: string;
  units: SedUnits;
  width: number;
  xDomain: [number, number];
  /** Flux: log scale, [low, high]; magnitudes: linear, [faint, bright]. */
  yDomain: [number, number];
  masks: { lo: number; hi: number }[];
  spectra: { instrument: string; points: { wl: number; y: number; lo: number; hi: number }[] }[];
  sedLine: { wl: number; y: number }[];
  modelPhot: { wl: number; y: number }[];
  meas: PlotPoint[];
  /** Non-positive forced fluxes (flux mode): drawn on the axis floor. */
  floor: PlotPoint[];
  limits: LimitPoint[];
  resid: { wl: number; y: number }[];
  rDomain: [number, number];
  legend: SedSeries[];
  title: string;
  subtitle: string;
  description: string;
}

export function sedModel(obj: ObjectContent, opts: SedOptions): SedModel {
  const units = opts.units;
  const mag = units === 'mag';
  const { meas, limits, model } = sedPoints(obj.photometry, units, opts.limitNsigma ?? 3);
  const positive = (v: number) => (mag ? Number.isFinite(v) : v > 0);
  const conv = (f: number) => (mag ? (f > 0 ? abMagFromUJy(f) : NaN) : f);
  const rv = r4;

  const sedLine: { wl: number; y: number }[] = [];
  if (obj.model) {
    const shift = obj.model.frame === 'rest' ? 1 + obj.redshift : 1;
    for (let i = 0; i < obj.model.wavelengthUm.length; i++) {
      const y = conv(obj.model.fluxUJy[i]);
      if (positive(y) && obj.model.wavelengthUm[i] > 0) sedLine.push({ wl: r4(obj.model.wavelengthUm[i] * shift), y: rv(y) });
    }
  }
  const spectra: SedModel['spectra'] = [];
  const masks: SedModel['masks'] = [];
  for (const s of obj.spectra) {
    const points: SedModel['spectra'][number]['points'] = [];
    for (let i = 0; i < s.wavelengthUm.length; i++) {
      if (s.mask[i]) continue;
      const f = s.fluxUJy[i];
      const e = s.errUJy[i];
      const y = conv(f);
      if (!positive(y)) continue;
      const a = conv(f + e);
      const b = f - e > 0 ? conv(f - e) : mag ? y + 2.5 : f / 10;
      points.push({ wl: r4(s.wavelengthUm[i]), y: rv(y), lo: rv(Math.min(a, b)), hi: rv(Math.max(a, b)) });
    }
    if (points.length) spectra.push({ instrument: s.instrument, points });
    for (const [lo, hi] of maskedRanges(s.wavelengthUm, s.mask)) masks.push({ lo, hi });
  }
  const spec = spectra.flatMap((s) => s.points);

  // axis domains from everything drawn (so the log axis never meets a non-positive value)
  const allWl = [...meas.map((p) => p.wl), ...limits.map((p) => p.wl), ...sedLine.map((p) => p.wl), ...spec.map((p) => p.wl)];
  const [wlMin, wlMax] = extent(allWl);
  const xDomain: [number, number] = Number.isFinite(wlMin) ? [r4(wlMin / 1.15), r4(wlMax * 1.15)] : [0.1, 10];
  const ys = [...meas.map((p) => p.y), ...limits.map((p) => p.y), ...model.map((p) => p.y), ...spec.map((p) => p.y)];
  if (mag) ys.push(...meas.map((p) => p.lo), ...meas.map((p) => p.hi), ...limits.map((p) => p.tip));
  else ys.push(...meas.map((p) => p.hi), ...limits.map((p) => p.tip), ...meas.filter((p) => p.lo > 0).map((p) => p.lo));
  const [yMin0, yMax0] = extent(ys.filter((v) => (mag ? Number.isFinite(v) : v > 0)));
  // the SED line is limited to the photometric range to keep the axis readable
  const yMin = Number.isFinite(yMin0) ? yMin0 : mag ? 20 : 0.1;
  const yMax = Number.isFinite(yMax0) ? yMax0 : mag ? 30 : 100;
  const yDomain: [number, number] = mag ? [r4(yMax + 0.3), r4(yMin - 0.3)] : [r4(yMin / 1.6), r4(yMax * 1.6)];
  // flux mode: a non-positive forced flux cannot sit on a log axis; it is drawn as an open
  // circle on the axis floor with its error bar, and says so in the legend
  const floor = mag ? [] : meas.filter((p) => !(p.y > 0)).map((p) => ({ ...p, y: yDomain[0], lo: yDomain[0], hi: Math.max(p.hi, yDomain[0]) }));
  const shown = mag ? meas : meas.filter((p) => p.y > 0).map((p) => (p.lo <= 0 ? { ...p, lo: yDomain[0] } : p));
  const lines = sedLine.filter((p) => (mag ? p.y <= yDomain[0] && p.y >= yDomain[1] : p.y >= yDomain[0] && p.y <= yDomain[1]));

  const resid = obj.photometry
    .filter((p) => p.residualSigma !== null && Number.isFinite(p.residualSigma) && p.wavelengthUm > 0)
    .map((p) => ({ wl: p.wavelengthUm, y: r4(p.residualSigma as number) }));
  const rMax = Math.max(3, ...resid.map((p) => Math.abs(p.y)));
  const rDomain: [number, number] = [-Math.ceil(rMax + 0.5), Math.ceil(rMax + 0.5)];

  const present = new Set<SedSeries>();
  if (shown.length) present.add('observed');
  if (floor.length) present.add('flux ≤ 0 (on axis floor)');
  if (limits.length) present.add('upper limit');
  if (lines.length) present.add('model SED');
  if (model.length) present.add('model photometry');
  if (spec.length) present.add('spectrum');

  const nLim = limits.length;
  const description =
    `Spectral energy distribution of ${obj.id} at redshift ${obj.redshift}: ${shown.length + floor.length} photometric measurements` +
    (nLim ? `, ${nLim} upper limit${nLim > 1 ? 's' : ''} drawn as downward arrows` : '') +
    (lines.length ? ', the best-fitting model SED' : '') +
    (spec.length ? `, ${obj.spectra.length} observed spectrum${obj.spectra.length > 1 ? 'a' : ''}` : '') +
    `, in ${mag ? 'AB magnitudes' : 'microjansky'} against observed wavelength; the lower panel shows residuals in units of the measurement error.`;
  return {
    id: obj.id,
    units,
    width: opts.width ?? 560,
    xDomain,
    yDomain,
    masks,
    spectra,
    sedLine: lines,
    modelPhot: model,
    meas: shown,
    floor,
    limits,
    resid,
    rDomain,
    legend: SED_SERIES.filter((s) => present.has(s)),
    title: `SED of ${obj.id}`,
    subtitle: mag ? 'AB magnitude' : 'flux density',
    description,
  };
}

// ---- layout (fixed) -------------------------------------------------------------------------

const PAD = 5;
const MAIN_H = 280;
const RESID_H = 100;
/** Between the main panel and the residual panel. */
const GAP = 8;

/** The SED figure as SVG (see `sedModel`). */
export function sedSvg(m: SedModel): string {
  const W = m.width;
  const mag = m.units === 'mag';
  const xs = positionScale('log', m.xDomain, [0, W]);
  const ys: PositionScale = positionScale(mag ? 'linear' : 'log', m.yDomain, [MAIN_H, 0]);
  const rs = positionScale('linear', m.rDomain, [RESID_H, 0]);
  const yAxis = axis({ orient: 'left', scale: ys, tickCount: 6, title: mag ? 'AB magnitude' : 'Flux density (µJy)', grid: W, labelOverlap: mag ? 'parity' : 'greedy' });
  const rAxis = axis({ orient: 'left', scale: rs, tickCount: 5, title: 'Residual / error', labelOverlap: 'parity' });
  const xAxis = axis({ orient: 'bottom', height: RESID_H, scale: xs, tickCount: 6, title: 'Observed wavelength (µm)', labelOverlap: 'greedy' });
  const left = Math.ceil(Math.max(yAxis.extent, rAxis.extent)) + PAD;
  const head = titleBlock(m.title, m.subtitle);
  const key = legend(m.legend.map((s): LegendEntry => ({ label: s, glyph: GLYPH[s] })), W);
  const legendTop = PAD + head.height + 3;
  const mainTop = m.legend.length ? legendTop + key.height + 19 : PAD + head.height + 8;
  const residTop = mainTop + MAIN_H + GAP;
  const height = residTop + RESID_H + Math.ceil(xAxis.extent) + PAD;
  const lastLabel = xAxis.ticks.filter((t) => t.label).map((t) => xs(t.value) + 0.5 + textWidth(t.label, 11) / 2);
  const width = left + Math.ceil(Math.max(W + 0.5, key.width, ...lastLabel)) + PAD;
  const clip = idPrefix(mag ? 'sm' : 'sf', m.id);
  const X = (wl: number) => xs(wl);
  const Y = (v: number) => ys(v);

  // main panel, in the order of drawing
  let main = panelFrame(W, MAIN_H) + yAxis.grid + yAxis.svg;
  let clipped = '';
  for (const r of m.masks) {
    const x1 = X(r.lo), x2 = X(r.hi);
    clipped += `<path d="M${px(x1)},0h${px(x2 - x1)}v${MAIN_H}h${px(x1 - x2)}Z" fill="${COLOURS.shade}" opacity="0.5"/>`;
  }
  for (const s of m.spectra)
    clipped += `<path d="${areaPath(s.points.map((p) => X(p.wl)), s.points.map((p) => Y(p.hi)), s.points.map((p) => Y(p.lo)))}" fill="${COLOURS.green}" opacity="0.25"/>`;
  for (const s of m.spectra)
    clipped += `<path d="${linePath(s.points.map((p) => X(p.wl)), s.points.map((p) => Y(p.y)))}" stroke="${COLOURS.green}"/>`;
  if (m.sedLine.length) clipped += `<path d="${linePath(m.sedLine.map((p) => X(p.wl)), m.sedLine.map((p) => Y(p.y)))}" stroke="${COLOURS.blue}" stroke-width="1.5"/>`;
  clipped += symbols(m.modelPhot.map((p) => ({ x: X(p.wl), y: Y(p.y) })), { shape: 'square', size: 60, stroke: COLOURS.vermillion, strokeWidth: 1.5, opacity: 0.7 });
  clipped += rules(m.meas.map((p) => ({ x: X(p.wl), y1: Y(p.lo), y2: Y(p.hi) })), COLOURS.ink, 1.2);
  clipped += symbols(m.meas.map((p) => ({ x: X(p.wl), y: Y(p.y) })), { shape: 'circle', size: 36, fill: COLOURS.ink });
  clipped += rules(m.floor.map((p) => ({ x: X(p.wl), y1: Y(p.lo), y2: Y(p.hi) })), COLOURS.ink, 1.2);
  clipped += rules(m.limits.map((p) => ({ x: X(p.wl), y1: Y(p.y), y2: Y(p.tip) })), COLOURS.ink, 1.2);
  clipped += symbols(m.limits.map((p) => ({ x: X(p.wl), y: Y(p.tip) })), { shape: 'triangle-down', size: 50, fill: COLOURS.ink });
  if (m.limits.length) {
    let d = '';
    for (const p of m.limits) d += `M${px(X(p.wl) - 6)},${px(Y(p.y) - 0.75)}h12v1.5h-12Z`;
    clipped += `<path d="${d}" fill="${COLOURS.ink}" opacity="0.7"/>`;
  }
  main += `<g clip-path="url(#${clip}-m)">${clipped}</g>`;
  // the floor markers straddle the bottom edge, unclipped
  main += symbols(m.floor.map((p) => ({ x: X(p.wl), y: Y(p.y) })), { shape: 'circle', size: 40, stroke: COLOURS.ink, strokeWidth: 1.5 });

  let resid = panelFrame(W, RESID_H) + rAxis.svg + xAxis.svg;
  resid += `<path d="M0,${px(rs(0))}h${W}" stroke="${COLOURS.muted}"/>`;
  resid += `<path d="M0,${px(rs(-3))}h${W}M0,${px(rs(3))}h${W}" stroke="${COLOURS.grid}" stroke-dasharray="4,3"/>`;
  resid += `<g clip-path="url(#${clip}-r)">${symbols(m.resid.map((p) => ({ x: X(p.wl), y: rs(p.y) })), { shape: 'circle', size: 30, fill: COLOURS.ink })}</g>`;

  const body =
    `<defs>${clipRect(`${clip}-m`, W, MAIN_H)}${clipRect(`${clip}-r`, W, RESID_H)}</defs>` +
    `<g transform="translate(${PAD},${PAD})">${head.svg}</g>` +
    (m.legend.length ? `<g transform="translate(${left},${legendTop})">${key.svg}</g>` : '') +
    `<g transform="translate(${left},${mainTop})">${main}</g>` +
    `<g transform="translate(${left},${residTop})">${resid}</g>`;
  return svgRoot(width, height, m.title, m.description, body);
}
