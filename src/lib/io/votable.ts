/**
 * VOTable 1.4 (IVOA Recommendation, 2019) writer and reader.
 *
 * Writer: `version="1.4"` in the v1.3 namespace (VOTable 1.4 sect. 1.2: the namespace did not
 * change), explicit IDs on RESOURCE, TABLE, PARAM and FIELD, FIELDs with datatype, unit, ucd
 * and DESCRIPTION, a COOSYS referenced by the position FIELDs (sect. 3.1, 4.1), and the rows as
 * TABLEDATA (sect. 5.1) or as a base64 BINARY2 stream with a per-row null bitmask (sect. 5.5).
 * Output is byte-deterministic. Units are written as given: callers pass VOUnits
 * (`withFormatUnits(table, 'votable')` in units.ts turns canonical labels into them).
 *
 * Reader: TABLEDATA, BINARY and BINARY2 of scalar columns, enough to read our own output back
 * and ordinary tables from elsewhere; the whole document is held in memory.
 */
import { open, readFile, rename, rm } from 'node:fs/promises';
import path from 'node:path';
import { PosterityError, problem, type Problem } from '../core/problems.ts';
import { allocColumn, type Column, type ColumnKind, type Table } from './table.ts';

/** A PosterityError from one problem (severity error). */
function ioError(p: Omit<Problem, 'severity'>): PosterityError {
  return new PosterityError(problem(p));
}

export const VOTABLE_NS = 'http://www.ivoa.net/xml/VOTable/v1.3';

export interface WriteVOTableOptions {
  resourceName: string;
  /** TABLE `name` (default: the resource name). RESOURCE and TABLE carry explicit IDs made from their names. */
  tableName?: string;
  description?: string;
  coosys?: { id: string; system: 'ICRS'; epoch?: string };
  /** Columns that hold the right ascension and declination; their FIELDs get `ref` to the COOSYS. */
  raDecColumns?: [string, string];
  /** 'auto' (default): TABLEDATA up to `binaryThresholdRows` rows, BINARY2 above. */
  serialization?: 'TABLEDATA' | 'BINARY2' | 'auto';
  binaryThresholdRows?: number;
  params?: Record<string, string>;
}

/** VOTable datatype of each column kind (VOTable 1.4 sect. 2.1, Table 1). */
const DATATYPE: Record<ColumnKind, string> = {
  float64: 'double', float32: 'float', int64: 'long', int32: 'int', int16: 'short',
  uint8: 'unsignedByte', bool: 'boolean', string: 'char',
};

// ---------------------------------------------------------------------------------------
// XML text

/** XML 1.0 sect. 2.2: characters a document may hold at all; others become U+FFFD. */
function xmlChars(s: string): string {
  // eslint-disable-next-line no-control-regex
  return s.replace(/[^\x09\x0A\x0D\x20-\uD7FF\uE000-\uFFFD\u{10000}-\u{10FFFF}]/gu, '\uFFFD');
}

export function escapeText(s: string): string {
  return xmlChars(s).replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;');
}

export function escapeAttr(s: string): string {
  return escapeText(s).replace(/"/g, '&quot;').replace(/'/g, '&apos;').replace(/\t/g, '&#9;').replace(/\n/g, '&#10;').replace(/\r/g, '&#13;');
}

/** An xs:ID (an NCName) from a column name, unique in the document. */
function makeId(name: string, used: Set<string>): string {
  let id = name.replace(/[^A-Za-z0-9._-]/g, '_');
  if (!/^[A-Za-z_]/.test(id)) id = '_' + id;
  let out = id;
  for (let k = 2; used.has(out); k++) out = `${id}_${k}`;
  used.add(out);
  return out;
}

function isAscii(values: string[], valid: Uint8Array | undefined, n: number): boolean {
  for (let i = 0; i < n; i++) {
    if (valid && valid[i] === 0) continue;
    const s = values[i] ?? '';
    for (let k = 0; k < s.length; k++) if (s.charCodeAt(k) > 0x7e || s.charCodeAt(k) < 0x20) return false;
  }
  return true;
}

function isNullAt(col: Column, i: number): boolean {
  if (col.valid && col.valid[i] === 0) return true;
  if (col.kind === 'float64' || col.kind === 'float32') return Number.isNaN((col.values as Float64Array)[i]!);
  return false;
}

/** TABLEDATA text of a float (sect. 5.1: NaN is null here, infinities are +Inf and -Inf). */
function floatText(v: number): string {
  if (v === Infinity) return '+Inf';
  if (v === -Infinity) return '-Inf';
  return String(v);
}

function cellText(col: Column, i: number): string {
  const v = col.values[i]!;
  switch (col.kind) {
    case 'float64':
    case 'float32': return floatText(v as number);
    case 'bool': return v ? 'T' : 'F';
    case 'string': return escapeText(v as string);
    default: return String(v);
  }
}

// ---------------------------------------------------------------------------------------
// Writer

interface FieldInfo {
  col: Column;
  datatype: string;
}

function fieldInfos(table: Table): FieldInfo[] {
  return table.columns.map((col) => {
    let datatype = DATATYPE[col.kind];
    // 'char' is 7-bit ASCII (sect. 2.1); other text needs 'unicodeChar'.
    if (col.kind === 'string' && !isAscii(col.values as string[], col.valid, table.numRows)) datatype = 'unicodeChar';
    return { col, datatype };
  });
}

function headerXml(table: Table, fields: FieldInfo[], opts: WriteVOTableOptions, file: string): string {
  const lines: string[] = [];
  lines.push('<?xml version="1.0" encoding="UTF-8"?>');
  lines.push(`<VOTABLE version="1.4" xmlns="${VOTABLE_NS}" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance" xsi:schemaLocation="${VOTABLE_NS} http://www.ivoa.net/xml/VOTable/v1.3">`);
  // Explicit IDs everywhere an element has a name: without one, readers make an ID from the
  // name themselves (astropy's validator reports that as W03).
  const used = new Set<string>(opts.coosys ? [opts.coosys.id] : []);
  const tableName = opts.tableName ?? opts.resourceName;
  const resourceId = makeId(`${tableName}_resource`, used);
  const tableId = makeId(tableName, used);
  lines.push(` <RESOURCE ID="${resourceId}" name="${escapeAttr(opts.resourceName)}" type="results">`);
  if (opts.description) lines.push(`  <DESCRIPTION>${escapeText(opts.description)}</DESCRIPTION>`);
  let coosysId: string | undefined;
  if (opts.coosys) {
    if (!/^[A-Za-z_][A-Za-z0-9._-]*$/.test(opts.coosys.id)) {
      throw ioError({ message: 'COOSYS ID must be an XML name', file, field: 'coosys.id', got: JSON.stringify(opts.coosys.id) });
    }
    const epoch = opts.coosys.epoch;
    if (epoch !== undefined && !/^[JB]?[0-9]+([.][0-9]*)?$/.test(epoch)) {
      throw ioError({ message: 'COOSYS epoch is not in the VOTable form', file, field: 'coosys.epoch', expected: 'e.g. J2000 or J2016.0 (VOTable 1.4 sect. 3.1)', got: JSON.stringify(epoch) });
    }
    coosysId = opts.coosys.id;
    lines.push(`  <COOSYS ID="${escapeAttr(coosysId)}" system="${opts.coosys.system}"${epoch ? ` epoch="${escapeAttr(epoch)}"` : ''}/>`);
  }
  const refs = new Set<string>();
  if (opts.raDecColumns) {
    if (!coosysId) throw ioError({ message: 'raDecColumns needs a coosys to refer to', file, field: 'raDecColumns' });
    for (const name of opts.raDecColumns) {
      if (!table.columns.some((c) => c.name === name)) {
        throw ioError({ message: 'position column not in the table', file, field: 'raDecColumns', column: name });
      }
      refs.add(name);
    }
  }
  lines.push(`  <TABLE ID="${tableId}" name="${escapeAttr(tableName)}" nrows="${table.numRows}">`);
  for (const [k, v] of Object.entries(opts.params ?? {})) {
    lines.push(`   <PARAM name="${escapeAttr(k)}" ID="${makeId(k, used)}" datatype="char" arraysize="*" value="${escapeAttr(v)}"/>`);
  }
  for (const f of fields) {
    const c = f.col;
    let attrs = `name="${escapeAttr(c.name)}" ID="${makeId(c.name, used)}" datatype="${f.datatype}"`;
    if (c.kind === 'string') attrs += ' arraysize="*"';
    if (c.unit) attrs += ` unit="${escapeAttr(c.unit)}"`;
    if (c.ucd) attrs += ` ucd="${escapeAttr(c.ucd)}"`;
    if (refs.has(c.name)) attrs += ` ref="${escapeAttr(coosysId!)}"`;
    if (c.description) lines.push(`   <FIELD ${attrs}>\n    <DESCRIPTION>${escapeText(c.description)}</DESCRIPTION>\n   </FIELD>`);
    else lines.push(`   <FIELD ${attrs}/>`);
  }
  return lines.join('\n') + '\n';
}

const FOOTER_TABLEDATA = '    </TABLEDATA>\n   </DATA>\n  </TABLE>\n </RESOURCE>\n</VOTABLE>\n';
const FOOTER_BINARY2 = '\n     </STREAM>\n    </BINARY2>\n   </DATA>\n  </TABLE>\n </RESOURCE>\n</VOTABLE>\n';

/** Collects output text and flushes it to the file in large writes. */
class Sink {
  private parts: string[] = [];
  private size = 0;
  constructor(private fh: import('node:fs/promises').FileHandle) {}
  async push(s: string): Promise<void> {
    this.parts.push(s);
    this.size += s.length;
    if (this.size > 1 << 20) await this.flush();
  }
  async flush(): Promise<void> {
    if (this.parts.length === 0) return;
    const text = this.parts.join('');
    this.parts = [];
    this.size = 0;
    await this.fh.write(text);
  }
}

async function writeTabledata(sink: Sink, table: Table): Promise<void> {
  await sink.push('   <DATA>\n    <TABLEDATA>\n');
  const cols = table.columns;
  for (let i = 0; i < table.numRows; i++) {
    let row = '     <TR>';
    for (const c of cols) row += isNullAt(c, i) ? '<TD/>' : `<TD>${cellText(c, i)}</TD>`;
    await sink.push(row + '</TR>\n');
  }
  await sink.push(FOOTER_TABLEDATA);
}

const utf8 = new TextEncoder();

/** Bytes of one BINARY2 row (sect. 5.5): null bitmask, then each field big-endian. */
function binaryRow(fields: FieldInfo[], i: number, maskBytes: number): Uint8Array {
  let size = maskBytes;
  const texts: (Uint8Array | string | null)[] = [];
  for (const f of fields) {
    const c = f.col;
    if (c.kind === 'string') {
      const s = isNullAt(c, i) ? '' : (c.values as string[])[i] ?? '';
      if (f.datatype === 'char') { const b = utf8.encode(s); texts.push(b); size += 4 + b.length; }
      else { texts.push(s); size += 4 + 2 * s.length; }
    } else {
      texts.push(null);
      size += c.kind === 'float64' || c.kind === 'int64' ? 8 : c.kind === 'float32' || c.kind === 'int32' ? 4 : c.kind === 'int16' ? 2 : 1;
    }
  }
  const out = new Uint8Array(size);
  const dv = new DataView(out.buffer);
  let o = maskBytes;
  fields.forEach((f, j) => {
    const c = f.col;
    const nul = isNullAt(c, i);
    // Sect. 5.5: bit j of the mask, most significant bit first, flags field j as null.
    if (nul) out[j >> 3]! |= 0x80 >> (j & 7);
    const v = c.values[i];
    switch (c.kind) {
      case 'float64': dv.setFloat64(o, nul ? NaN : (v as number)); o += 8; break;
      case 'float32': dv.setFloat32(o, nul ? NaN : (v as number)); o += 4; break;
      case 'int64': dv.setBigInt64(o, nul ? 0n : (v as bigint)); o += 8; break;
      case 'int32': dv.setInt32(o, nul ? 0 : (v as number)); o += 4; break;
      case 'int16': dv.setInt16(o, nul ? 0 : (v as number)); o += 2; break;
      case 'uint8': out[o] = nul ? 0 : (v as number); o += 1; break;
      case 'bool': out[o] = nul ? 0x3f : v ? 0x54 : 0x46; o += 1; break;
      case 'string': {
        const t = texts[j]!;
        if (typeof t === 'string') {
          // unicodeChar: UCS-2 code units, big-endian (sect. 2.1).
          dv.setUint32(o, t.length); o += 4;
          for (let k = 0; k < t.length; k++, o += 2) dv.setUint16(o, t.charCodeAt(k));
        } else {
          dv.setUint32(o, t.length); o += 4;
          out.set(t, o); o += t.length;
        }
        break;
      }
    }
  });
  return out;
}

async function writeBinary2(sink: Sink, table: Table, fields: FieldInfo[]): Promise<void> {
  await sink.push('   <DATA>\n    <BINARY2>\n     <STREAM encoding="base64">\n');
  const maskBytes = Math.ceil(fields.length / 8);
  // Base64 in lines of 76 characters: 57 input bytes each (RFC 2045 sect. 6.8).
  const LINE = 57;
  let first = true;
  const CHUNK = 57 * 1024;
  let buf = new Uint8Array(CHUNK * 2);
  let len = 0;
  const emit = async (final: boolean) => {
    const whole = final ? len : len - (len % LINE);
    if (whole === 0) return;
    const lines: string[] = [];
    for (let o = 0; o < whole; o += LINE) lines.push(Buffer.from(buf.subarray(o, Math.min(whole, o + LINE))).toString('base64'));
    await sink.push((first ? '' : '\n') + lines.join('\n'));
    first = false;
    buf.copyWithin(0, whole, len);
    len -= whole;
  };
  for (let i = 0; i < table.numRows; i++) {
    const row = binaryRow(fields, i, maskBytes);
    if (len + row.length > buf.length) {
      const bigger = new Uint8Array(Math.max(buf.length * 2, len + row.length));
      bigger.set(buf.subarray(0, len));
      buf = bigger;
    }
    buf.set(row, len);
    len += row.length;
    if (len >= CHUNK) await emit(false);
  }
  await emit(true);
  await sink.push(FOOTER_BINARY2);
}

/** Writes `table` as a VOTable 1.4 document. */
export async function writeVOTable(filePath: string, table: Table, opts: WriteVOTableOptions): Promise<void> {
  const file = filePath;
  const fields = fieldInfos(table);
  const header = headerXml(table, fields, opts, file);
  const mode = opts.serialization ?? 'auto';
  const binary = mode === 'BINARY2' || (mode === 'auto' && table.numRows > (opts.binaryThresholdRows ?? 20000));
  const tmp = path.join(path.dirname(filePath), `.posterity-tmp-${process.pid}-${path.basename(filePath)}`);
  const fh = await open(tmp, 'w');
  try {
    const sink = new Sink(fh);
    await sink.push(header);
    if (binary) await writeBinary2(sink, table, fields);
    else await writeTabledata(sink, table);
    await sink.flush();
    await fh.close();
    await rename(tmp, filePath);
  } catch (e) {
    await fh.close().catch(() => {});
    await rm(tmp, { force: true });
    throw e;
  }
}

// ---------------------------------------------------------------------------------------
// A small XML parser: elements, attributes, text, CDATA; comments, PIs and DOCTYPE skipped.

interface XmlElement {
  name: string;
  attrs: Record<string, string>;
  children: XmlElement[];
  text: string;
}

const ENTITIES: Record<string, string> = { amp: '&', lt: '<', gt: '>', quot: '"', apos: "'" };

function unescapeXml(s: string): string {
  if (!s.includes('&')) return s;
  return s.replace(/&(#x[0-9a-fA-F]+|#[0-9]+|[a-zA-Z]+);/g, (m, e: string) => {
    if (e[0] === '#') return String.fromCodePoint(e[1] === 'x' ? parseInt(e.slice(2), 16) : parseInt(e.slice(1), 10));
    return ENTITIES[e] ?? m;
  });
}

function localName(n: string): string {
  const k = n.indexOf(':');
  return k >= 0 ? n.slice(k + 1) : n;
}

function parseXml(src: string, file: string): XmlElement {
  const root: XmlElement = { name: '#root', attrs: {}, children: [], text: '' };
  const stack: XmlElement[] = [root];
  let i = 0;
  const lineAt = (pos: number) => src.slice(0, pos).split('\n').length;
  const bad = (msg: string, pos: number): never => { throw ioError({ message: `not well-formed XML at line ${lineAt(pos)}: ${msg}`, file }); };
  while (i < src.length) {
    const lt = src.indexOf('<', i);
    const top = stack[stack.length - 1]!;
    if (lt < 0) { top.text += unescapeXml(src.slice(i)); break; }
    if (lt > i) top.text += unescapeXml(src.slice(i, lt));
    if (src.startsWith('<!--', lt)) { const e = src.indexOf('-->', lt); if (e < 0) bad('unclosed comment', lt); i = e + 3; continue; }
    if (src.startsWith('<![CDATA[', lt)) { const e = src.indexOf(']]>', lt); if (e < 0) bad('unclosed CDATA', lt); top.text += src.slice(lt + 9, e); i = e + 3; continue; }
    if (src.startsWith('<?', lt)) { const e = src.indexOf('?>', lt); if (e < 0) bad('unclosed processing instruction', lt); i = e + 2; continue; }
    if (src.startsWith('<!', lt)) { const e = src.indexOf('>', lt); if (e < 0) bad('unclosed declaration', lt); i = e + 1; continue; }
    const gt = src.indexOf('>', lt);
    if (gt < 0) bad('unclosed tag', lt);
    if (src[lt + 1] === '/') {
      const name = localName(src.slice(lt + 2, gt).trim());
      const el = stack.pop()!;
      if (stack.length === 0 || el.name !== name) bad(`</${name}> does not close <${el.name}>`, lt);
      i = gt + 1;
      continue;
    }
    // Attribute values may hold '>' only escaped in our output, but allow it quoted anyway.
    let end = lt + 1;
    let quoteCh = '';
    for (; end < src.length; end++) {
      const ch = src[end]!;
      if (quoteCh) { if (ch === quoteCh) quoteCh = ''; }
      else if (ch === '"' || ch === "'") quoteCh = ch;
      else if (ch === '>') break;
    }
    if (end >= src.length) bad('unclosed tag', lt);
    const selfClose = src[end - 1] === '/';
    const inner = src.slice(lt + 1, selfClose ? end - 1 : end);
    const m = /^([^\s/>]+)/.exec(inner);
    if (!m) bad('missing element name', lt);
    const el: XmlElement = { name: localName(m![1]!), attrs: {}, children: [], text: '' };
    const re = /([^\s=]+)\s*=\s*("([^"]*)"|'([^']*)')/g;
    let a: RegExpExecArray | null;
    const rest = inner.slice(m![1]!.length);
    while ((a = re.exec(rest))) el.attrs[localName(a[1]!)] = unescapeXml(a[3] ?? a[4] ?? '');
    top.children.push(el);
    if (!selfClose) stack.push(el);
    i = end + 1;
  }
  if (stack.length !== 1) bad(`<${stack[stack.length - 1]!.name}> is never closed`, src.length);
  return root;
}

function findFirst(el: XmlElement, name: string): XmlElement | undefined {
  for (const c of el.children) {
    if (c.name === name) return c;
    const d = findFirst(c, name);
    if (d) return d;
  }
  return undefined;
}

// ---------------------------------------------------------------------------------------
// Reader

const KIND: Record<string, ColumnKind> = {
  double: 'float64', float: 'float32', long: 'int64', int: 'int32', short: 'int16',
  unsignedByte: 'uint8', boolean: 'bool', char: 'string', unicodeChar: 'string',
};

interface FieldSpec {
  name: string;
  datatype: string;
  kind: ColumnKind;
  /** For char and unicodeChar: fixed length, or -1 for variable ('*' or 'n*'). */
  length: number;
  meta: { unit?: string; description?: string; ucd?: string };
}

function fieldSpecs(tableEl: XmlElement, file: string): FieldSpec[] {
  return tableEl.children.filter((c) => c.name === 'FIELD').map((f) => {
    const name = f.attrs.name ?? f.attrs.ID ?? '';
    const datatype = f.attrs.datatype ?? '';
    const kind = KIND[datatype];
    if (!kind) throw ioError({ message: `FIELD datatype "${datatype}" is not supported`, file, column: name, expected: Object.keys(KIND).join(', ') });
    const arraysize = f.attrs.arraysize;
    let length = 1;
    if (kind === 'string') {
      if (arraysize === undefined) length = 1;
      else if (arraysize.endsWith('*')) length = -1;
      else if (/^\d+$/.test(arraysize)) length = Number(arraysize);
      else throw ioError({ message: `multidimensional char arraysize "${arraysize}" is not supported`, file, column: name });
    } else if (arraysize !== undefined && arraysize !== '1') {
      throw ioError({ message: `array column (arraysize "${arraysize}") is not supported; store one value per row`, file, column: name });
    }
    const meta: FieldSpec['meta'] = {};
    if (f.attrs.unit) meta.unit = f.attrs.unit;
    if (f.attrs.ucd) meta.ucd = f.attrs.ucd;
    const d = f.children.find((c) => c.name === 'DESCRIPTION');
    if (d) meta.description = d.text.trim();
    return { name, datatype, kind, length, meta };
  });
}

function newColumns(specs: FieldSpec[], n: number): Column[] {
  return specs.map((s) => {
    const c = allocColumn(s.name, s.kind, n, s.meta);
    if (s.kind !== 'float64' && s.kind !== 'float32') c.valid = new Uint8Array(n).fill(1);
    return c;
  });
}

function setNull(c: Column, i: number): void {
  if (c.kind === 'float64' || c.kind === 'float32') (c.values as Float64Array)[i] = NaN;
  else c.valid![i] = 0;
}

function parseTd(c: Column, i: number, text: string, file: string): void {
  const t = c.kind === 'string' ? text : text.trim();
  if (t === '' && c.kind !== 'string') { setNull(c, i); return; }
  const bad = (): never => { throw ioError({ message: 'cell does not parse', file, row: i + 1, column: c.name, expected: `a ${c.kind} value`, got: JSON.stringify(t) }); };
  switch (c.kind) {
    case 'float64':
    case 'float32': {
      const v = t === '+Inf' || t === 'Inf' || t === 'Infinity' || t === '+Infinity' ? Infinity : t === '-Inf' || t === '-Infinity' ? -Infinity : Number(t);
      if (Number.isNaN(v) && t !== 'NaN') bad();
      (c.values as Float64Array)[i] = v;
      break;
    }
    case 'int64': {
      if (!/^[+-]?\d+$/.test(t) && !/^0x[0-9a-fA-F]+$/.test(t)) bad();
      (c.values as BigInt64Array)[i] = BigInt.asIntN(64, BigInt(t.replace(/^\+/, '')));
      break;
    }
    case 'int32':
    case 'int16':
    case 'uint8': {
      if (!/^[+-]?\d+$/.test(t) && !/^0x[0-9a-fA-F]+$/.test(t)) bad();
      (c.values as Int32Array)[i] = Number(t);
      break;
    }
    case 'bool': {
      const u = t.toUpperCase();
      if (u === 'T' || u === 'TRUE' || u === '1') (c.values as Uint8Array)[i] = 1;
      else if (u === 'F' || u === 'FALSE' || u === '0') (c.values as Uint8Array)[i] = 0;
      else if (u === '?' || u === ' ') c.valid![i] = 0;
      else bad();
      break;
    }
    case 'string':
      (c.values as string[])[i] = text;
      break;
  }
}

function readTabledata(el: XmlElement, specs: FieldSpec[], file: string): Column[] {
  const rows = el.children.filter((c) => c.name === 'TR');
  const cols = newColumns(specs, rows.length);
  rows.forEach((tr, i) => {
    const tds = tr.children.filter((c) => c.name === 'TD');
    if (tds.length !== specs.length) throw ioError({ message: 'row has the wrong number of cells', file, row: i + 1, expected: String(specs.length), got: String(tds.length) });
    tds.forEach((td, j) => parseTd(cols[j]!, i, td.text, file));
  });
  return cols;
}

const utf8Decoder = new TextDecoder('utf-8');

/** Decodes a BINARY (sect. 5.4) or BINARY2 (sect. 5.5, with null bitmask) stream. */
function readBinary(el: XmlElement, specs: FieldSpec[], binary2: boolean, file: string): Column[] {
  const stream = el.children.find((c) => c.name === 'STREAM');
  if (!stream) throw ioError({ message: `${el.name} has no STREAM`, file });
  if ((stream.attrs.encoding ?? '') !== 'base64') {
    throw ioError({ message: 'only base64 STREAMs inside the document are supported', file, expected: 'encoding="base64"', got: JSON.stringify(stream.attrs.encoding ?? stream.attrs.href ?? '') });
  }
  const bytes = Buffer.from(stream.text.replace(/\s+/g, ''), 'base64');
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const maskBytes = binary2 ? Math.ceil(specs.length / 8) : 0;
  type Cell = { kind: ColumnKind; v: number | bigint | string; nul: boolean };
  const rows: Cell[][] = [];
  let o = 0;
  const need = (k: number) => {
    if (o + k > bytes.length) throw ioError({ message: `${el.name} stream ends inside row ${rows.length + 1} (byte ${o} of ${bytes.length})`, file, row: rows.length + 1 });
  };
  while (o < bytes.length) {
    need(maskBytes);
    const mask = bytes.subarray(o, o + maskBytes);
    o += maskBytes;
    const row: Cell[] = [];
    specs.forEach((s, j) => {
      const nul = binary2 && (mask[j >> 3]! & (0x80 >> (j & 7))) !== 0;
      let v: number | bigint | string;
      switch (s.datatype) {
        case 'double': need(8); v = dv.getFloat64(o); o += 8; break;
        case 'float': need(4); v = dv.getFloat32(o); o += 4; break;
        case 'long': need(8); v = dv.getBigInt64(o); o += 8; break;
        case 'int': need(4); v = dv.getInt32(o); o += 4; break;
        case 'short': need(2); v = dv.getInt16(o); o += 2; break;
        case 'unsignedByte': need(1); v = bytes[o]!; o += 1; break;
        case 'boolean': need(1); v = bytes[o]!; o += 1; break;
        case 'char':
        case 'unicodeChar': {
          let n = s.length;
          if (n < 0) { need(4); n = dv.getUint32(o); o += 4; }
          const w = s.datatype === 'char' ? 1 : 2;
          need(n * w);
          if (w === 1) {
            let end = o + n;
            const z = bytes.indexOf(0, o);
            if (s.length >= 0 && z >= 0 && z < end) end = z;
            v = utf8Decoder.decode(bytes.subarray(o, end));
          } else {
            let t = '';
            for (let k = 0; k < n; k++) t += String.fromCharCode(dv.getUint16(o + 2 * k));
            v = s.length >= 0 ? t.replace(/\0.*$/s, '') : t;
          }
          o += n * w;
          break;
        }
        default: throw ioError({ message: `datatype ${s.datatype} not supported`, file, column: s.name });
      }
      row.push({ kind: s.kind, v, nul });
    });
    rows.push(row);
  }
  const cols = newColumns(specs, rows.length);
  rows.forEach((row, i) => row.forEach((cell, j) => {
    const c = cols[j]!;
    if (cell.nul) { setNull(c, i); return; }
    if (c.kind === 'bool') {
      const b = cell.v as number;
      if (b === 0x54 || b === 0x74 || b === 0x31) (c.values as Uint8Array)[i] = 1;
      else if (b === 0x46 || b === 0x66 || b === 0x30) (c.values as Uint8Array)[i] = 0;
      else c.valid![i] = 0;
    } else if (c.kind === 'string') (c.values as string[])[i] = cell.v as string;
    else if (c.kind === 'int64') (c.values as BigInt64Array)[i] = cell.v as bigint;
    else (c.values as Float64Array)[i] = cell.v as number;
  }));
  return cols;
}

/** Reads the first TABLE of a VOTable document (TABLEDATA, BINARY or BINARY2). */
export async function readVOTable(filePath: string, opts: { file?: string } = {}): Promise<Table> {
  const file = opts.file ?? filePath;
  let text: string;
  try {
    text = await readFile(filePath, 'utf8');
  } catch (e) {
    throw ioError({ message: `cannot read VOTable (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`, file });
  }
  const doc = parseXml(text, file);
  const vot = doc.children.find((c) => c.name === 'VOTABLE');
  if (!vot) throw ioError({ message: 'not a VOTable: no VOTABLE root element', file });
  const tableEl = findFirst(vot, 'TABLE');
  if (!tableEl) throw ioError({ message: 'the VOTable has no TABLE', file });
  const specs = fieldSpecs(tableEl, file);
  const meta: Record<string, string | number | boolean> = {};
  const collectParams = (el: XmlElement) => { for (const p of el.children) if (p.name === 'PARAM' && p.attrs.name) meta[p.attrs.name] = p.attrs.value ?? ''; };
  const resource = findFirst(vot, 'RESOURCE');
  if (resource) collectParams(resource);
  collectParams(tableEl);
  const data = tableEl.children.find((c) => c.name === 'DATA');
  let columns: Column[];
  if (!data) columns = newColumns(specs, 0);
  else {
    const body = data.children.find((c) => c.name === 'TABLEDATA' || c.name === 'BINARY' || c.name === 'BINARY2');
    if (!body) throw ioError({ message: 'DATA holds no TABLEDATA, BINARY or BINARY2 (FITS-in-VOTable is not supported)', file });
    columns = body.name === 'TABLEDATA' ? readTabledata(body, specs, file) : readBinary(body, specs, body.name === 'BINARY2', file);
  }
  for (const c of columns) if (c.valid && c.valid.every((x) => x === 1)) delete c.valid;
  const numRows = columns[0]?.values.length ?? 0;
  return { columns, numRows, meta };
}
