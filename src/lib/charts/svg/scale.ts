/**
 * Position scales and axis ticks for the figures written straight to SVG.
 *
 * Tick values and labels follow the same rules as the Vega runtime the site's other figures
 * use, so both kinds of figure label their axes alike: d3-scale's `ticks(count)` for linear
 * and log scales; linear labels at the fixed precision of the tick step (d3-format
 * `precisionFixed`); log labels in a trimmed general format, with the label of a tick left
 * empty unless its leading digit passes d3-scale's log-format filter for that count (so a
 * log axis shows 1, 2, 3, 10, 20, ... and marks the rest with unlabelled ticks).
 */
import { tickStep } from 'd3-array';
import { format, precisionFixed } from 'd3-format';
import { scaleLinear, scaleLog } from 'd3-scale';

export interface PositionScale {
  kind: 'linear' | 'log';
  domain: [number, number];
  range: [number, number];
  /** Pixel position of a value (not clamped; NaN for a non-positive value on a log scale). */
  (v: number): number;
  ticks(count: number): number[];
  tickLabel(count: number): (v: number) => string;
}

/** A linear or base-10 log scale from `domain` onto `range` (pixels), without nicing or clamping. */
export function positionScale(kind: 'linear' | 'log', domain: [number, number], range: [number, number]): PositionScale {
  const s = kind === 'log' ? scaleLog().domain(domain).range(range) : scaleLinear().domain(domain).range(range);
  const f = ((v: number) => (kind === 'log' && !(v > 0) ? NaN : s(v))) as PositionScale;
  f.kind = kind;
  f.domain = domain;
  f.range = range;
  f.ticks = (count) => s.ticks(count);
  f.tickLabel = (count) => (kind === 'log' ? logLabel(f, count) : linearLabel(domain, count));
  return f;
}

/** Labels of a linear axis: fixed decimals from the tick step, thousands separated, U+2212 minus. */
function linearLabel(domain: [number, number], count: number): (v: number) => string {
  const step = tickStep(domain[0], domain[1], count);
  const p = precisionFixed(Math.abs(step));
  return format(`,.${Number.isFinite(p) ? p : 0}f`);
}

/** Labels of a log axis: up to 12 significant digits with trailing zeros trimmed, shown for the leading digits d3's filter keeps. */
function logLabel(scale: PositionScale, count: number): (v: number) => string {
  const ticks = scale.ticks(count);
  const base = 10;
  const k = Math.max(1, (base * count) / Math.max(1, ticks.length));
  const general = trimZeros(format(',.12'));
  return (d) => {
    let i = d / Math.pow(base, Math.round(Math.log10(d)));
    if (i * base < base - 0.5) i *= base;
    return i <= k ? general(d) : '';
  };
}

function trimZeros(fmt: (v: number) => string): (v: number) => string {
  return (v) => {
    const s = fmt(v);
    const dot = s.indexOf('.');
    if (dot < 0) return s;
    let end = s.lastIndexOf('e');
    if (end < 0) {
      end = s.length;
      while (end > dot && !(s.charCodeAt(end - 1) >= 48 && s.charCodeAt(end - 1) <= 57)) end--;
    }
    const tail = s.slice(end);
    let i = end;
    while (i > dot + 1 && s[i - 1] === '0') i--;
    if (i === dot + 1) i = dot;
    return s.slice(0, i) + tail;
  };
}
