/**
 * BINTABLE column formats (TFORMn). FITS Standard 4.0, sect. 7.3.1 and Table 18:
 * `rT[a]` with repeat count r (default 1) and type code T.
 */

export type TformCode = 'L' | 'X' | 'B' | 'I' | 'J' | 'K' | 'A' | 'E' | 'D' | 'C' | 'M' | 'P' | 'Q';

export interface Tform {
  repeat: number;
  code: TformCode;
  /** Bytes the field occupies in each row. */
  width: number;
  /** Bytes of one element (X: bits are packed, see width). */
  elementBytes: number;
}

/** Bytes per element by type code (Table 18). P and Q are heap descriptors (8 and 16 bytes). */
const ELEMENT_BYTES: Record<TformCode, number> = {
  L: 1, X: 1, B: 1, I: 2, J: 4, K: 8, A: 1, E: 4, D: 8, C: 8, M: 16, P: 8, Q: 16,
};

/** Parses a TFORMn value; returns null when it is not a valid format. */
export function parseTform(text: string): Tform | null {
  const m = /^\s*(\d*)([LXBIJKAEDCMPQ])(.*)$/.exec(text);
  if (!m) return null;
  const repeat = m[1] === '' ? 1 : Number(m[1]);
  const code = m[2] as TformCode;
  const elementBytes = ELEMENT_BYTES[code];
  // X packs bits into whole bytes (sect. 7.3.3.1); P and Q take one descriptor whatever the repeat.
  const width = code === 'X' ? Math.ceil(repeat / 8) : code === 'P' || code === 'Q' ? (repeat > 0 ? elementBytes : 0) : repeat * elementBytes;
  return { repeat, code, width, elementBytes };
}
