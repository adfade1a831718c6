/** Number and text formatting for the pages (presentation only; no statistics). */

/** Decimal places that show two significant digits of `spread`. */
export function digitsFor(spread: number): number {
  const s = Number(Math.abs(spread).toPrecision(10));
  if (!(s > 0) || !Number.isFinite(s)) return 3;
  return Math.max(0, Math.min(6, 1 - Math.floor(Math.log10(s))));
}

/** A number at fixed decimals; '—' for null, NaN or infinities. */
export function num(x: number | null | undefined, digits = 3): string {
  if (x === null || x === undefined || !Number.isFinite(x)) return '—';
  const s = x.toFixed(digits);
  return s.replace(/^-(?=0(\.0*)?$)/, '').replace('-', '−');
}

/** A number with significant digits, switching to exponent form for very small or large values. */
export function sig(x: number | null | undefined, digits = 3): string {
  if (x === null || x === undefined || !Number.isFinite(x)) return '—';
  if (x === 0) return '0';
  const a = Math.abs(x);
  if (a < 1e-3 || a >= 1e6) {
    const [m, e] = x.toExponential(digits - 1).split('e');
    return `${m.replace('-', '−')} × 10${superscript(Number(e))}`;
  }
  return Number(x.toPrecision(digits)).toString().replace('-', '−');
}

function superscript(n: number): string {
  const map: Record<string, string> = { '-': '⁻', '0': '⁰', '1': '¹', '2': '²', '3': '³', '4': '⁴', '5': '⁵', '6': '⁶', '7': '⁷', '8': '⁸', '9': '⁹' };
  return String(n)
    .split('')
    .map((c) => map[c] ?? c)
    .join('');
}

/** Integer with thin-space thousands separators. */
export function count(n: number): string {
  return Math.round(n)
    .toString()
    .replace(/\B(?=(\d{3})+(?!\d))/g, '\u2009');
}

export function percent(f: number, digits = 1): string {
  if (!Number.isFinite(f)) return '—';
  return `${(f * 100).toFixed(digits)}%`;
}

/** File size in B, KB, MB, GB (powers of 1000, as stated on the page). */
export function bytes(n: number): string {
  if (!(n >= 0)) return '—';
  if (n < 1000) return `${n} B`;
  const units = ['KB', 'MB', 'GB', 'TB'];
  let v = n / 1000;
  let u = 0;
  while (v >= 1000 && u < units.length - 1) {
    v /= 1000;
    u++;
  }
  return `${v.toFixed(v < 10 ? 2 : 1)} ${units[u]}`;
}

/** Median with asymmetric interval: "10.42 +0.08 −0.07". */
export function interval(median: number, lo: number, hi: number, digits?: number): string {
  const d = digits ?? digitsFor(Math.min(hi - median, median - lo) || hi - lo);
  return `${num(median, d)} +${num(hi - median, d)} −${num(median - lo, d)}`;
}

/** "[a, b]" at the given decimals. */
export function range(a: number, b: number, digits: number): string {
  return `[${num(a, digits)}, ${num(b, digits)}]`;
}

export function unitText(unit: string): string {
  return unit ? unit : '—';
}
