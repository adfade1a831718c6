/**
 * The explorer's compact catalogue files (written at build time by `explorer-data.ts`, read in
 * the browser by the catalogue explorer). Pure: no Node or DOM APIs.
 *
 * `catalogue/data/manifest.json` lists the columns and their groups. Each group is split into
 * chunks of `chunkRows` rows, one binary file each (`g<group>-<chunk>.bin`): the magic `PXC1`,
 * a little-endian uint32 header length, a JSON header, then one buffer per column, each at an
 * offset that is a multiple of 8 so the browser can view it as a typed array without copying.
 * Group 0 (`core`) holds what the table opens with (id, position, redshift, flags, population,
 * parameter medians); the other groups are fetched when one of their columns is first shown
 * or filtered on.
 */

export const EXPLORER_FORMAT = 'posterity-explorer-1';
const MAGIC = [0x50, 0x58, 0x43, 0x31]; // "PXC1"

/** Storage types: f64/f32/i32/i16/u8 numbers, `cat` a u8 code into `categories`, `str` UTF-8 text. */
export type ExplorerType = 'f64' | 'f32' | 'i32' | 'i16' | 'u8' | 'cat' | 'str';

export interface ExplorerColumn {
  name: string;
  unit: string;
  description: string;
  type: ExplorerType;
  /** Index into `groups`. */
  group: number;
  categories?: string[];
  /** Decimal places every cell of a non-integer numeric column is shown with (`columnDecimals`). */
  decimals?: number;
}

export interface ExplorerManifest {
  format: typeof EXPLORER_FORMAT;
  rows: number;
  chunkRows: number;
  chunks: number;
  columns: ExplorerColumn[];
  groups: { name: string; columns: string[] }[];
}

export function chunkFileName(group: number, chunk: number): string {
  return `g${group}-${String(chunk).padStart(6, '0')}.bin`;
}

export type ChunkValues = Float64Array | Float32Array | Int32Array | Int16Array | Uint8Array | string[];

interface HeaderColumn {
  name: string;
  type: ExplorerType;
  offset: number;
  bytes: number;
  /** `str`: byte offset of the UTF-8 data (the Int32 offsets come first) and whether it is all ASCII. */
  data?: number;
  dataBytes?: number;
  ascii?: boolean;
}

const align8 = (n: number) => (n + 7) & ~7;

export interface ChunkColumnInput {
  name: string;
  type: ExplorerType;
  /** Numbers for numeric and `cat` types (cat: the code), strings for `str`. */
  values: ArrayLike<number> | string[];
}

/** Encode one chunk (rows of every column of one group). */
export function encodeChunk(rows: number, columns: ChunkColumnInput[]): Uint8Array {
  const enc = new TextEncoder();
  const parts: { offset: number; bytes: Uint8Array }[] = [];
  const header: HeaderColumn[] = [];
  let cursor = 0; // relative to the start of the body
  for (const c of columns) {
    if (c.type === 'str') {
      const strs = c.values as string[];
      const offsets = new Int32Array(rows + 1);
      const chunks: Uint8Array[] = [];
      let total = 0;
      let ascii = true;
      for (let i = 0; i < rows; i++) {
        const b = enc.encode(strs[i] ?? '');
        if (ascii) for (let k = 0; k < b.length; k++) if (b[k] > 127) ascii = false;
        chunks.push(b);
        total += b.length;
        offsets[i + 1] = total;
      }
      const data = new Uint8Array(total);
      let p = 0;
      for (const b of chunks) {
        data.set(b, p);
        p += b.length;
      }
      const offBytes = new Uint8Array(offsets.buffer);
      const h: HeaderColumn = { name: c.name, type: 'str', offset: cursor, bytes: offBytes.length, data: 0, dataBytes: total, ascii };
      parts.push({ offset: cursor, bytes: offBytes });
      cursor = align8(cursor + offBytes.length);
      h.data = cursor;
      parts.push({ offset: cursor, bytes: data });
      cursor = align8(cursor + data.length);
      header.push(h);
      continue;
    }
    const v = c.values as ArrayLike<number>;
    let arr: Float64Array | Float32Array | Int32Array | Int16Array | Uint8Array;
    switch (c.type) {
      case 'f64': arr = Float64Array.from({ length: rows }, (_, i) => v[i]); break;
      case 'f32': arr = Float32Array.from({ length: rows }, (_, i) => v[i]); break;
      case 'i32': arr = Int32Array.from({ length: rows }, (_, i) => v[i]); break;
      case 'i16': arr = Int16Array.from({ length: rows }, (_, i) => v[i]); break;
      default: arr = Uint8Array.from({ length: rows }, (_, i) => v[i]);
    }
    const bytes = new Uint8Array(arr.buffer, arr.byteOffset, arr.byteLength);
    header.push({ name: c.name, type: c.type, offset: cursor, bytes: bytes.length });
    parts.push({ offset: cursor, bytes });
    cursor = align8(cursor + bytes.length);
  }
  // header JSON, padded so the body starts at a multiple of 8
  let headText = JSON.stringify({ rows, columns: header });
  const headLen = enc.encode(headText).length;
  const bodyStart = align8(8 + headLen);
  headText += ' '.repeat(bodyStart - 8 - headLen);
  const head = enc.encode(headText);
  const out = new Uint8Array(bodyStart + cursor);
  out.set(MAGIC, 0);
  new DataView(out.buffer).setUint32(4, head.length, true);
  out.set(head, 8);
  for (const p of parts) out.set(p.bytes, bodyStart + p.offset);
  return out;
}

/** Decode one chunk file; numeric columns are views into `buf` (no copy). */
export function decodeChunk(buf: ArrayBuffer): { rows: number; columns: Map<string, ChunkValues> } {
  const u8 = new Uint8Array(buf);
  if (u8.length < 8 || MAGIC.some((m, i) => u8[i] !== m)) throw new Error('not an explorer chunk (bad magic)');
  const headLen = new DataView(buf).getUint32(4, true);
  const head = JSON.parse(new TextDecoder().decode(u8.subarray(8, 8 + headLen))) as { rows: number; columns: HeaderColumn[] };
  const body = 8 + headLen;
  const rows = head.rows;
  const columns = new Map<string, ChunkValues>();
  const dec = new TextDecoder();
  for (const c of head.columns) {
    const at = body + c.offset;
    switch (c.type) {
      case 'f64': columns.set(c.name, new Float64Array(buf, at, rows)); break;
      case 'f32': columns.set(c.name, new Float32Array(buf, at, rows)); break;
      case 'i32': columns.set(c.name, new Int32Array(buf, at, rows)); break;
      case 'i16': columns.set(c.name, new Int16Array(buf, at, rows)); break;
      case 'u8':
      case 'cat': columns.set(c.name, new Uint8Array(buf, at, rows)); break;
      case 'str': {
        const offsets = new Int32Array(buf, at, rows + 1);
        const data = u8.subarray(body + (c.data as number), body + (c.data as number) + (c.dataBytes as number));
        const out = new Array<string>(rows);
        if (c.ascii) {
          // one decode per chunk; slices share the decoded text
          const all = dec.decode(data);
          for (let i = 0; i < rows; i++) out[i] = all.slice(offsets[i], offsets[i + 1]);
        } else for (let i = 0; i < rows; i++) out[i] = dec.decode(data.subarray(offsets[i], offsets[i + 1]));
        columns.set(c.name, out);
        break;
      }
    }
  }
  return { rows, columns };
}
