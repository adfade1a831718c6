/**
 * Small helpers for writing compact, deterministic SVG text: numbers rounded to a hundredth
 * of a pixel, escaped text, symbol paths, and estimated text widths for layout.
 *
 * Text widths are estimated, not measured (0.8 x font size per character, the estimate the
 * Vega runtime uses when no canvas is present), so a figure has the same layout in Node and in
 * every browser, whatever fonts it has.
 */

/** A coordinate or length rounded to 2 decimals, without trailing zeros or a negative zero. */
export function px(v: number): string {
  const r = Math.round(v * 100) / 100;
  return Object.is(r, -0) ? '0' : String(r);
}

export function escapeXml(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

/** Estimated width in pixels of `text` at `fontSize` (whole pixels, as the layout uses them). */
export function textWidth(text: string, fontSize: number): number {
  return ~~(0.8 * text.length * fontSize);
}

export type Baseline = 'top' | 'middle' | 'bottom' | 'alphabetic';

/** Vertical offset from the anchor point to the alphabetic baseline, for a baseline keyword. */
export function baselineOffset(baseline: Baseline, fontSize: number): number {
  return Math.round(baseline === 'top' ? 0.79 * fontSize : baseline === 'middle' ? 0.3 * fontSize : baseline === 'bottom' ? -0.21 * fontSize : 0);
}

/** Attributes string from a record, skipping undefined values; values are escaped. */
export function attrs(a: Record<string, string | number | undefined | null>): string {
  let s = '';
  for (const [k, v] of Object.entries(a)) if (v !== undefined && v !== null) s += ` ${k}="${typeof v === 'number' ? px(v) : escapeXml(v)}"`;
  return s;
}

export type SymbolShape = 'circle' | 'square' | 'triangle-down' | 'cross';

/**
 * Path data of a symbol of area-like `size` (the square of its width, as in Vega-Lite's point
 * mark) centred on (x, y), in absolute coordinates.
 */
export function symbolPath(shape: SymbolShape, x: number, y: number, size: number): string {
  const r = Math.sqrt(size) / 2;
  switch (shape) {
    case 'circle':
      return `M${px(x + r)},${px(y)}A${px(r)},${px(r)},0,1,1,${px(x - r)},${px(y)}A${px(r)},${px(r)},0,1,1,${px(x + r)},${px(y)}`;
    case 'square':
      return `M${px(x - r)},${px(y - r)}h${px(2 * r)}v${px(2 * r)}h${px(-2 * r)}Z`;
    case 'triangle-down': {
      const h = (Math.sqrt(3) / 2) * r;
      return `M${px(x)},${px(y + h)}L${px(x - r)},${px(y - h)}L${px(x + r)},${px(y - h)}Z`;
    }
    case 'cross': {
      const s = r / 2.5;
      const pts: [number, number][] = [[-r, -s], [-r, s], [-s, s], [-s, r], [s, r], [s, s], [r, s], [r, -s], [s, -s], [s, -r], [-s, -r], [-s, -s]];
      return 'M' + pts.map(([a, b]) => `${px(x + a)},${px(y + b)}`).join('L') + 'Z';
    }
  }
}

/** A polyline's path data from pixel points (NaN points break the line). */
export function linePath(xs: ArrayLike<number>, ys: ArrayLike<number>): string {
  let d = '';
  let pen = false;
  for (let i = 0; i < xs.length; i++) {
    const x = xs[i], y = ys[i];
    if (!Number.isFinite(x) || !Number.isFinite(y)) {
      pen = false;
      continue;
    }
    d += `${pen ? 'L' : 'M'}${px(x)},${px(y)}`;
    pen = true;
  }
  return d;
}

/** A band between two polylines (y1 along the top, y2 back along the bottom); non-finite points split the band. */
export function areaPath(xs: ArrayLike<number>, y1: ArrayLike<number>, y2: ArrayLike<number>): string {
  let d = '';
  let run: number[] = [];
  const flush = () => {
    if (run.length) {
      d += 'M' + run.map((i) => `${px(xs[i])},${px(y1[i])}`).join('L') + 'L' + run.reverse().map((i) => `${px(xs[i])},${px(y2[i])}`).join('L') + 'Z';
      run = [];
    }
  };
  for (let i = 0; i < xs.length; i++) {
    if (Number.isFinite(xs[i]) && Number.isFinite(y1[i]) && Number.isFinite(y2[i])) run.push(i);
    else flush();
  }
  flush();
  return d;
}
