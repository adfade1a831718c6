/**
 * UCD1+ checks (IVOA "UCD1+ controlled vocabulary", UCDList 1.5, and the UCD standard): a UCD
 * is words joined by ';', the first the primary word, the rest secondary. Each word in the
 * list carries a syntax code saying where it may stand:
 *   P  primary position only
 *   S  secondary positions only
 *   Q  any position
 *   E  a quantity that may be followed by a spectral (em.*) word; any position
 *   C  a colour, may be followed by two spectral words; any position
 *   V  a vector, may be followed by a frame or axis word; any position
 * Words compare without regard to case. Pure string work: the word list is passed in, so
 * the application ships or loads it as it likes and never needs Python.
 */

export type UcdSyntaxCode = 'P' | 'S' | 'Q' | 'E' | 'C' | 'V';

const CODES = new Set<string>(['P', 'S', 'Q', 'E', 'C', 'V']);
const PRIMARY = new Set<UcdSyntaxCode>(['P', 'Q', 'E', 'C', 'V']);
const SECONDARY = new Set<UcdSyntaxCode>(['S', 'Q', 'E', 'C', 'V']);

/** A word: dot-separated atoms of letters, digits, '-' and '_', each starting with a letter or digit. */
const WORD = /^[A-Za-z0-9][A-Za-z0-9_-]*(\.[A-Za-z0-9][A-Za-z0-9_-]*)*$/;

/**
 * Parses the IVOA word list (`ucd1p-words.txt`): one word a line as `code | word | description`.
 * Blank lines and lines starting with '#' are skipped. Keys are lower-cased words.
 */
export function parseUcdWordList(text: string): Map<string, UcdSyntaxCode> {
  const words = new Map<string, UcdSyntaxCode>();
  for (const line of text.split(/\r?\n/)) {
    const t = line.trim();
    if (t === '' || t.startsWith('#')) continue;
    const parts = t.split('|').map((s) => s.trim());
    const code = parts[0]?.toUpperCase() ?? '';
    const word = parts[1] ?? '';
    if (parts.length < 2 || !CODES.has(code) || !WORD.test(word)) continue;
    words.set(word.toLowerCase(), code as UcdSyntaxCode);
  }
  return words;
}

/** Checks one UCD; returns a message saying what is wrong, or null when it is valid. */
export function checkUcd(ucd: string, words: Map<string, UcdSyntaxCode>): string | null {
  const bad = /[^A-Za-z0-9_.;-]/.exec(ucd);
  if (bad) return `UCD "${ucd}" has the invalid character ${JSON.stringify(bad[0])}`;
  const parts = ucd.split(';');
  for (let i = 0; i < parts.length; i++) {
    const w = parts[i]!;
    if (!WORD.test(w)) return `UCD "${ucd}": ${w === '' ? 'empty word' : `"${w}" is not a well-formed word`}`;
    const code = words.get(w.toLowerCase());
    if (!code) return `UCD "${ucd}": unknown word "${w}"`;
    if (i === 0 && !PRIMARY.has(code)) return `UCD "${ucd}": "${w}" may only be a secondary word, not the first (code ${code})`;
    if (i > 0 && !SECONDARY.has(code)) return `UCD "${ucd}": "${w}" may only be the primary (first) word (code ${code})`;
  }
  return null;
}
