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
  private readonly digits = new Uint8Array(24);

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
    if (v === 0) {
      this.byte(48); // "0", also for -0
      return;
    }
    if (!Number.isFinite(v)) {
      this.ascii(NOT_FINITE);
      return;
    }
    const a = v < 0 ? -v : v;
    if (e >= 0) {
      if (a >= 2 ** 52) return this.number(v);
      if (v < 0) this.byte(45);
      this.integer(a);
      return;
    }
    if (e < -15 || a < 1e-6) return this.number(v);
    const m = Math.round(a * p);
    // below 2^50 the spacing 10^e of such decimals exceeds twice the double spacing at v, so the
    // shortest round-trip digits are the mantissa's; above, leave it to String
    if (m >= 2 ** 50) return this.number(v);
    // digits of m, least significant first
    const d = this.digits;
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
    this.room(n + frac + 3);
    const b = this.buf;
    let at = this.at;
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
    this.at = at;
  }

  /** A non-negative integer below 2^53. */
  private integer(m: number): void {
    const d = this.digits;
    let n = 0;
    let t = m;
    do {
      const q = Math.floor(t / 10);
      d[n++] = t - 10 * q;
      t = q;
    } while (t > 0);
    this.room(n);
    const b = this.buf;
    let at = this.at;
    for (let i = n - 1; i >= 0; i--) b[at++] = 48 + d[i];
    this.at = at;
  }
}

/** The UTF-8 bytes of a JSON string literal (quotes and escapes as `JSON.stringify` writes them). */
export function jsonStringBytes(s: string): Uint8Array {
  return encoder.encode(JSON.stringify(s));
}
