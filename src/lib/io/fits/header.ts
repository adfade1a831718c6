/**
 * FITS header cards: formatting and parsing of 80-character keyword records.
 * FITS Standard 4.0, sect. 4 (headers), 4.1.2 (keyword record), 4.2 (value formats),
 * 4.2.1.2 (long string values continued with CONTINUE cards).
 *
 * Pure string work; no Node APIs, so it can be reused anywhere.
 */

export const CARD = 80;
export const BLOCK = 2880;

export type HeaderValue = string | number | boolean | bigint;

export interface Card {
  keyword: string;
  /** Undefined for commentary cards (COMMENT, HISTORY, blank) and keywords without a value. */
  value?: HeaderValue;
  /** The value field as written (after joining CONTINUE cards for strings). */
  raw?: string;
  comment?: string;
}

/** FITS 4.0 sect. 4.1.2.1: keyword names are upper-case A-Z, digits, hyphen and underscore. */
export function isValidKeyword(k: string): boolean {
  return /^[A-Z0-9_-]{1,8}$/.test(k);
}

/**
 * Header text must be printable ASCII (FITS 4.0 sect. 4.1.1). Other characters are
 * folded to their unaccented forms where Unicode allows it, else replaced by '?', so a
 * description with an accent or a micro sign still lands in the header readably.
 */
export function toHeaderAscii(s: string): string {
  let out = '';
  for (const ch of s.normalize('NFKD')) {
    const c = ch.codePointAt(0)!;
    if (c >= 0x20 && c <= 0x7e) out += ch;
    else if (c >= 0x300 && c <= 0x36f) continue; // combining marks left over from NFKD
    else if (c === 0x09 || c === 0x0a || c === 0x0d) out += ' ';
    else out += '?';
  }
  return out;
}

function pad(s: string, n = CARD): string {
  return s.length >= n ? s : s + ' '.repeat(n - s.length);
}

/** Quoted string per FITS 4.0 sect. 4.2.1.1: ' doubled, and padded to at least 8 chars. */
function quote(s: string): string {
  const body = s.replace(/'/g, "''");
  return `'${body.length < 8 ? pad(body, 8) : body}'`;
}

/**
 * Fixed-format value (FITS 4.0 sect. 4.2): logical and numbers right-justified to column 30.
 * Non-integer numbers keep a decimal point and an upper-case exponent.
 */
export function formatValue(v: HeaderValue): string {
  if (typeof v === 'boolean') return (v ? 'T' : 'F').padStart(20);
  if (typeof v === 'bigint') return v.toString().padStart(20);
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) throw new RangeError(`FITS header numbers must be finite, got ${v}`);
    if (Number.isInteger(v) && Math.abs(v) <= Number.MAX_SAFE_INTEGER) return String(v).padStart(20);
    // Shortest round-tripping text, then forced into FITS float syntax (sect. 4.2.4).
    let t = String(v).toUpperCase();
    if (!t.includes('.')) t = t.includes('E') ? t.replace('E', '.0E') : t + '.0';
    return t.padStart(20);
  }
  return quote(v);
}

function withComment(body: string, comment: string | undefined): string {
  if (!comment) return pad(body);
  const c = toHeaderAscii(comment);
  const room = CARD - body.length - 3;
  if (room <= 0) return pad(body);
  return pad(`${body} / ${c.slice(0, room)}`);
}

/**
 * Cards for one keyword. Strings that do not fit one card are split across CONTINUE cards
 * with '&' ending each continued piece (FITS 4.0 sect. 4.2.1.2); a '' escape pair is never split.
 * Returns the cards and whether the long-string convention was used.
 */
export function formatCards(keyword: string, value: HeaderValue, comment?: string): { cards: string[]; long: boolean } {
  if (!isValidKeyword(keyword)) throw new RangeError(`invalid FITS keyword "${keyword}"`);
  const key = pad(keyword, 8) + '= ';
  if (typeof value !== 'string') return { cards: [withComment(key + formatValue(value), comment)], long: false };
  const text = toHeaderAscii(value);
  const single = key + quote(text);
  if (single.length <= CARD) return { cards: [withComment(single, comment)], long: false };
  // Each card holds at most 68 characters between its quotes (columns 11 to 80, sect. 4.2.1.2);
  // continued pieces keep one of those for the '&'.
  const cards: string[] = [];
  let rest = text.replace(/'/g, "''");
  let first = true;
  while (rest.length > 0) {
    const prefix = first ? key : 'CONTINUE  ';
    const last = rest.length <= 68;
    let n = last ? rest.length : 67;
    // Do not cut between the two quotes of an escaped '.
    if (!last) {
      let q = 0;
      for (let i = n - 1; i >= 0 && rest[i] === "'"; i--) q++;
      if (q % 2 === 1) n -= 1;
    }
    // Some readers end a continued value at a doubled quote followed by a blank or '/', so a
    // piece is cut right after such a pair: it is then followed by '&' or the closing quote.
    for (let i = 0; i < n - 1; i++) {
      if (rest[i] !== "'") continue;
      if ((rest[i + 2] === ' ' || rest[i + 2] === '/') && i + 2 < n) { n = i + 2; break; }
      i++; // skip the second quote of the pair
    }
    const piece = rest.slice(0, n);
    rest = rest.slice(n);
    const body = `${prefix}'${piece}${rest.length > 0 ? '&' : ''}'`;
    cards.push(rest.length > 0 ? pad(body) : withComment(body, comment));
    first = false;
  }
  return { cards, long: true };
}

/** A commentary card (COMMENT, HISTORY), wrapped at 72 characters (FITS 4.0 sect. 4.4.2.4). */
export function commentaryCards(keyword: 'COMMENT' | 'HISTORY', text: string): string[] {
  const t = toHeaderAscii(text);
  const out: string[] = [];
  const words = t.split(/\s+/).filter((w) => w.length > 0);
  let line = '';
  const flush = () => {
    out.push(pad(pad(keyword, 8) + line));
    line = '';
  };
  for (let w of words) {
    while (w.length > 72) {
      if (line) flush();
      line = w.slice(0, 72);
      w = w.slice(72);
      flush();
    }
    if (line.length + (line ? 1 : 0) + w.length > 72) flush();
    line += (line ? ' ' : '') + w;
  }
  if (line || out.length === 0) flush();
  return out;
}

export const END_CARD = pad('END');

/** Joins cards into whole 2880-byte blocks padded with blanks (FITS 4.0 sect. 4.4.1). */
export function headerBytes(cards: string[]): Uint8Array {
  const all = [...cards, END_CARD];
  const n = Math.ceil((all.length * CARD) / BLOCK) * BLOCK;
  const out = new Uint8Array(n).fill(0x20);
  let o = 0;
  for (const c of all) {
    if (c.length !== CARD) throw new RangeError(`card is ${c.length} characters, not 80: ${c}`);
    for (let i = 0; i < CARD; i++) out[o++] = c.charCodeAt(i);
  }
  return out;
}

// ---------------------------------------------------------------------------------------
// Parsing

/** Parses the value field of a card (columns 11-80); returns value, raw text and comment. */
export function parseValueField(field: string): { value?: HeaderValue; raw?: string; comment?: string; open?: boolean } {
  const s = field;
  let i = 0;
  while (i < s.length && s[i] === ' ') i++;
  if (i >= s.length) return {};
  if (s[i] === '/') return { comment: s.slice(i + 1).trim() };
  if (s[i] === "'") {
    let j = i + 1;
    let out = '';
    let closed = false;
    while (j < s.length) {
      if (s[j] === "'") {
        if (s[j + 1] === "'") { out += "'"; j += 2; continue; }
        closed = true;
        j++;
        break;
      }
      out += s[j++];
    }
    const after = s.slice(j);
    const slash = after.indexOf('/');
    const comment = slash >= 0 ? after.slice(slash + 1).trim() : undefined;
    // Trailing blanks in a string value are not significant (sect. 4.2.1.1); leading ones are.
    return { value: out.replace(/ +$/, ''), raw: out, comment, open: !closed };
  }
  const slash = s.indexOf('/', i);
  const raw = (slash >= 0 ? s.slice(i, slash) : s.slice(i)).trim();
  const comment = slash >= 0 ? s.slice(slash + 1).trim() : undefined;
  if (raw === 'T') return { value: true, raw, comment };
  if (raw === 'F') return { value: false, raw, comment };
  if (/^[+-]?\d+$/.test(raw)) {
    const n = Number(raw);
    return { value: Number.isSafeInteger(n) ? n : BigInt(raw), raw, comment };
  }
  const f = Number(raw.replace(/[dD]/, 'E'));
  if (raw !== '' && Number.isFinite(f)) return { value: f, raw, comment };
  return { raw, comment };
}

/** One card from 80 characters. */
export function parseCard(text: string): Card {
  const keyword = text.slice(0, 8).trimEnd();
  if (text.slice(8, 10) === '= ' && keyword !== 'COMMENT' && keyword !== 'HISTORY' && keyword !== '') {
    return { keyword, ...parseValueField(text.slice(10)) };
  }
  if (keyword === 'CONTINUE') return { keyword, ...parseValueField(text.slice(8)) };
  return { keyword, comment: text.slice(8).trimEnd() };
}

/**
 * Parses a list of 80-character cards, joining long strings continued over CONTINUE cards
 * (sect. 4.2.1.2: a string ending in '&' continues in the next CONTINUE card's string).
 */
export function parseCards(texts: string[]): Card[] {
  const cards: Card[] = [];
  for (const t of texts) {
    const c = parseCard(t);
    const prev = cards[cards.length - 1];
    if (c.keyword === 'CONTINUE' && prev && typeof prev.raw === 'string' && typeof prev.value === 'string' && /&$/.test(prev.value)) {
      const piece = typeof c.value === 'string' ? (c.raw ?? c.value) : '';
      const joined = prev.value.replace(/&$/, '') + piece;
      prev.value = joined.replace(/ +$/, '');
      prev.raw = joined;
      if (c.comment) prev.comment = prev.comment ? prev.comment + ' ' + c.comment : c.comment;
      continue;
    }
    cards.push(c);
  }
  return cards;
}
