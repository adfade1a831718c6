/** Number and text formatting for the pages (presentation only; no statistics). */

/** Decimal places that show two significant digits of `spread`. */
export function digitsFor(spread: number): number {
  const s = Number(Math.abs(spread).toPrecision(10));
  if (!(s > 0) || !Number.isFinite(s)) return 3;
  return Math.max(0, Math.min(6, 1 - Math.floor(Math.log10(s))));
}

const MAX_DECIMALS = 6;
/** Rows looked at when choosing a column's decimals: an even spread of at most this many. */
const SAMPLE = 20000;

function finiteSample(v: ArrayLike<number>, abs: boolean): number[] {
  const step = Math.max(1, Math.ceil(v.length / SAMPLE));
  const out: number[] = [];
  for (let i = 0; i < v.length; i += step) {
    const x = v[i]!;
    if (Number.isFinite(x)) out.push(abs ? Math.abs(x) : x);
  }
  return out;
}

function median(xs: number[]): number {
  if (xs.length === 0) return NaN;
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m]! : (s[m - 1]! + s[m]!) / 2;
}

/** Decimals in the shortest text of x (0.125 -> 3); MAX_DECIMALS for exponent forms. */
function decimalsOf(x: number): number {
  const t = String(x);
  if (t.includes('e')) return MAX_DECIMALS;
  const dot = t.indexOf('.');
  return dot < 0 ? 0 : t.length - dot - 1;
}

/**
 * Decimal places for a whole column of numbers, one count per column so the column aligns:
 * - with uncertainties (`spreads`, one per row, e.g. the smaller half-width of a parameter's
 *   68% interval): two significant digits of their median, as a value is quoted to its
 *   uncertainty (`digitsFor`);
 * - angles in degrees (`unit: 'deg'`): 6 decimals, 0.004 arcsec;
 * - otherwise from the values' precision: enough decimals for `significant` (default 3) digits of
 *   their median magnitude, and no more than the values themselves carry (a redshift given to
 *   three decimals keeps three; whole numbers none).
 * Between 0 and 6. NaN and infinities are skipped; long columns are sampled evenly.
 */
export function columnDecimals(values: ArrayLike<number>, opts: { spreads?: ArrayLike<number>; unit?: string; significant?: number } = {}): number {
  if (opts.unit === 'deg') return MAX_DECIMALS;
  if (opts.spreads) {
    const sp = finiteSample(opts.spreads, true).filter((x) => x > 0);
    if (sp.length) return digitsFor(median(sp));
  }
  const vals = finiteSample(values, false);
  if (vals.length === 0) return 0;
  const carried = Math.min(MAX_DECIMALS, Math.max(...vals.map(decimalsOf)));
  const mag = median(vals.map(Math.abs).filter((x) => x > 0));
  const sigDigits = opts.significant ?? 3;
  const wanted = Number.isFinite(mag) ? Math.max(0, sigDigits - 1 - Math.floor(Math.log10(mag))) : 0;
  return Math.min(MAX_DECIMALS, carried, wanted);
}

/** Decimals of a column of estimates with 68% intervals: two significant digits of their typical smaller half-width. */
export function intervalDecimals(estimates: { median: number; lo: number; hi: number }[]): number {
  return columnDecimals(estimates.map((e) => e.median), { spreads: estimates.map((e) => Math.min(e.hi - e.median, e.median - e.lo) || e.hi - e.lo) });
}

/**
 * Decimals of one parameter's row of an object's table (median, intervals, mean, std, HDIs,
 * truth): two significant digits of the smaller half-width of its 68% interval (else its std).
 * Rows are different quantities, so each row has its own count and keeps it across the row.
 */
export function paramDecimals(p: { p16: number; p50: number; p84: number; std: number }): number {
  return columnDecimals([p.p50], { spreads: [Math.min(p.p84 - p.p50, p.p50 - p.p16) || p.std] });
}

/**
 * A cell of a column shown at `decimals` (from `columnDecimals`). A non-zero value that would
 * print as zero at those decimals (a p-value of 1e-9) is shown with two significant digits
 * instead, so no value reads as exactly zero when it is not.
 */
export function cell(x: number | null | undefined, decimals: number): string {
  if (x === null || x === undefined || !Number.isFinite(x)) return '—';
  if (x !== 0 && Math.abs(x) < 0.5 * 10 ** -decimals) return sig(x, 2);
  return num(x, decimals);
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
