/**
 * Object ids become URL-safe, file-system-safe slugs through one reversible escape
 * of the id alone: ASCII letters, digits, `-` and `_` stay; every other UTF-8 byte
 * (including `.`, `/`, `~`, `+` and space) becomes `~` and two upper-case hex digits.
 * The same scheme is used at every scale, so links never depend on catalogue size.
 */

const SAFE = /^[A-Za-z0-9_-]$/;
const HEX = '0123456789ABCDEF';

export function slugOf(id: string): string {
  let out = '';
  for (const ch of id) {
    if (SAFE.test(ch)) {
      out += ch;
      continue;
    }
    for (const b of new TextEncoder().encode(ch)) out += '~' + HEX[b >> 4] + HEX[b & 15];
  }
  return out;
}

/** Inverse of `slugOf`; returns null for text that no id maps to. */
export function idOfSlug(slug: string): string | null {
  const bytes: number[] = [];
  for (let i = 0; i < slug.length; i++) {
    const ch = slug[i];
    if (ch === '~') {
      const h = slug.slice(i + 1, i + 3);
      if (!/^[0-9A-F]{2}$/.test(h)) return null;
      bytes.push(parseInt(h, 16));
      i += 2;
    } else if (SAFE.test(ch)) bytes.push(ch.charCodeAt(0));
    else return null;
  }
  try {
    const id = new TextDecoder('utf-8', { fatal: true }).decode(new Uint8Array(bytes));
    return slugOf(id) === slug ? id : null;
  } catch {
    return null;
  }
}
