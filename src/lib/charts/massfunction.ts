/**
 * Stellar mass function per redshift bin: 1/Vmax points with Poisson error bars (and bootstrap
 * intervals when given), the fitted Schechter function, the mass completeness limit, and the
 * true Schechter function for mocks.
 */
import type { TopLevelSpec } from 'vega-lite';
import type { MassFunctionContent } from '../pipeline/content.ts';
import { baseConfig, COLOURS, SCHEMA, SERIES } from './theme.ts';
import { zBinLabel } from './relation.ts';

const r6 = (x: number): number => Number(x.toPrecision(6));

/** Schechter function per dex (Schechter 1976): ln(10) phi* (M/M*)^(alpha+1) exp(-M/M*). */
export function schechterPerDex(logM: number, phiStar: number, logMStar: number, alpha: number): number {
  const m = 10 ** (logM - logMStar);
  return Math.LN10 * phiStar * m ** (alpha + 1) * Math.exp(-m);
}

export function massFunctionSpec(mf: MassFunctionContent, opts: { width?: number; height?: number } = {}): TopLevelSpec {
  const labels = mf.bins.map((b) => zBinLabel(b));
  const colour = { field: 'bin', type: 'nominal', scale: { domain: labels, range: labels.map((_, i) => SERIES[i % SERIES.length]) }, legend: { title: 'Redshift bin', orient: 'bottom-left' } };
  const pts: Record<string, unknown>[] = [];
  const curves: Record<string, unknown>[] = [];
  const truths: Record<string, unknown>[] = [];
  const limits: Record<string, unknown>[] = [];
  let xMin = Infinity;
  let xMax = -Infinity;
  let yMin = Infinity;
  let yMax = -Infinity;
  mf.bins.forEach((b, i) => {
    const bin = labels[i];
    for (const p of b.points) {
      if (!(p.phi > 0)) continue;
      const lo = p.phi - p.phiErr > 0 ? p.phi - p.phiErr : p.phi / 10;
      const below = b.completenessLogM !== null && p.logM < b.completenessLogM;
      pts.push({ bin, x: p.logM, y: r6(p.phi), lo: r6(lo), hi: r6(p.phi + p.phiErr), n: p.n, below });
      xMin = Math.min(xMin, p.logM);
      xMax = Math.max(xMax, p.logM);
      yMin = Math.min(yMin, lo);
      yMax = Math.max(yMax, p.phi + p.phiErr);
    }
    if (b.completenessLogM !== null) limits.push({ bin, x: b.completenessLogM });
  });
  if (!Number.isFinite(xMin)) {
    xMin = 8;
    xMax = 12;
    yMin = 1e-6;
    yMax = 1e-1;
  }
  const x0 = Math.floor((xMin - 0.3) * 2) / 2;
  const x1 = Math.ceil((xMax + 0.3) * 2) / 2;
  const yDomain = [r6(yMin / 3), r6(yMax * 3)];
  mf.bins.forEach((b, i) => {
    const bin = labels[i];
    const grid = (f: (m: number) => number, into: Record<string, unknown>[]) => {
      for (let k = 0; k <= 60; k++) {
        const m = x0 + ((x1 - x0) * k) / 60;
        const y = f(m);
        if (y >= yDomain[0] && y <= yDomain[1]) into.push({ bin, x: r6(m), y: r6(y) });
      }
    };
    if (b.schechter) grid((m) => schechterPerDex(m, b.schechter!.phiStar.median, b.schechter!.logMStar.median, b.schechter!.alpha.median), curves);
    if (b.truth) grid((m) => schechterPerDex(m, b.truth!.phiStar, b.truth!.logMStar, b.truth!.alpha), truths);
  });
  const x = { field: 'x', type: 'quantitative', scale: { domain: [x0, x1], nice: false, zero: false }, axis: { title: 'log stellar mass [log(solMass)]', grid: false } };
  const y = { field: 'y', type: 'quantitative', scale: { type: 'log', domain: yDomain, nice: false }, axis: { title: 'Number density per dex [Mpc⁻³ dex⁻¹]', grid: true } };
  const layers: Record<string, unknown>[] = [];
  if (curves.length) layers.push({ data: { values: curves }, mark: { type: 'line', strokeWidth: 1.5, clip: true }, encoding: { x, y, color: colour } });
  if (truths.length) layers.push({ name: 'truth', data: { values: truths }, mark: { type: 'line', strokeWidth: 1.2, strokeDash: [2, 2], clip: true }, encoding: { x, y, color: colour, detail: { field: 'bin' } } });
  if (limits.length) layers.push({ data: { values: limits }, mark: { type: 'rule', strokeDash: [5, 3], strokeWidth: 1 }, encoding: { x, color: colour } });
  if (pts.length) {
    layers.push({ data: { values: pts }, mark: { type: 'rule', strokeWidth: 1.2, clip: true }, encoding: { x, y: { ...y, field: 'lo' }, y2: { field: 'hi' }, color: colour } });
    // below the bin's completeness limit the density is a lower limit: open symbols, fainter bars
    const shape = { field: 'bin', type: 'nominal', scale: { domain: labels }, legend: null };
    const complete = pts.filter((p) => !p.below);
    const incomplete = pts.filter((p) => p.below);
    if (complete.length) layers.push({ data: { values: complete }, mark: { type: 'point', filled: true, size: 36, opacity: 1, clip: true }, encoding: { x, y, color: colour, shape } });
    if (incomplete.length) layers.push({ name: 'incomplete', data: { values: incomplete }, mark: { type: 'point', filled: false, size: 36, strokeWidth: 1.3, opacity: 0.8, clip: true }, encoding: { x, y, color: colour, shape } });
  }
  if (!layers.length) layers.push({ data: { values: [{ x: x0, y: yDomain[0] }] }, mark: { type: 'point', opacity: 0 }, encoding: { x, y } });
  return {
    $schema: SCHEMA,
    title: { text: 'Stellar mass function', subtitle: `1/Vmax estimate over ${mf.areaDeg2} deg²` },
    description: `Stellar mass function in ${mf.bins.length} redshift bins: points are 1/Vmax number densities with Poisson error bars, lines the fitted Schechter functions${truths.length ? ', dotted lines the true functions of the mock' : ''}, dashed vertical lines the mass completeness limits, open symbols the points below their bin's limit (lower limits).`,
    config: baseConfig(),
    width: opts.width ?? 520,
    height: opts.height ?? 360,
    layer: layers,
  } as unknown as TopLevelSpec;
}
