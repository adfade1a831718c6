/**
 * The spectral energy distribution of one object: observed photometry with error bars,
 * upper limits as downward arrows at their n-sigma value, the model SED and model photometry,
 * observed spectra with an error band and shaded masked ranges, and a residual panel
 * (data minus model over error) below. Flux density in microjansky or AB magnitude.
 */
import type { TopLevelSpec } from 'vega-lite';
import type { ObjectContent, PhotPoint } from '../pipeline/content.ts';
import { baseConfig, COLOURS, SCHEMA } from './theme.ts';

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
  for (const p of phot) {
    if (!(p.wavelengthUm > 0)) continue;
    if (p.modelUJy !== null && p.modelUJy > 0) model.push({ band: p.label, wl: p.wavelengthUm, y: r4(units === 'mag' ? abMagFromUJy(p.modelUJy) : p.modelUJy) });
    let limit: { value: number; n: number } | null = null;
    if (p.upperLimit) limit = { value: p.limitUJy ?? (p.limitNsigma ?? limitNsigma) * p.errUJy, n: p.limitNsigma ?? limitNsigma };
    else if (units === 'mag' && !(p.fluxUJy > 0)) limit = { value: limitNsigma * p.errUJy, n: limitNsigma };
    if (limit) {
      if (!(limit.value > 0)) continue;
      if (units === 'mag') {
        const m = abMagFromUJy(limit.value);
        limits.push({ band: p.label, wl: p.wavelengthUm, y: r4(m), tip: r4(m + 0.75), nsigma: limit.n });
      } else {
        limits.push({ band: p.label, wl: p.wavelengthUm, y: r4(limit.value), tip: r4(limit.value / 2.5), nsigma: limit.n });
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
      meas.push({ band: p.label, wl: p.wavelengthUm, y: r4(p.fluxUJy), lo: r4(p.fluxUJy - p.errUJy), hi: r4(p.fluxUJy + p.errUJy) });
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

export function sedSpec(obj: ObjectContent, opts: SedOptions): TopLevelSpec {
  const units = opts.units;
  const width = opts.width ?? 560;
  const mag = units === 'mag';
  const { meas, limits, model } = sedPoints(obj.photometry, units, opts.limitNsigma ?? 3);
  const positive = (v: number) => (mag ? Number.isFinite(v) : v > 0);
  const conv = (f: number) => (mag ? (f > 0 ? abMagFromUJy(f) : NaN) : f);

  const sedLine: { wl: number; y: number }[] = [];
  if (obj.model) {
    const shift = obj.model.frame === 'rest' ? 1 + obj.redshift : 1;
    for (let i = 0; i < obj.model.wavelengthUm.length; i++) {
      const y = conv(obj.model.fluxUJy[i]);
      if (positive(y) && obj.model.wavelengthUm[i] > 0) sedLine.push({ wl: r4(obj.model.wavelengthUm[i] * shift), y: r4(y) });
    }
  }
  const spec: { wl: number; y: number; lo: number; hi: number; instrument: string }[] = [];
  const masks: { lo: number; hi: number; instrument: string }[] = [];
  for (const s of obj.spectra) {
    for (let i = 0; i < s.wavelengthUm.length; i++) {
      if (s.mask[i]) continue;
      const f = s.fluxUJy[i];
      const e = s.errUJy[i];
      const y = conv(f);
      if (!positive(y)) continue;
      const a = conv(f + e);
      const b = f - e > 0 ? conv(f - e) : mag ? y + 2.5 : f / 10;
      spec.push({ wl: r4(s.wavelengthUm[i]), y: r4(y), lo: r4(Math.min(a, b)), hi: r4(Math.max(a, b)), instrument: s.instrument });
    }
    for (const [lo, hi] of maskedRanges(s.wavelengthUm, s.mask)) masks.push({ lo, hi, instrument: s.instrument });
  }

  // Axis domains from everything drawn (so the log axis never meets a non-positive value).
  const allWl = [...meas.map((p) => p.wl), ...limits.map((p) => p.wl), ...sedLine.map((p) => p.wl), ...spec.map((p) => p.wl)];
  const [wlMin, wlMax] = extent(allWl);
  const xDomain: [number, number] = Number.isFinite(wlMin) ? [r4(wlMin / 1.15), r4(wlMax * 1.15)] : [0.1, 10];
  const ys = [...meas.map((p) => p.y), ...limits.map((p) => p.y), ...model.map((p) => p.y), ...spec.map((p) => p.y)];
  if (mag) ys.push(...meas.map((p) => p.lo), ...meas.map((p) => p.hi), ...limits.map((p) => p.tip));
  else ys.push(...meas.map((p) => p.hi), ...limits.map((p) => p.tip), ...meas.filter((p) => p.lo > 0).map((p) => p.lo));
  const [yMin0, yMax0] = extent(ys.filter((v) => (mag ? Number.isFinite(v) : v > 0)));
  // SED line limited to the photometric range to keep the axis readable
  const yMin = Number.isFinite(yMin0) ? yMin0 : mag ? 20 : 0.1;
  const yMax = Number.isFinite(yMax0) ? yMax0 : mag ? 30 : 100;
  const yDomain: [number, number] = mag ? [r4(yMax + 0.3), r4(yMin - 0.3)] : [r4(yMin / 1.6), r4(yMax * 1.6)];
  // Flux mode: a non-positive forced flux cannot sit on a log axis; it is drawn as an open
  // circle on the axis floor with its error bar, and says so in the legend.
  const floor = mag ? [] : meas.filter((p) => !(p.y > 0)).map((p) => ({ ...p, y: yDomain[0], lo: yDomain[0], hi: Math.max(p.hi, yDomain[0]) }));
  if (!mag) {
    for (let i = meas.length - 1; i >= 0; i--) if (!(meas[i].y > 0)) meas.splice(i, 1);
    for (const p of meas) if (p.lo <= 0) p.lo = yDomain[0];
  }
  const lines = sedLine.filter((p) => (mag ? p.y <= yDomain[0] && p.y >= yDomain[1] : p.y >= yDomain[0] && p.y <= yDomain[1]));

  const x = {
    field: 'wl',
    type: 'quantitative',
    scale: { type: 'log', domain: xDomain, nice: false },
    axis: { title: 'Observed wavelength (µm)', grid: false, tickCount: 6 },
  };
  const yTitle = mag ? 'AB magnitude' : 'Flux density (µJy)';
  const y = {
    field: 'y',
    type: 'quantitative',
    scale: mag ? { domain: yDomain, nice: false, zero: false } : { type: 'log', domain: yDomain, nice: false },
    axis: { title: yTitle, grid: true, tickCount: 6 },
  };
  const yRange = (f: string) => ({ field: f, type: 'quantitative', scale: y.scale });

  const SERIES_DOMAIN = ['observed', 'flux ≤ 0 (on axis floor)', 'upper limit', 'model SED', 'model photometry', 'spectrum'];
  const SERIES_RANGE = [COLOURS.ink, COLOURS.ink, COLOURS.ink, COLOURS.blue, COLOURS.vermillion, COLOURS.green];
  const present = new Set<string>();
  if (meas.length) present.add('observed');
  if (floor.length) present.add('flux ≤ 0 (on axis floor)');
  if (limits.length) present.add('upper limit');
  if (lines.length) present.add('model SED');
  if (model.length) present.add('model photometry');
  if (spec.length) present.add('spectrum');
  const domain = SERIES_DOMAIN.filter((d) => present.has(d));
  const range = SERIES_DOMAIN.map((d, i) => (present.has(d) ? SERIES_RANGE[i] : null)).filter((c) => c !== null) as string[];
  const colour = (series: string) => ({
    datum: series,
    type: 'nominal',
    scale: { domain, range },
    legend: { title: null, orient: 'top', direction: 'horizontal', columnPadding: 14, labelLimit: 0 },
  });

  const layers: Record<string, unknown>[] = [];
  if (masks.length) {
    layers.push({
      data: { values: masks },
      mark: { type: 'rect', color: COLOURS.shade, opacity: 0.5 },
      encoding: { x: { field: 'lo', type: 'quantitative', scale: x.scale, axis: x.axis }, x2: { field: 'hi' } },
    });
  }
  if (spec.length) {
    layers.push({
      data: { values: spec },
      mark: { type: 'area', opacity: 0.25, color: COLOURS.green },
      encoding: { x, y: yRange('lo'), y2: { field: 'hi' }, detail: { field: 'instrument' } },
    });
    layers.push({
      data: { values: spec },
      mark: { type: 'line', strokeWidth: 1, clip: true },
      encoding: { x, y, detail: { field: 'instrument' }, color: colour('spectrum') },
    });
  }
  if (lines.length) {
    layers.push({
      data: { values: lines },
      mark: { type: 'line', strokeWidth: 1.5, clip: true },
      encoding: { x, y, color: colour('model SED') },
    });
  }
  if (model.length) {
    layers.push({
      data: { values: model },
      mark: { type: 'point', shape: 'square', size: 60, filled: false, strokeWidth: 1.5, clip: true },
      encoding: { x, y, color: colour('model photometry') },
    });
  }
  if (meas.length) {
    layers.push({
      data: { values: meas },
      mark: { type: 'rule', strokeWidth: 1.2, clip: true },
      encoding: { x, y: yRange('lo'), y2: { field: 'hi' }, color: colour('observed') },
    });
    layers.push({
      data: { values: meas },
      mark: { type: 'point', shape: 'circle', size: 36, filled: true, opacity: 1, clip: true },
      encoding: { x, y, color: colour('observed') },
    });
  }
  if (floor.length) {
    layers.push({
      data: { values: floor },
      mark: { type: 'rule', strokeWidth: 1.2, clip: true },
      encoding: { x, y: yRange('lo'), y2: { field: 'hi' }, color: colour('flux ≤ 0 (on axis floor)') },
    });
    layers.push({
      data: { values: floor },
      mark: { type: 'point', shape: 'circle', size: 40, filled: false, strokeWidth: 1.5, opacity: 1 },
      encoding: { x, y, color: colour('flux ≤ 0 (on axis floor)') },
    });
  }
  if (limits.length) {
    layers.push({
      data: { values: limits },
      mark: { type: 'rule', strokeWidth: 1.2, clip: true },
      encoding: { x, y, y2: { field: 'tip' }, color: colour('upper limit') },
    });
    layers.push({
      data: { values: limits },
      mark: { type: 'point', shape: 'triangle-down', size: 50, filled: true, opacity: 1, clip: true },
      encoding: { x, y: { ...yRange('tip') }, color: colour('upper limit') },
    });
    layers.push({
      data: { values: limits },
      mark: { type: 'tick', orient: 'horizontal', size: 12, thickness: 1.5, clip: true },
      encoding: { x, y, color: colour('upper limit') },
    });
  }
  if (layers.length === 0) {
    layers.push({ data: { values: [{ wl: 1, y: mag ? 25 : 1 }] }, mark: { type: 'point', opacity: 0 }, encoding: { x, y } });
  }

  const resid = obj.photometry
    .filter((p) => p.residualSigma !== null && Number.isFinite(p.residualSigma) && p.wavelengthUm > 0)
    .map((p) => ({ wl: p.wavelengthUm, y: r4(p.residualSigma as number), band: p.label }));
  const rMax = Math.max(3, ...resid.map((p) => Math.abs(p.y)));
  const rDomain: [number, number] = [-Math.ceil(rMax + 0.5), Math.ceil(rMax + 0.5)];
  const residPanel = {
    width,
    height: 100,
    layer: [
      { data: { values: [{ y: 0 }] }, mark: { type: 'rule', color: COLOURS.muted }, encoding: { y: { field: 'y', type: 'quantitative', scale: { domain: rDomain, nice: false } } } },
      { data: { values: [{ y: -3 }, { y: 3 }] }, mark: { type: 'rule', color: COLOURS.grid, strokeDash: [4, 3] }, encoding: { y: { field: 'y', type: 'quantitative' } } },
      ...(resid.length
        ? [
            {
              data: { values: resid },
              mark: { type: 'point', shape: 'circle', size: 30, filled: true, color: COLOURS.ink, opacity: 1, clip: true },
              encoding: {
                x: { ...x, axis: { ...x.axis } },
                y: { field: 'y', type: 'quantitative', scale: { domain: rDomain, nice: false }, axis: { title: 'Residual / error', grid: false, tickCount: 5 } },
              },
            },
          ]
        : [
            {
              data: { values: [{ wl: xDomain[0], y: 0 }] },
              mark: { type: 'point', opacity: 0 },
              encoding: { x, y: { field: 'y', type: 'quantitative', axis: { title: 'Residual / error' } } },
            },
          ]),
    ],
  };

  const nLim = limits.length;
  const description =
    `Spectral energy distribution of ${obj.id} at redshift ${obj.redshift}: ${meas.length + floor.length} photometric measurements` +
    (nLim ? `, ${nLim} upper limit${nLim > 1 ? 's' : ''} drawn as downward arrows` : '') +
    (lines.length ? ', the best-fitting model SED' : '') +
    (spec.length ? `, ${obj.spectra.length} observed spectrum${obj.spectra.length > 1 ? 'a' : ''}` : '') +
    `, in ${mag ? 'AB magnitudes' : 'microjansky'} against observed wavelength; the lower panel shows residuals in units of the measurement error.`;

  // the main panel hides its x axis: the residual panel below carries it
  const main = { width, height: 280, layer: layers.map((l) => ({ ...l, encoding: { ...(l.encoding as Record<string, unknown>), x: { ...((l.encoding as Record<string, Record<string, unknown>>).x ?? {}), axis: null } } })) };
  return {
    $schema: SCHEMA,
    title: { text: `SED of ${obj.id}`, subtitle: mag ? 'AB magnitude' : 'flux density' },
    description,
    config: baseConfig(),
    vconcat: [main, residPanel],
    spacing: 6,
    resolve: { scale: { x: 'shared' } },
  } as unknown as TopLevelSpec;
}
