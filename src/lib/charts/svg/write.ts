/**
 * Small helpers for writing compact, deterministic SVG text: numbers rounded to a hundredth
 * of a pixel, escaped text, symbol paths, and estimated text widths for layout.
 *
 * Text widths are estimated, not measured (0.8 x font size per character, the estimate the
 * Vega runtime uses when no canvas is present), so a figure has the same layout in Node and in
 * every browser, whatever fonts it has.
 */

/** A coordinate or length at a tenth of a pixel (finer steps do not show on screen or paper at the figures' sizes). */
export function px(v: number): string {
  return tenths(v);
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
  return polyPath(xs, ys);
}

/** A band between two polylines (y1 along the top, y2 back along the bottom); non-finite points split the band. */
export function areaPath(xs: ArrayLike<number>, y1: ArrayLike<number>, y2: ArrayLike<number>): string {
  let d = '';
  let run: number[] = [];
  const flush = () => {
    if (run.length) {
      const back = [...run].reverse();
      d += polyPath([...run.map((i) => xs[i]), ...back.map((i) => xs[i])], [...run.map((i) => y1[i]), ...back.map((i) => y2[i])], true);
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

/** A coordinate at a tenth of a pixel, as short as the path grammar allows ("-.5", "12", "3.2"). */
export function tenths(v: number): string {
  const t = Math.round(v * 10);
  if (t % 10 === 0) return String(t / 10);
  const neg = t < 0;
  const a = neg ? -t : t;
  const i = (a - (a % 10)) / 10;
  return `${neg ? '-' : ''}${i === 0 ? '' : i}.${a % 10}`;
}

/**
 * Compact path data of a polyline at a tenth of a pixel: an absolute move to the first point,
 * then relative steps between the rounded points (so rounding never accumulates), optionally
 * closed. Non-finite points end one sub-path and start the next.
 */
export function polyPath(xs: ArrayLike<number>, ys: ArrayLike<number>, close = false, only?: ArrayLike<number>): string {
  let d = '';
  let px0 = 0, py0 = 0;
  let open = false;
  let count = 0;
  const n = only ? only.length : xs.length;
  for (let k = 0; k < n; k++) {
    const i = only ? only[k] : k;
    const x = xs[i], y = ys[i];
    if (!Number.isFinite(x) || !Number.isFinite(y)) {
      if (open && close && count > 2) d += 'z';
      open = false;
      continue;
    }
    const tx = Math.round(x * 10), ty = Math.round(y * 10);
    if (!open) {
      d += `M${tenths(tx / 10)},${tenths(ty / 10)}`;
      open = true;
      count = 1;
    } else {
      const dx = tx - px0, dy = ty - py0;
      if (dx === 0 && dy === 0) continue;
      const sx = tenths(dx / 10), sy = tenths(dy / 10);
      d += `${count === 1 ? 'l' : sx[0] === '-' ? '' : ','}${sx}${sy[0] === '-' ? '' : ','}${sy}`;
      count++;
    }
    px0 = tx;
    py0 = ty;
  }
  if (open && close && count > 2) d += 'z';
  return d;
}

/**
 * The points of a polyline kept by Douglas-Peucker simplification at `tol` pixels (Douglas and
 * Peucker 1973): every dropped point lies within `tol` of the kept line, so at a few tenths of a
 * pixel the drawn line does not change. Returns the kept indices in order; non-finite points
 * are kept as breaks.
 */
export function simplifyIndices(xs: ArrayLike<number>, ys: ArrayLike<number>, tol: number): number[] {
  const out: number[] = [];
  const n = xs.length;
  let start = 0;
  const keep = new Uint8Array(n);
  const stack: number[] = [];
  const run = (a: number, b: number) => {
    keep[a] = keep[b] = 1;
    stack.push(a, b);
    while (stack.length) {
      const hi = stack.pop()!, lo = stack.pop()!;
      const ax = xs[lo], ay = ys[lo], dx = xs[hi] - ax, dy = ys[hi] - ay;
      const len2 = dx * dx + dy * dy;
      let worst = -1, at = -1;
      for (let i = lo + 1; i < hi; i++) {
        const px0 = xs[i] - ax, py0 = ys[i] - ay;
        let d2: number;
        if (len2 === 0) d2 = px0 * px0 + py0 * py0;
        else {
          const t = Math.max(0, Math.min(1, (px0 * dx + py0 * dy) / len2));
          const ex = px0 - t * dx, ey = py0 - t * dy;
          d2 = ex * ex + ey * ey;
        }
        if (d2 > worst) {
          worst = d2;
          at = i;
        }
      }
      if (at >= 0 && worst > tol * tol) {
        keep[at] = 1;
        stack.push(lo, at, at, hi);
      }
    }
  };
  for (let i = 0; i <= n; i++) {
    const bad = i === n || !Number.isFinite(xs[i]) || !Number.isFinite(ys[i]);
    if (bad) {
      if (i - start >= 2) run(start, i - 1);
      else if (i - start === 1) keep[start] = 1;
      if (i < n) keep[i] = 1;
      start = i + 1;
    }
  }
  for (let i = 0; i < n; i++) if (keep[i]) out.push(i);
  return out;
}

/** `polyPath` of the polyline simplified at `tol` pixels (see `simplifyIndices`). */
export function simplePath(xs: ArrayLike<number>, ys: ArrayLike<number>, tol: number, close = false): string {
  return polyPath(xs, ys, close, simplifyIndices(xs, ys, tol));
}
