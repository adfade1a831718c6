/**
 * The file of a partial summary: the summaries of the objects of one partition of the
 * catalogue, written by `summarisePartition` and combined by `mergePartials`
 * (`summarise-partition.ts`). A whole catalogue's summaries are the same file with part 0 of 1,
 * so "merged equals one pass" is a byte comparison.
 *
 * Layout (little-endian):
 *   8 bytes   magic `PSTYSUM1`
 *   uint32    length H of the header
 *   H bytes   header, JSON (UTF-8): format, tool, bundle checksums, partition, shapes and the
 *             list of arrays with their type, length and byte offset
 *   ...       zero padding to a multiple of 8, then each array (padded to 8 bytes), in the
 *             header's order; per-parameter arrays are [param][member], pop draws
 *             [param][member][draw], covariances [member][k][k]
 *   ...       corner data, when present: one JSON line per member with draws, in member order,
 *             byte offsets in the array `chartsOffsets`
 * Members are catalogue indices in increasing order; every value array is indexed by member.
 */
import { open, readFile, rename, rm } from 'node:fs/promises';
import { PosterityError } from '../core/problems.ts';
import type { InputFile } from '../bundle/load.ts';
import { STAT_KEYS, type PopulationDraws, type SummaryTable } from './summarise.ts';

export const PARTIAL_MAGIC = 'PSTYSUM1';
export const PARTIAL_FORMAT = 'posterity.summary-partial';
export const PARTIAL_FORMAT_VERSION = 1;

type ArrayType = 'f64' | 'i32' | 'u8';
type Typed = Float64Array | Int32Array | Uint8Array;

export interface PartialHeader {
  format: typeof PARTIAL_FORMAT;
  formatVersion: number;
  tool: { name: string; version: string };
  bundle: { configSha256: string; inputs: InputFile[] };
  partition: { part: number; of: number; rule: string };
  /** Objects in the catalogue. */
  n: number;
  k: number;
  m: number;
  params: string[];
  hasLogPrior: boolean;
  members: number;
  charts: boolean;
  arrays: { name: string; type: ArrayType; length: number; offset: number }[];
  chartsSection: { offset: number; length: number } | null;
}

export type PartialMeta = Pick<PartialHeader, 'tool' | 'bundle' | 'partition' | 'params'>;

/** Corner data of the members that have it, in member order: their catalogue indices, the byte length of each JSON line, and the lines. */
export interface ChartsSource {
  index: Int32Array;
  lengths: Float64Array;
  lines: () => AsyncIterable<Uint8Array>;
}

const ELEMENT: Record<ArrayType, number> = { f64: 8, i32: 4, u8: 1 };
const pad8 = (x: number) => (x + 7) & ~7;

function typeOf(a: Typed): ArrayType {
  return a instanceof Float64Array ? 'f64' : a instanceof Int32Array ? 'i32' : 'u8';
}

/** Values of `src` (object-indexed, `width` values per object) for the members, [member][width]. */
function gather<A extends Typed>(src: A, members: Int32Array, width: number): A {
  const out = new (src.constructor as { new (n: number): A })(members.length * width);
  for (let o = 0; o < members.length; o++) out.set(src.subarray(members[o] * width, (members[o] + 1) * width), o * width);
  return out;
}

/** [param][object] arrays to one [param][member] array. */
function gatherParams<A extends Typed>(cols: A[], members: Int32Array, width = 1): A {
  const nm = members.length;
  const out = new (cols[0].constructor as { new (n: number): A })(cols.length * nm * width);
  cols.forEach((c, j) => out.set(gather(c, members, width), j * nm * width));
  return out;
}

/** The named arrays of a partial, in file order. */
function partialArrays(t: SummaryTable, pop: PopulationDraws, members: Int32Array, charts: ChartsSource | null): [string, Typed][] {
  const essKind = Uint8Array.from(members, (i) => (t.essKind[i] === 'autocorrelation' ? 1 : 0));
  const arrays: [string, Typed][] = [['members', members]];
  for (const key of STAT_KEYS) arrays.push([key, gatherParams(t[key], members)]);
  arrays.push(
    ['multimodal', gatherParams(t.multimodal, members)],
    ['cov', gather(t.cov, members, t.k * t.k)],
    ['nSamples', gather(t.nSamples, members, 1)],
    ['ess', gather(t.ess, members, 1)],
    ['essKind', essKind],
    ['chi2', gather(t.chi2, members, 1)],
    ['dof', gather(t.dof, members, 1)],
    ['chi2Pvalue', gather(t.chi2Pvalue, members, 1)],
    ['flags', gather(t.flags, members, 1)],
    ['summariesOnly', gather(t.summariesOnly, members, 1)],
    ['popValues', gatherParams(pop.values, members, pop.m)],
    ['popLogPrior', gather(pop.logPrior, members, pop.m)],
  );
  if (charts) {
    const offsets = new Float64Array(charts.index.length + 1);
    for (let c = 0; c < charts.index.length; c++) offsets[c + 1] = offsets[c] + charts.lengths[c];
    arrays.push(['chartsIndex', charts.index], ['chartsOffsets', offsets]);
  }
  return arrays;
}

/**
 * Write a partial file: to a temporary name beside it, then renamed into place, so a reader
 * never sees half a file. The same inputs give the same bytes.
 */
export async function writePartial(
  file: string,
  meta: PartialMeta,
  t: SummaryTable,
  pop: PopulationDraws,
  members: Int32Array,
  charts: ChartsSource | null,
): Promise<PartialHeader> {
  const arrays = partialArrays(t, pop, members, charts);
  const chartsBytes = charts ? charts.lengths.reduce((s, v) => s + v, 0) : 0;
  // offsets are relative to the end of the padded header, so the header does not depend on its own length
  let at = 0;
  const descr = arrays.map(([name, a]) => {
    const d = { name, type: typeOf(a), length: a.length, offset: at };
    at = pad8(at + a.byteLength);
    return d;
  });
  const header: PartialHeader = {
    format: PARTIAL_FORMAT,
    formatVersion: PARTIAL_FORMAT_VERSION,
    tool: meta.tool,
    bundle: meta.bundle,
    partition: meta.partition,
    n: t.n,
    k: t.k,
    m: pop.m,
    params: meta.params,
    hasLogPrior: pop.hasLogPrior,
    members: members.length,
    charts: !!charts,
    arrays: descr,
    chartsSection: charts ? { offset: at, length: chartsBytes } : null,
  };
  const head = Buffer.from(JSON.stringify(header), 'utf8');
  const pre = Buffer.alloc(pad8(12 + head.length));
  pre.write(PARTIAL_MAGIC, 0, 'latin1');
  pre.writeUInt32LE(head.length, 8);
  head.copy(pre, 12);
  const tmp = `${file}.tmp-${process.pid}`;
  const fh = await open(tmp, 'w');
  try {
    await fh.write(pre);
    for (const [, a] of arrays) {
      const bytes = new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
      await fh.write(bytes);
      const extra = pad8(a.byteLength) - a.byteLength;
      if (extra) await fh.write(new Uint8Array(extra));
    }
    if (charts) for await (const line of charts.lines()) await fh.write(line);
    await fh.close();
    await rename(tmp, file);
  } catch (e) {
    await fh.close().catch(() => {});
    await rm(tmp, { force: true });
    throw e;
  }
  return header;
}

export interface PartialFile {
  file: string;
  header: PartialHeader;
  arrays: Map<string, Typed>;
  /** The corner-data section (JSON lines), when present. */
  charts: Buffer | null;
}

function bad(file: string, message: string, expected?: string, got?: string): PosterityError {
  return new PosterityError({ severity: 'error', file, message, ...(expected ? { expected } : {}), ...(got ? { got } : {}) });
}

/** Read and check the framing of a partial file. */
export async function readPartial(file: string): Promise<PartialFile> {
  let buf: Buffer;
  try {
    buf = await readFile(file);
  } catch (e) {
    throw bad(file, `cannot read the partial summary (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`);
  }
  if (buf.length < 12 || buf.toString('latin1', 0, 8) !== PARTIAL_MAGIC) throw bad(file, 'not a partial summary file', `a file starting with "${PARTIAL_MAGIC}"`, `${buf.length} bytes starting with ${JSON.stringify(buf.toString('latin1', 0, Math.min(8, buf.length)))}`);
  const hl = buf.readUInt32LE(8);
  let header: PartialHeader;
  try {
    header = JSON.parse(buf.toString('utf8', 12, 12 + hl)) as PartialHeader;
  } catch {
    throw bad(file, 'the header of the partial summary is not valid JSON (truncated file?)');
  }
  if (header.format !== PARTIAL_FORMAT || header.formatVersion !== PARTIAL_FORMAT_VERSION)
    throw bad(file, 'unsupported partial summary format', `${PARTIAL_FORMAT} version ${PARTIAL_FORMAT_VERSION}`, `${header.format} version ${header.formatVersion}`);
  const base = pad8(12 + hl);
  const arrays = new Map<string, Typed>();
  for (const d of header.arrays) {
    const start = base + d.offset;
    const end = start + d.length * ELEMENT[d.type];
    if (end > buf.length) throw bad(file, 'the partial summary is truncated', `at least ${end} bytes`, `${buf.length} bytes`);
    const bytes = buf.buffer.slice(buf.byteOffset + start, buf.byteOffset + end);
    arrays.set(d.name, d.type === 'f64' ? new Float64Array(bytes) : d.type === 'i32' ? new Int32Array(bytes) : new Uint8Array(bytes));
  }
  let charts: Buffer | null = null;
  if (header.chartsSection) {
    const start = base + header.chartsSection.offset;
    const end = start + header.chartsSection.length;
    if (end > buf.length) throw bad(file, 'the partial summary is truncated', `at least ${end} bytes`, `${buf.length} bytes`);
    charts = buf.subarray(start, end);
  }
  return { file, header, arrays, charts };
}

/** Place a partial's values into whole-catalogue arrays (the inverse of `writePartial`'s gathering). */
export function scatterPartial(p: PartialFile, t: SummaryTable, pop: PopulationDraws): void {
  const a = (name: string) => {
    const v = p.arrays.get(name);
    if (!v) throw bad(p.file, `the partial summary has no array "${name}"`);
    return v;
  };
  const members = a('members') as Int32Array;
  const nm = members.length;
  const k = t.k;
  const m = pop.m;
  const perParam = (src: Typed, dst: Typed[], width = 1) => {
    for (let j = 0; j < dst.length; j++)
      for (let o = 0; o < nm; o++) dst[j].set(src.subarray((j * nm + o) * width, (j * nm + o + 1) * width), members[o] * width);
  };
  const perObject = (src: Typed, dst: Typed, width = 1) => {
    for (let o = 0; o < nm; o++) dst.set(src.subarray(o * width, (o + 1) * width), members[o] * width);
  };
  for (const key of STAT_KEYS) perParam(a(key), t[key]);
  perParam(a('multimodal'), t.multimodal);
  perObject(a('cov'), t.cov, k * k);
  perObject(a('nSamples'), t.nSamples);
  perObject(a('ess'), t.ess);
  const essKind = a('essKind');
  for (let o = 0; o < nm; o++) t.essKind[members[o]] = essKind[o] ? 'autocorrelation' : 'kish';
  perObject(a('chi2'), t.chi2);
  perObject(a('dof'), t.dof);
  perObject(a('chi2Pvalue'), t.chi2Pvalue);
  perObject(a('flags'), t.flags);
  perObject(a('summariesOnly'), t.summariesOnly);
  perParam(a('popValues'), pop.values, m);
  perObject(a('popLogPrior'), pop.logPrior, m);
}
