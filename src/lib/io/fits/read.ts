/**
 * Streaming FITS binary-table reader. FITS Standard 4.0: sect. 3.3 (HDU layout, 2880-byte
 * blocks), 4.4 (mandatory keywords, data size), 7.3 (BINTABLE), 7.3.2 (TSCALn, TZEROn,
 * TNULLn), 7.3.3.1 (data representation, nulls), 5.2.5 (unsigned integers by TZERO).
 *
 * Reads header blocks until END, skips the data of other HDUs, then decodes the chosen
 * table in row batches so memory stays bounded by the batch size, not the file.
 */
import { PosterityError, problem, type Problem } from '../../core/problems.ts';
import { allocColumn, type Column, type ColumnKind, type ColumnMeta, type Table } from '../table.ts';
import { BLOCK, CARD, parseCards, type Card, type HeaderValue } from './header.ts';
import { openFitsSource, type ByteSource } from './source.ts';
import { parseTform, type Tform } from './tform.ts';

/** A PosterityError from one problem (severity error). */
function ioError(p: Omit<Problem, 'severity'>): PosterityError {
  return new PosterityError(problem(p));
}

export interface ReadFitsOptions {
  /** HDU index (0 = primary) or EXTNAME (case-insensitive); default: first BINTABLE. */
  hdu?: number | string;
  /** Rows per batch (default: about 8 MB of rows, at most 65536). */
  batchRows?: number;
  /** Name of the file in error messages (default: the path). */
  file?: string;
  /** Numeric columns with repeat > 1: 'reject' (default) or 'split' into name_1..name_n. */
  vectors?: 'reject' | 'split';
}

interface Hdu {
  index: number;
  cards: Card[];
  kw: Map<string, Card>;
  /** Byte offset of the header start in the (uncompressed) file. */
  headerStart: number;
  /** Byte offset of the data start. */
  dataStart: number;
  /** Data bytes without the block padding. */
  dataBytes: number;
  label: string;
}

type Decode = (view: DataView, bytes: Uint8Array, offset: number, out: Column, i: number) => void;

/** One output column produced from (part of) a BINTABLE field. */
interface OutPlan {
  name: string;
  kind: ColumnKind;
  meta: { unit?: string; description?: string; ucd?: string };
  /** Offset of this element from the row start. */
  offset: number;
  decode: Decode;
  nullable: boolean;
}

const decoder = new TextDecoder('utf-8');
const TWO63 = 1n << 63n;

function fail(file: string, message: string, extra: Partial<Problem> = {}): never {
  throw ioError({ message, file, ...extra });
}

function hduLabel(index: number, kw: Map<string, Card>): string {
  const ext = kw.get('EXTNAME')?.value;
  return index === 0 ? 'HDU 0 (primary)' : `HDU ${index}${typeof ext === 'string' && ext ? ` (EXTNAME '${ext}')` : ''}`;
}

function intKey(kw: Map<string, Card>, key: string, label: string, file: string, dflt?: number): number {
  const v = kw.get(key)?.value;
  if (v === undefined && dflt !== undefined) return dflt;
  if (typeof v !== 'number' || !Number.isInteger(v)) {
    fail(file, `${label}: keyword ${key} is missing or not an integer`, { expected: 'an integer', got: v === undefined ? 'nothing' : String(v) });
  }
  return v;
}

/** Reads one header; null at a clean end of file. Sect. 4.4.1: cards until END, whole blocks. */
async function readHeader(src: ByteSource, index: number, file: string): Promise<Hdu | null> {
  const headerStart = src.position;
  const texts: string[] = [];
  let ended = false;
  while (!ended) {
    const block = await src.read(BLOCK);
    if (block.length === 0 && texts.length === 0) return null;
    if (index === 0 && texts.length === 0 && String.fromCharCode(...block.subarray(0, 9)) !== 'SIMPLE  =') {
      fail(file, 'not a FITS file: it does not start with a SIMPLE card (FITS 4.0 sect. 4.4.1.1)', { got: JSON.stringify(new TextDecoder().decode(block.subarray(0, 20))) });
    }
    if (block.length < BLOCK) {
      fail(file, `truncated: HDU ${index} header starting at byte ${headerStart} ends at byte ${src.position} before its END card`);
    }
    for (let c = 0; c < BLOCK / CARD; c++) {
      let t = '';
      for (let i = c * CARD; i < (c + 1) * CARD; i++) {
        const b = block[i]!;
        if (b < 0x20 || b > 0x7e) {
          if (texts.length === 0 && index > 0) return null; // not an extension: trailing special records
          fail(file, `corrupt: HDU ${index} header has a non-ASCII byte 0x${b.toString(16).padStart(2, '0')} at byte ${headerStart + texts.length * CARD + (i - c * CARD)}`);
        }
        t += String.fromCharCode(b);
      }
      if (t.startsWith('END') && t.slice(3).trim() === '') { ended = true; break; }
      texts.push(t);
    }
  }
  const first = texts[0]?.slice(0, 8).trimEnd();
  if (index === 0 && first !== 'SIMPLE') fail(file, 'not a FITS file: the first card is not SIMPLE (FITS 4.0 sect. 4.4.1.1)', { got: JSON.stringify(texts[0]?.slice(0, 30) ?? '') });
  if (index > 0 && first !== 'XTENSION') return null;
  const cards = parseCards(texts);
  const kw = new Map<string, Card>();
  for (const c of cards) if (c.value !== undefined && !kw.has(c.keyword)) kw.set(c.keyword, c);
  const label = hduLabel(index, kw);
  const bitpix = intKey(kw, 'BITPIX', label, file);
  const naxis = intKey(kw, 'NAXIS', label, file);
  let elems = naxis === 0 ? 0 : 1;
  for (let k = 1; k <= naxis; k++) elems *= intKey(kw, `NAXIS${k}`, label, file);
  const pcount = intKey(kw, 'PCOUNT', label, file, 0);
  const gcount = intKey(kw, 'GCOUNT', label, file, 1);
  // Sect. 4.4.1.1 and 7.3.1: |BITPIX| x GCOUNT x (PCOUNT + product of NAXISn) bits.
  const dataBytes = naxis === 0 ? 0 : (Math.abs(bitpix) / 8) * gcount * (pcount + elems);
  return { index, cards, kw, headerStart, dataStart: src.position, dataBytes, label };
}

function isSelected(h: Hdu, want: number | string | undefined): boolean {
  const xt = h.kw.get('XTENSION')?.value;
  if (want === undefined) return xt === 'BINTABLE';
  if (typeof want === 'number') return h.index === want;
  const name = h.kw.get('EXTNAME')?.value;
  return typeof name === 'string' && name.trim().toUpperCase() === want.trim().toUpperCase();
}

function num(v: HeaderValue | undefined): number | undefined {
  if (typeof v === 'number') return v;
  if (typeof v === 'bigint') return Number(v);
  return undefined;
}

function bigOf(v: HeaderValue | undefined): bigint | undefined {
  if (typeof v === 'bigint') return v;
  if (typeof v === 'number' && Number.isInteger(v)) return BigInt(v);
  return undefined;
}

/** Builds the decoders of one BINTABLE field (TFORMn and its TSCAL/TZERO/TNULL). */
function planField(h: Hdu, n: number, fieldOffset: number, tf: Tform, opts: ReadFitsOptions, file: string): OutPlan[] {
  const get = (k: string) => h.kw.get(`${k}${n}`)?.value;
  const ttype = get('TTYPE');
  const name = typeof ttype === 'string' && ttype.trim() !== '' ? ttype.trim() : `col${n}`;
  const unit = get('TUNIT');
  const desc = get('TCOMM') ?? get('TDESC');
  const ucd = get('TUCD');
  const meta: OutPlan['meta'] = {};
  if (typeof unit === 'string' && unit.trim()) meta.unit = unit.trim();
  if (typeof desc === 'string' && desc.trim()) meta.description = desc.trim();
  if (typeof ucd === 'string' && ucd.trim()) meta.ucd = ucd.trim();
  const where = `${h.label}, column ${n} "${name}"`;
  if (tf.repeat === 0) return [];
  const code = tf.code;
  if (code === 'C' || code === 'M') fail(file, `${where}: complex columns (TFORM ${code}) are not supported`, { column: name });
  if (code === 'P' || code === 'Q') fail(file, `${where}: variable-length array columns (TFORM ${code}) are not supported; store one value per row`, { column: name });

  if (code === 'A') {
    const w = tf.repeat;
    // Sect. 7.3.3.1: the string ends at the first NUL; trailing blanks are not significant.
    const dec: Decode = (_v, b, o, out, i) => {
      let end = o;
      const stop = o + w;
      let ascii = true;
      while (end < stop && b[end] !== 0) { if (b[end]! > 0x7e) ascii = false; end++; }
      while (end > o && b[end - 1] === 0x20) end--;
      let s: string;
      if (ascii) { s = ''; for (let k = o; k < end; k++) s += String.fromCharCode(b[k]!); }
      else s = decoder.decode(b.subarray(o, end));
      (out.values as string[])[i] = s;
    };
    return [{ name, kind: 'string', meta, offset: fieldOffset, decode: dec, nullable: false }];
  }

  const tscal = num(get('TSCAL')) ?? 1;
  const tzeroV = get('TZERO');
  const tzero = num(tzeroV) ?? 0;
  const tzBig = bigOf(tzeroV) ?? 0n;
  const tnullV = get('TNULL');
  const tnull = bigOf(tnullV);
  const integer = code === 'B' || code === 'I' || code === 'J' || code === 'K';
  const scaled = tscal !== 1 || tzero !== 0;

  // Element decoder at a byte offset, for one output column.
  let kind!: ColumnKind;
  let elem!: (v: DataView, b: Uint8Array, o: number, out: Column, i: number) => void;
  let elemOffset = (k: number) => k * tf.elementBytes;
  const nullable = integer && tnull !== undefined || code === 'L';
  const nullNum = tnull !== undefined ? Number(tnull) : NaN;
  const mark = (out: Column, i: number) => { out.valid![i] = 0; };

  switch (code) {
    case 'L':
      kind = 'bool';
      elem = (_v, b, o, out, i) => {
        const x = b[o];
        if (x === 0x54) (out.values as Uint8Array)[i] = 1;
        else if (x === 0x46) (out.values as Uint8Array)[i] = 0;
        else if (x === 0) mark(out, i);
        else fail(file, `${where}: logical byte 0x${x!.toString(16)} is not T, F or 0 (sect. 7.3.3.1)`, { column: name });
      };
      break;
    case 'X':
      kind = 'uint8';
      elemOffset = (k) => (k >> 3);
      break;
    case 'B':
      if (!scaled) { kind = 'uint8'; elem = (_v, b, o, out, i) => { const x = b[o]!; if (x === nullNum) mark(out, i); (out.values as Uint8Array)[i] = x; }; }
      else if (tscal === 1 && tzero === -128) { kind = 'int16'; elem = (_v, b, o, out, i) => { const x = b[o]!; if (x === nullNum) mark(out, i); (out.values as Int16Array)[i] = x - 128; }; }
      else { kind = 'float64'; elem = (_v, b, o, out, i) => { const x = b[o]!; (out.values as Float64Array)[i] = x === nullNum ? NaN : tzero + tscal * x; }; }
      break;
    case 'I':
      if (!scaled) { kind = 'int16'; elem = (v, _b, o, out, i) => { const x = v.getInt16(o); if (x === nullNum) mark(out, i); (out.values as Int16Array)[i] = x; }; }
      else if (tscal === 1 && tzero === 32768) { kind = 'int32'; elem = (v, _b, o, out, i) => { const x = v.getInt16(o); if (x === nullNum) mark(out, i); (out.values as Int32Array)[i] = x + 32768; }; }
      else { kind = 'float64'; elem = (v, _b, o, out, i) => { const x = v.getInt16(o); (out.values as Float64Array)[i] = x === nullNum ? NaN : tzero + tscal * x; }; }
      break;
    case 'J':
      if (!scaled) { kind = 'int32'; elem = (v, _b, o, out, i) => { const x = v.getInt32(o); if (x === nullNum) mark(out, i); (out.values as Int32Array)[i] = x; }; }
      else if (tscal === 1 && tzero === 2147483648) { kind = 'int64'; elem = (v, _b, o, out, i) => { const x = v.getInt32(o); if (x === nullNum) mark(out, i); (out.values as BigInt64Array)[i] = BigInt(x) + 2147483648n; }; }
      else { kind = 'float64'; elem = (v, _b, o, out, i) => { const x = v.getInt32(o); (out.values as Float64Array)[i] = x === nullNum ? NaN : tzero + tscal * x; }; }
      break;
    case 'K':
      if (!scaled) { kind = 'int64'; elem = (v, _b, o, out, i) => { const x = v.getBigInt64(o); if (x === tnull) mark(out, i); (out.values as BigInt64Array)[i] = x; }; }
      else if (tscal === 1 && tzBig === TWO63) {
        // Unsigned 64-bit (sect. 5.2.5): beyond int64, so kept exactly as decimal text.
        kind = 'string';
        elem = (v, _b, o, out, i) => { const x = v.getBigInt64(o); if (x === tnull) mark(out, i); (out.values as string[])[i] = (x + TWO63).toString(); };
      } else if (tscal === 1) {
        kind = 'string';
        elem = (v, _b, o, out, i) => { const x = v.getBigInt64(o); if (x === tnull) mark(out, i); (out.values as string[])[i] = (x + tzBig).toString(); };
      } else { kind = 'float64'; elem = (v, _b, o, out, i) => { const x = v.getBigInt64(o); (out.values as Float64Array)[i] = x === tnull ? NaN : tzero + tscal * Number(x); }; }
      break;
    case 'E':
      if (!scaled) { kind = 'float32'; elem = (v, _b, o, out, i) => { (out.values as Float32Array)[i] = v.getFloat32(o); }; }
      else { kind = 'float64'; elem = (v, _b, o, out, i) => { (out.values as Float64Array)[i] = tzero + tscal * v.getFloat32(o); }; }
      break;
    case 'D':
      if (!scaled) { kind = 'float64'; elem = (v, _b, o, out, i) => { (out.values as Float64Array)[i] = v.getFloat64(o); }; }
      else { kind = 'float64'; elem = (v, _b, o, out, i) => { (out.values as Float64Array)[i] = tzero + tscal * v.getFloat64(o); }; }
      break;
  }
  const outNullable = nullable && kind !== 'float64';

  if (tf.repeat > 1 && opts.vectors !== 'split') {
    fail(file, `${where}: vector column ${name} has ${tf.repeat} elements per row (TFORM ${tf.repeat}${code}); wide layouts with a vector of draws per cell are not supported, store one draw per row (or read with vectors: 'split')`, { column: name, expected: 'one value per cell', got: `${tf.repeat} values per cell` });
  }
  const plans: OutPlan[] = [];
  for (let k = 0; k < tf.repeat; k++) {
    let dec: Decode;
    if (code === 'X') {
      const bit = 7 - (k & 7);
      // Sect. 7.3.3.1: bits fill bytes from the most significant bit.
      dec = (_v, b, o, out, i) => { (out.values as Uint8Array)[i] = (b[o]! >> bit) & 1; };
    } else dec = elem;
    plans.push({
      name: tf.repeat > 1 ? `${name}_${k + 1}` : name,
      kind: kind,
      meta,
      offset: fieldOffset + elemOffset(k),
      decode: dec,
      nullable: outNullable,
    });
  }
  return plans;
}

const STRUCTURAL = /^(SIMPLE|XTENSION|BITPIX|NAXIS\d*|PCOUNT|GCOUNT|TFIELDS|EXTEND|END|CONTINUE|LONGSTRN|COMMENT|HISTORY|T(TYPE|FORM|UNIT|NULL|SCAL|ZERO|DISP|DIM|COMM|DESC|UCD|BCOL)\d+)$/;

function tableMeta(h: Hdu): Record<string, string | number | boolean> {
  const meta: Record<string, string | number | boolean> = {};
  for (const c of h.cards) {
    if (c.value === undefined || STRUCTURAL.test(c.keyword) || c.keyword in meta) continue;
    meta[c.keyword] = typeof c.value === 'bigint' ? c.value.toString() : c.value;
  }
  return meta;
}

function emptyBatch(plans: OutPlan[], n: number, meta: Table['meta']): Table {
  const columns = plans.map((p) => {
    const c = allocColumn(p.name, p.kind, n, p.meta);
    if (p.nullable) c.valid = new Uint8Array(n).fill(1);
    return c;
  });
  return { columns, numRows: n, meta };
}

/** Drops an all-ones validity mask so columns without nulls carry none. */
function tidy(t: Table): Table {
  for (const c of t.columns) if (c.valid && c.valid.every((x) => x === 1)) delete c.valid;
  return t;
}

/**
 * Streams a BINTABLE in row batches. `pathOrFile` is a path to a `.fits` or gzip-compressed
 * `.fits.gz` file. Errors are PosterityErrors naming the file, the HDU and the byte offset.
 */
export async function* readFitsBatches(bytesOrPath: string, opts: ReadFitsOptions = {}): AsyncGenerator<Table> {
  const file = opts.file ?? bytesOrPath;
  const src = await openFitsSource(bytesOrPath, file);
  try {
    const seen: string[] = [];
    for (let index = 0; ; index++) {
      const h = await readHeader(src, index, file);
      if (!h) break;
      seen.push(`${h.label}${h.kw.get('XTENSION') ? ` ${String(h.kw.get('XTENSION')!.value)}` : ''}`);
      const padded = Math.ceil(h.dataBytes / BLOCK) * BLOCK;
      if (!isSelected(h, opts.hdu)) {
        const skipped = await src.skip(padded);
        if (skipped < h.dataBytes) {
          fail(file, `truncated: ${h.label} data should span bytes ${h.dataStart} to ${h.dataStart + h.dataBytes}, but the file ends at byte ${h.dataStart + skipped}`);
        }
        if (skipped < padded) break;
        continue;
      }
      if (h.kw.get('XTENSION')?.value !== 'BINTABLE') {
        fail(file, `${h.label} is not a binary table`, { expected: "XTENSION = 'BINTABLE'", got: h.index === 0 ? 'the primary HDU' : String(h.kw.get('XTENSION')?.value) });
      }
      yield* readTable(src, h, opts, file);
      return;
    }
    const what = opts.hdu === undefined ? 'no BINTABLE HDU' : typeof opts.hdu === 'number' ? `no HDU ${opts.hdu}` : `no HDU with EXTNAME '${opts.hdu}'`;
    fail(file, `${what} in the file`, { expected: opts.hdu === undefined ? 'a binary table extension' : String(opts.hdu), got: seen.join('; ') || 'no HDUs' });
  } finally {
    await src.close();
  }
}

async function* readTable(src: ByteSource, h: Hdu, opts: ReadFitsOptions, file: string): AsyncGenerator<Table> {
  const rowBytes = intKey(h.kw, 'NAXIS1', h.label, file);
  const nRows = intKey(h.kw, 'NAXIS2', h.label, file);
  const tfields = intKey(h.kw, 'TFIELDS', h.label, file);
  const plans: OutPlan[] = [];
  let offset = 0;
  for (let n = 1; n <= tfields; n++) {
    const raw = h.kw.get(`TFORM${n}`)?.value;
    const tf = typeof raw === 'string' ? parseTform(raw) : null;
    if (!tf) fail(file, `${h.label}: TFORM${n} is missing or invalid (sect. 7.3.1)`, { expected: 'rT with T one of L X B I J K A E D C M P Q', got: raw === undefined ? 'nothing' : String(raw) });
    plans.push(...planField(h, n, offset, tf, opts, file));
    offset += tf.width;
  }
  if (offset !== rowBytes) {
    fail(file, `corrupt: ${h.label}: the TFORMn widths add up to ${offset} bytes but NAXIS1 is ${rowBytes}`);
  }
  const meta = tableMeta(h);
  const batchRows = Math.max(1, opts.batchRows ?? Math.min(65536, Math.max(1, Math.floor((8 << 20) / Math.max(1, rowBytes)))));
  if (nRows === 0) {
    yield emptyBatch(plans, 0, meta);
    return;
  }
  for (let start = 0; start < nRows; start += batchRows) {
    const n = Math.min(batchRows, nRows - start);
    const want = n * rowBytes;
    const bytes = await src.read(want);
    if (bytes.length < want) {
      const at = h.dataStart + start * rowBytes + bytes.length;
      fail(file, `truncated: ${h.label} should hold ${nRows} rows of ${rowBytes} bytes (data ending at byte ${h.dataStart + nRows * rowBytes}), but the file ends at byte ${at}`, { row: start + Math.floor(bytes.length / rowBytes) + 1 });
    }
    const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
    const batch = emptyBatch(plans, n, meta);
    for (let p = 0; p < plans.length; p++) {
      const plan = plans[p]!;
      const out = batch.columns[p]!;
      const dec = plan.decode;
      let i = 0;
      try {
        for (let o = plan.offset; i < n; i++, o += rowBytes) dec(view, bytes, o, out, i);
      } catch (e) {
        if (e instanceof PosterityError) {
          throw new PosterityError(e.problems.map((q) => ({ ...q, row: q.row ?? start + i + 1 })));
        }
        throw e;
      }
    }
    yield tidy(batch);
  }
}

/** Reads a whole BINTABLE: the batches of `readFitsBatches` concatenated. */
export async function readFits(filePath: string, opts: ReadFitsOptions = {}): Promise<Table> {
  const batches: Table[] = [];
  for await (const b of readFitsBatches(filePath, opts)) batches.push(b);
  return concatTables(batches);
}

/** Concatenates batches with the same columns into one table. */
export function concatTables(batches: Table[]): Table {
  if (batches.length === 1) return batches[0]!;
  if (batches.length === 0) return { columns: [], numRows: 0 };
  const numRows = batches.reduce((s, b) => s + b.numRows, 0);
  const first = batches[0]!;
  const columns = first.columns.map((c0, j) => {
    const meta: ColumnMeta = {};
    if (c0.unit !== undefined) meta.unit = c0.unit;
    if (c0.description !== undefined) meta.description = c0.description;
    if (c0.ucd !== undefined) meta.ucd = c0.ucd;
    const out = allocColumn(c0.name, c0.kind, numRows, meta);
    const anyNull = batches.some((b) => b.columns[j]!.valid);
    if (anyNull) out.valid = new Uint8Array(numRows).fill(1);
    let o = 0;
    for (const b of batches) {
      const c = b.columns[j]!;
      if (Array.isArray(out.values)) for (let i = 0; i < b.numRows; i++) (out.values as string[])[o + i] = (c.values as string[])[i]!;
      else (out.values as Exclude<typeof out.values, string[]>).set(c.values as never, o);
      if (c.valid) out.valid!.set(c.valid, o);
      o += b.numRows;
    }
    return out;
  });
  return { columns, numRows, meta: first.meta };
}
