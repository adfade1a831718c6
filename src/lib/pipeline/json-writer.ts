/**
 * JSON text written straight into bytes, for data that is mostly numbers (the corner data of
 * every object): the same text `JSON.stringify` gives, without building the object tree or
 * turning each double into a string. Numbers rounded to a decimal quantum 10^e are written from
 * their integer mantissa; anything else through `String`, as `JSON.stringify` does.
 */

const encoder = new TextEncoder();
const NOT_FINITE = 'null';

export class JsonWriter {
  private buf = new Uint8Array(1 << 16);
  private at = 0;

  get length(): number {
    return this.at;
  }

  /** The bytes written so far (a copy) and a fresh start. */
  take(): Uint8Array {
    const out = this.buf.slice(0, this.at);
    this.at = 0;
    return out;
  }

  /** Bytes [from, to) written so far (a view, valid until the next write). */
  view(from = 0, to = this.at): Uint8Array {
    return this.buf.subarray(from, to);
  }

  reset(): void {
    this.at = 0;
  }

  private room(n: number): void {
    if (this.at + n <= this.buf.length) return;
    const bigger = new Uint8Array(Math.max(this.at + n, 2 * this.buf.length));
    bigger.set(this.buf.subarray(0, this.at));
    this.buf = bigger;
  }

  /** ASCII text as it is (punctuation, keys without escapes). */
  ascii(s: string): void {
    this.room(s.length);
    const b = this.buf;
    let at = this.at;
    for (let i = 0; i < s.length; i++) b[at++] = s.charCodeAt(i);
    this.at = at;
  }

  byte(c: number): void {
    this.room(1);
    this.buf[this.at++] = c;
  }

  /** Bytes as they are (e.g. a string already encoded by `jsonStringBytes`). */
  bytes(b: Uint8Array): void {
    this.room(b.length);
    this.buf.set(b, this.at);
    this.at += b.length;
  }

  /** Bytes [from, to) of `src` as they are. */
  bytesRange(src: Uint8Array, from: number, to: number): void {
    const n = to - from;
    this.room(n);
    const b = this.buf;
    let at = this.at;
    for (let i = from; i < to; i++) b[at++] = src[i];
    this.at = at;
  }

  /** A JSON string literal, as `JSON.stringify` writes it (UTF-8). */
  string(s: string): void {
    let plain = true;
    for (let i = 0; i < s.length && plain; i++) {
      const c = s.charCodeAt(i);
      plain = c >= 32 && c < 127 && c !== 34 && c !== 92;
    }
    if (!plain) return this.bytes(jsonStringBytes(s));
    this.room(s.length + 2);
    const b = this.buf;
    let at = this.at;
    b[at++] = 34;
    for (let i = 0; i < s.length; i++) b[at++] = s.charCodeAt(i);
    b[at++] = 34;
    this.at = at;
  }

  /** Any number as `JSON.stringify` writes it. */
  number(v: number): void {
    this.ascii(Number.isFinite(v) ? String(v) : NOT_FINITE);
  }

  /**
   * A number that is an integer multiple of 10^e, i.e. `Math.round(x / 10^e) * 10^e` for
   * e >= 0 or `Math.round(x * 10^-e) / 10^-e` for e < 0, written from its integer mantissa; the
   * text is the one `JSON.stringify` gives (its shortest round-trip digits are the mantissa's
   * while the mantissa is below 2^50). Other values go through `number`. `p` must be 10^-e
   * when e < 0 (given, so that it is not computed per value).
   */
  decimal(v: number, e: number, p = e < 0 ? 10 ** -e : 1): void {
    this.room(MAX_NUMBER);
    this.at = putDecimal(this.buf, this.at, v, e, p);
  }

  /**
   * `[[x0,y0],[x1,y1],...]` of `count` points of `xy` (x and y interleaved) from point `from`,
   * each coordinate as `decimal` (or `number` when its exponent is null) writes it.
   */
  points(xy: Float64Array, from: number, count: number, ex: number | null, px: number, ey: number | null, py: number): void {
    this.room(2 + count * (2 * MAX_NUMBER + 4));
    const b = this.buf;
    let at = this.at;
    b[at++] = 91;
    for (let q = 0; q < count; q++) {
      if (q) b[at++] = 44;
      b[at++] = 91;
      const x = xy[2 * (from + q)];
      at = ex === null ? putAscii(b, at, numberText(x)) : putDecimal(b, at, x, ex, px);
      b[at++] = 44;
      const y = xy[2 * (from + q) + 1];
      at = ey === null ? putAscii(b, at, numberText(y)) : putDecimal(b, at, y, ey, py);
      b[at++] = 93;
    }
    b[at++] = 93;
    this.at = at;
  }

  /** A non-negative integer below 2^53. */
  private integer(m: number): void {
    this.room(MAX_NUMBER);
    this.at = putInteger(this.buf, this.at, m);
  }
}

/** Bytes a number's text can take (`String` of a double is at most 25 characters). */
const MAX_NUMBER = 26;
const digitWork = new Uint8Array(24);

function numberText(v: number): string {
  return Number.isFinite(v) ? String(v) : NOT_FINITE;
}

function putAscii(b: Uint8Array, at: number, s: string): number {
  for (let i = 0; i < s.length; i++) b[at++] = s.charCodeAt(i);
  return at;
}

function putInteger(b: Uint8Array, at: number, m: number): number {
  const d = digitWork;
  let n = 0;
  let t = m;
  do {
    const q = Math.floor(t / 10);
    d[n++] = t - 10 * q;
    t = q;
  } while (t > 0);
  for (let i = n - 1; i >= 0; i--) b[at++] = 48 + d[i];
  return at;
}

/** `JsonWriter.decimal` into b at `at` (room for MAX_NUMBER bytes assumed); returns the new end. */
function putDecimal(b: Uint8Array, at: number, v: number, e: number, p: number): number {
  if (v === 0) {
    b[at++] = 48; // "0", also for -0
    return at;
  }
  if (!Number.isFinite(v)) return putAscii(b, at, NOT_FINITE);
  const a = v < 0 ? -v : v;
  if (e >= 0) {
    if (a >= 2 ** 52) return putAscii(b, at, String(v));
    if (v < 0) b[at++] = 45;
    return putInteger(b, at, a);
  }
  if (e < -15 || a < 1e-6) return putAscii(b, at, String(v));
  const m = Math.round(a * p);
  // below 2^50 the spacing 10^e of such decimals exceeds twice the double spacing at v, so the
  // shortest round-trip digits are the mantissa's; above, leave it to String
  if (m >= 2 ** 50) return putAscii(b, at, String(v));
  // digits of m, least significant first
  const d = digitWork;
  let n = 0;
  if (m < 2147483648) {
    let t = m | 0;
    while (t > 0) {
      const q = (t / 10) | 0;
      d[n++] = t - 10 * q;
      t = q;
    }
  } else {
    let t = m;
    while (t > 0) {
      const q = Math.floor(t / 10);
      d[n++] = t - 10 * q;
      t = q;
    }
  }
  const frac = -e; // digits after the point
  let low = 0; // trailing zeros of the fraction are not written
  while (low < frac && low < n && d[low] === 0) low++;
  if (v < 0) b[at++] = 45;
  if (n <= frac) {
    b[at++] = 48;
    b[at++] = 46;
    for (let i = frac; i > n; i--) b[at++] = 48;
    for (let i = n - 1; i >= low; i--) b[at++] = 48 + d[i];
  } else {
    for (let i = n - 1; i >= frac; i--) b[at++] = 48 + d[i];
    if (low < frac) {
      b[at++] = 46;
      for (let i = frac - 1; i >= low; i--) b[at++] = 48 + d[i];
    }
  }
  return at;
}

/** The UTF-8 bytes of a JSON string literal (quotes and escapes as `JSON.stringify` writes them). */
export function jsonStringBytes(s: string): Uint8Array {
  return encoder.encode(JSON.stringify(s));
}
