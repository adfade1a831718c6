/**
 * Sky positions: angular separations, sexagesimal formatting and parsing of coordinates and
 * angular sizes typed by a reader.
 */

const DEG = Math.PI / 180;

/**
 * Angular separation in degrees of two (RA, Dec) positions in degrees, by the haversine
 * formula hav(theta) = hav(dDec) + cos Dec1 cos Dec2 hav(dRA) (Sinnott 1984), accurate for
 * small separations; clamped so rounding cannot leave asin's domain.
 */
export function angularSeparationDeg(ra1: number, dec1: number, ra2: number, dec2: number): number {
  const sd = Math.sin(((dec2 - dec1) * DEG) / 2);
  const sr = Math.sin(((ra2 - ra1) * DEG) / 2);
  const h = sd * sd + Math.cos(dec1 * DEG) * Math.cos(dec2 * DEG) * sr * sr;
  return (2 * Math.asin(Math.sqrt(Math.min(1, Math.max(0, h))))) / DEG;
}

function pad2(n: number): string {
  return n < 10 ? `0${n}` : String(n);
}

/** Splits a non-negative value into whole units, minutes and seconds after rounding the seconds to `decimals`. */
function sexagesimal(value: number, decimals: number): { a: number; b: number; s: string } {
  const scale = 10 ** decimals;
  const total = Math.round(value * 3600 * scale); // in units of 10^-decimals second
  const perMin = 60 * scale;
  const perUnit = 3600 * scale;
  const a = Math.floor(total / perUnit);
  const b = Math.floor((total - a * perUnit) / perMin);
  const rest = total - a * perUnit - b * perMin;
  const whole = Math.floor(rest / scale);
  const frac = rest - whole * scale;
  const s = decimals > 0 ? `${pad2(whole)}.${String(frac).padStart(decimals, '0')}` : pad2(whole);
  return { a, b, s };
}

/** Right ascension in degrees as `hh:mm:ss.ss` (hours, wrapped into [0, 24), seconds rounded to `decimals`). */
export function formatRaHms(raDeg: number, decimals = 2): string {
  if (!Number.isFinite(raDeg)) return '';
  const { a, b, s } = sexagesimal((((raDeg % 360) + 360) % 360) / 15, decimals);
  // 23:59:59.999 rounds to 24:00:00.00, which is 00:00:00.00
  return `${pad2(a % 24)}:${pad2(b)}:${s}`;
}

/** Declination in degrees as `+dd:mm:ss.s` (always signed, seconds rounded to `decimals`). */
export function formatDecDms(decDeg: number, decimals = 1): string {
  if (!Number.isFinite(decDeg)) return '';
  const sign = decDeg < 0 || Object.is(decDeg, -0) ? '-' : '+';
  const { a, b, s } = sexagesimal(Math.abs(decDeg), decimals);
  const str = `${sign}${pad2(a)}:${pad2(b)}:${s}`;
  return /^-00:00:0+(\.0*)?$/.test(str) ? `+${str.slice(1)}` : str; // no "-0"
}

const NUMBER = /[+-]?(?:\d+\.?\d*|\.\d+)/g;

/**
 * Parses a position typed as decimal degrees (`187.5 +12.25`, `187.5, 12.25`, `187.5d 12.25d`)
 * or sexagesimal (`12:30:00.0 +12:30:00`, `12 30 00 -12 30 00`, `12h30m00s +12d30m00s`,
 * also hours and minutes only). Returns null for anything else or out of range
 * (RA in [0, 360] degrees or [0, 24] hours, Dec in [-90, 90], minutes and seconds below 60).
 */
export function parseCoordinate(text: string): { raDeg: number; decDeg: number } | null {
  const t = text.trim().replace(/[\u2212\u2013]/g, '-');
  if (!t) return null;
  const hasHours = /\d\s*h/i.test(t);
  // after removing numbers, only separators and unit letters may remain
  const rest = t.replace(NUMBER, ' ').replace(/[\s,:hmsd°'"\u2032\u2033]/gi, '');
  if (rest.length > 0) return null;
  const tokens = t.match(NUMBER) ?? [];
  const nums = tokens.map(Number);
  if (nums.some((v) => !Number.isFinite(v))) return null;
  let ra: number;
  let dec: number;
  if (nums.length === 2 && !/:/.test(t)) {
    ra = hasHours ? nums[0] * 15 : nums[0];
    dec = nums[1];
  } else if (nums.length === 4 || nums.length === 6) {
    const k = nums.length / 2;
    const raParts = nums.slice(0, k);
    const decParts = nums.slice(k);
    const decTokens = tokens.slice(k);
    // only the first component of each may be signed (the Dec's), the others are unsigned
    if (tokens.slice(0, k).some((s) => /^[+-]/.test(s)) || decTokens.slice(1).some((s) => /^[+-]/.test(s))) return null;
    if (raParts.slice(1).some((v) => v >= 60) || decParts.slice(1).some((v) => v >= 60)) return null;
    const negative = decTokens[0].startsWith('-');
    const hours = raParts[0] + raParts[1] / 60 + (k === 3 ? raParts[2] / 3600 : 0);
    if (hours > 24) return null;
    ra = hours * 15;
    const decAbs = Math.abs(decParts[0]) + decParts[1] / 60 + (k === 3 ? decParts[2] / 3600 : 0);
    dec = negative ? -decAbs : decAbs;
  } else {
    return null;
  }
  if (!(ra >= 0 && ra <= 360 && dec >= -90 && dec <= 90)) return null;
  return { raDeg: ra === 360 ? 0 : ra, decDeg: dec };
}

/**
 * An angular size typed by a reader, in arcseconds: `5"`, `5arcsec`, `2'`, `2arcmin`,
 * `0.1deg`, `0.1d`, `0.1°`; a bare number is arcseconds. Null when unreadable or negative.
 */
export function parseAngleArcsec(text: string): number | null {
  const m = /^\s*(\d+\.?\d*|\.\d+)\s*(arcsec|asec|"|\u2033|''|arcmin|amin|'|\u2032|deg|d|°)?\s*$/i.exec(text);
  if (!m) return null;
  const v = Number(m[1]);
  const unit = (m[2] ?? '').toLowerCase();
  if (unit === '' || unit === 'arcsec' || unit === 'asec' || unit === '"' || unit === '\u2033' || unit === "''") return v;
  if (unit === 'arcmin' || unit === 'amin' || unit === "'" || unit === '\u2032') return v * 60;
  return v * 3600;
}
