/**
 * The samples table read as a stream of batches of whole objects, never whole in memory.
 *
 * Grouped input (each object's draws in one run of rows, the usual output of a fitter): one
 * pass; an object is handed on as soon as the next id starts, so memory holds one decoded
 * reader batch and the objects being assembled, and objects are handed on in file order.
 * `groupedBatches` throws `NotGrouped` the moment an id comes back after its run ended,
 * and the caller starts again with
 * `spilledBatches`: one pass that appends every row to one of P temporary files by a
 * contiguous range of catalogue index, then each file is read back whole, its rows grouped by
 * a stable counting sort, and its objects handed on in catalogue order. That costs a second
 * decode of the part read before the problem was found, plus writing and reading back every
 * row once (8 bytes per value); memory is bounded by one spill file (`budgetBytes`).
 *
 * An Arrow IPC file (the file format, columns of the kinds `arrow-ipc.ts` lays views over) is
 * read without decoding: blocks of rows straight into fresh memory, typed arrays over them,
 * rows grouped into objects by comparing neighbouring ids byte for byte (one string per object
 * is decoded, to find it in the catalogue), and each block handed to a worker thread whole,
 * transferred, with the objects' row ranges; only an object cut by the end of a block is
 * copied (into the next batch). Other formats go through the general readers.
 *
 * Rows are checked as the loader checks them (unknown ids, weights, finite values), with the
 * same messages, file rows and columns: ids here, the rest in the worker threads that
 * summarise the rows (`checkRows` in summarise-kernel.ts), or here for the spill route.
 */
import { mkdtemp, open, readFile, rm, stat } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Bundle } from '../bundle/load.ts';
import { sampleColumnOf } from '../bundle/load.ts';
import { ProblemSink, toFloat64, toIds, toInt32 } from '../bundle/coerce.ts';
import { IpcFile, type IpcBlock, type IpcColumn, type IpcField } from '../io/arrow-ipc.ts';
import { formatOf } from '../io/read.ts';
import type { TableRefConfig } from '../bundle/schema.ts';
import { PosterityError, type Problem } from '../core/problems.ts';
import { readTableBatches } from '../io/read.ts';
import type { Column, Table } from '../io/table.ts';
import { anyPositiveWeight, checkRows, zeroWeightProblem, type ColumnSet, type ObjectBatch } from './summarise-kernel.ts';

/** Where each of our sample columns sits in the file (the file's names). */
export interface SampleLayout {
  path: string;
  file: string;
  ref: TableRefConfig;
  id: string;
  /** The weight column read (linear weights win over log weights, as in the loader). */
  weight: string;
  logWeights: boolean;
  params: string[];
  /** Our parameter names, for messages. */
  paramNames: string[];
  logPrior: string | null;
  chain: string | null;
  /** Every file column the summaries read. */
  columns: string[];
  bytes: number;
}

const theirName = (ref: TableRefConfig, ours: string) => ref.columns[ours] ?? ours;

/** Reads the header of the samples file and checks the columns the summaries need. */
export async function sampleLayout(bundle: Bundle): Promise<SampleLayout> {
  const ref = bundle.config.tables.samples;
  if (!ref) throw new PosterityError({ severity: 'error', file: 'release.json', field: 'tables.samples', message: 'no samples table' });
  const path = join(bundle.dir, ref.path);
  let headers: string[] = [];
  const gen = readTableBatches(path, { file: ref.path, batchRows: 1 });
  try {
    const first = await gen.next();
    if (!first.done) headers = first.value.columns.map((c) => c.name);
  } finally {
    await gen.return(undefined);
  }
  const has = (ours: string) => headers.includes(theirName(ref, ours));
  const problems = [];
  const missing = (ours: string, description: string) => {
    const theirs = ref.columns[ours];
    problems.push({
      severity: 'error' as const,
      file: ref.path,
      column: theirs ?? ours,
      message: theirs ? `required column is missing (mapped from our "${ours}")` : 'required column is missing',
      expected: description,
      got: `columns ${headers.join(', ')}`,
    });
  };
  if (!has('id')) missing('id', 'object identifier');
  const params = bundle.config.parameters.map((p) => {
    const ours = sampleColumnOf(p);
    if (!has(ours)) missing(ours, p.description);
    return theirName(ref, ours);
  });
  const weight = has('weight') ? theirName(ref, 'weight') : has('log_weight') ? theirName(ref, 'log_weight') : null;
  if (!weight)
    problems.push({ severity: 'error' as const, file: ref.path, column: theirName(ref, 'weight'), message: 'the samples table needs a weight or a log_weight column', got: `columns ${headers.join(', ')}` });
  if (problems.length) throw new PosterityError(problems);
  const logPrior = has('log_prior') ? theirName(ref, 'log_prior') : null;
  const chain = has('chain') ? theirName(ref, 'chain') : null;
  const id = theirName(ref, 'id');
  const columns = [id, ...params, weight!, ...(logPrior ? [logPrior] : []), ...(chain ? [chain] : [])];
  return { path, file: ref.path, ref, id, weight: weight!, logWeights: !has('weight'), params, paramNames: bundle.config.parameters.map((p) => p.name), logPrior, chain, columns, bytes: (await stat(path)).size };
}

/** Thrown by `groupedBatches` when the rows of an object are not contiguous. */
export class NotGrouped extends Error {
  constructor(readonly row: number, readonly objectId: string) {
    super(`the draws of object ${objectId} resume at row ${row} after other objects`);
  }
}

export interface StreamOptions {
  /** Only objects for which this is true are handed on (their rows are skipped otherwise). */
  only?: (index: number) => boolean;
  sink: ProblemSink;
  /** Rows per handed-on batch (whole objects; default 16384, 131072 for Arrow IPC blocks). */
  batchRows?: number;
  /** Set to 1 for each object that has rows in the file. */
  seen: Uint8Array;
}

/** Rows read from Arrow IPC at a time (our choice: about 8 MB of the bench's columns, a few hundred objects). */
export const IPC_BLOCK_ROWS = 131072;

/** One decoded reader batch, typed. */
interface Typed extends ColumnSet {
  n: number;
  ids: string[];
  params: Float64Array[];
  weight: Float64Array;
  logPrior: Float64Array | null;
}

function typedBatch(t: Table, L: SampleLayout, sink: ProblemSink, rowOffset: number): Typed {
  const byName = new Map<string, Column>();
  for (const c of t.columns) byName.set(c.name, c);
  const ctx = { file: L.file, sink, rowOffset };
  const col = (name: string) => byName.get(name)!;
  return {
    n: t.numRows,
    ids: toIds(col(L.id), ctx),
    params: L.params.map((p) => toFloat64(col(p), ctx)),
    weight: toFloat64(col(L.weight), ctx),
    logPrior: L.logPrior ? toFloat64(col(L.logPrior), ctx) : null,
    chain: L.chain ? toInt32(col(L.chain), ctx) : null,
  };
}

function unknownIdRows(L: SampleLayout, sink: ProblemSink, id: string, row0: number, rows: number): void {
  if (id === '') return; // reported as an empty id
  const got = JSON.stringify(id);
  for (let r = 0; r < rows; r++) sink.add({ severity: 'error', file: L.file, row: row0 + r, column: L.id, message: 'id not in the objects table', expected: 'the id of a row of the objects table', got });
}

/** Accumulates whole objects' rows into fresh arrays (the general readers and the spill route). */
class BatchBuilder {
  private cap = 0;
  private rows = 0;
  private objStart = 0;
  private params: Float64Array[];
  private weight = new Float64Array(0);
  private logPrior: Float64Array | null;
  private chain: Int32Array | null;
  private index: number[] = [];
  private ids: string[] = [];
  private offsets: number[] = [0];
  private firstRows: number[] = [];
  constructor(private readonly k: number, hasLogPrior: boolean, hasChain: boolean) {
    this.params = Array.from({ length: k }, () => new Float64Array(0));
    this.logPrior = hasLogPrior ? new Float64Array(0) : null;
    this.chain = hasChain ? new Int32Array(0) : null;
  }
  get size(): number {
    return this.rows;
  }
  get objects(): number {
    return this.index.length;
  }
  private reserve(extra: number): void {
    const need = this.rows + extra;
    if (need <= this.cap) return;
    const cap = Math.max(need, this.cap * 2, 4096);
    const grow = <A extends Float64Array | Int32Array>(a: A): A => {
      const b = new (a.constructor as { new (n: number): A })(cap);
      b.set(a.subarray(0, this.rows));
      return b;
    };
    this.params = this.params.map(grow);
    this.weight = grow(this.weight);
    if (this.logPrior) this.logPrior = grow(this.logPrior);
    if (this.chain) this.chain = grow(this.chain);
    this.cap = cap;
  }
  /** Append rows [a, b) of columns to the object being assembled. */
  append(c: ColumnSet, a: number, b: number): void {
    const n = b - a;
    this.reserve(n);
    for (let j = 0; j < this.k; j++) this.params[j].set(c.params[j].subarray(a, b), this.rows);
    this.weight.set(c.weight.subarray(a, b), this.rows);
    if (this.logPrior && c.logPrior) this.logPrior.set(c.logPrior.subarray(a, b), this.rows);
    if (this.chain && c.chain) this.chain.set(c.chain.subarray(a, b), this.rows);
    this.rows += n;
  }
  /** Append one spilled record's values (row-major record of `R` values from `at`). */
  appendRecord(rec: Float64Array, at: number): void {
    this.reserve(1);
    const r = this.rows;
    for (let j = 0; j < this.k; j++) this.params[j][r] = rec[at + j];
    this.weight[r] = rec[at + this.k];
    let c = at + this.k + 1;
    if (this.logPrior) this.logPrior[r] = rec[c++];
    if (this.chain) this.chain[r] = rec[c];
    this.rows++;
  }
  /** Weight of the object being assembled: is any draw's weight positive? */
  anyPositive(logWeights: boolean): boolean {
    return anyPositiveWeight(this.weight, this.objStart, this.rows, logWeights);
  }
  get pendingRows(): number {
    return this.rows - this.objStart;
  }
  /** Finish the object being assembled (keep) or drop its rows; `firstRow` is the 1-based file row of its first draw. */
  end(keep: boolean, index: number, id: string, firstRow = 0): void {
    if (keep && this.rows > this.objStart) {
      this.index.push(index);
      this.ids.push(id);
      this.offsets.push(this.rows);
      this.firstRows.push(firstRow);
      this.objStart = this.rows;
    } else {
      this.rows = this.objStart;
    }
  }
  /** The finished objects as a batch of fresh arrays (safe to transfer); the builder starts empty. */
  take(checked: boolean): ObjectBatch {
    const n = this.objStart;
    const count = this.index.length;
    const batch: ObjectBatch = {
      index: Int32Array.from(this.index),
      ids: this.ids,
      parts: [
        {
          params: this.params.map((p) => p.slice(0, n)),
          weight: this.weight.slice(0, n),
          logPrior: this.logPrior ? this.logPrior.slice(0, n) : null,
          chain: this.chain ? this.chain.slice(0, n) : null,
        },
      ],
      part: new Int32Array(count),
      start: Int32Array.from(this.offsets.slice(0, count)),
      end: Int32Array.from(this.offsets.slice(1)),
      firstRow: checked ? Float64Array.from(this.firstRows) : null,
    };
    // rows of an unfinished object move to the front
    const rest = this.rows - n;
    if (rest > 0) {
      for (const p of this.params) p.copyWithin(0, n, this.rows);
      this.weight.copyWithin(0, n, this.rows);
      this.logPrior?.copyWithin(0, n, this.rows);
      this.chain?.copyWithin(0, n, this.rows);
    }
    this.rows = rest;
    this.objStart = 0;
    this.index = [];
    this.ids = [];
    this.offsets = [0];
    this.firstRows = [];
    return batch;
  }
}

/**
 * Batches of whole objects from input whose objects are contiguous runs of rows (see the
 * module comment), in file order. The rows are checked by the kernel (`ObjectBatch.firstRow`).
 */
export async function* groupedBatches(bundle: Bundle, L: SampleLayout, opts: StreamOptions): AsyncGenerator<ObjectBatch> {
  const ipc = formatOf(L.path) === 'arrow' ? await openIpc(L) : null;
  if (ipc) {
    try {
      yield* ipcGroupedBatches(bundle, L, opts, ipc);
    } finally {
      await ipc.close();
    }
    return;
  }
  const { sink, seen } = opts;
  const index = bundle.objects.index;
  const k = L.params.length;
  const batchRows = opts.batchRows ?? 16384;
  const builder = new BatchBuilder(k, !!L.logPrior, !!L.chain);
  let curId: string | null = null;
  let curIdx = -1;
  let curKeep = false;
  let curFirstRow = 0;
  let rowOffset = 0;
  const close = () => {
    if (curId === null) return;
    builder.end(curKeep, curIdx, curId, curFirstRow);
    curId = null;
  };
  for await (const t of readTableBatches(L.path, { file: L.file, columns: L.columns })) {
    const T = typedBatch(t, L, sink, rowOffset);
    let r = 0;
    while (r < T.n) {
      const id = T.ids[r];
      let e = r + 1;
      while (e < T.n && T.ids[e] === id) e++;
      if (id !== curId) {
        close();
        if (builder.size >= batchRows) yield builder.take(true);
        const idx = index.get(id);
        curId = id;
        curIdx = idx ?? -1;
        curFirstRow = rowOffset + r + 1;
        if (idx === undefined) curKeep = false;
        else {
          if (seen[idx]) throw new NotGrouped(rowOffset + r + 1, id);
          seen[idx] = 1;
          curKeep = !opts.only || opts.only(idx);
        }
      }
      if (curIdx < 0) unknownIdRows(L, sink, id, rowOffset + r + 1, e - r);
      else if (curKeep) builder.append(T, r, e);
      r = e;
    }
    rowOffset += T.n;
  }
  close();
  if (builder.objects) yield builder.take(true);
}

/** The samples file as zero-copy Arrow IPC, when its columns allow (see arrow-ipc.ts); null otherwise. */
async function openIpc(L: SampleLayout): Promise<IpcFile | null> {
  const ipc = await IpcFile.open(L.path, L.columns);
  if (!ipc) return null;
  const kind = (name: string) => ipc.field(name).kind;
  const float = (name: string) => kind(name) === 'float32' || kind(name) === 'float64';
  const ok = ['utf8', 'int32', 'int64'].includes(kind(L.id)!) && L.params.every(float) && float(L.weight) && (!L.logPrior || float(L.logPrior)) && (!L.chain || kind(L.chain) === 'int32');
  if (ok) return ipc;
  await ipc.close();
  return null;
}

/** Compares the ids of rows: is the id of row q the same as that of row p? (bytes, or values for integer ids) */
type SameId = (p: number, q: number) => boolean;

function idReader(block: IpcBlock): { same: SameId; text: (r: number) => string } {
  const col = block.columns[0];
  if (col.kind === 'utf8') {
    const { offsets: off, data } = col;
    const base = off[0];
    return {
      same: (p, q) => {
        const a = off[p] - base;
        const len = off[p + 1] - base - a;
        const b = off[q] - base;
        if (off[q + 1] - base - b !== len) return false;
        for (let i = 0; i < len; i++) if (data[a + i] !== data[b + i]) return false;
        return true;
      },
      text: (r) => decoder.decode(data.subarray(off[r] - base, off[r + 1] - base)).trim(),
    };
  }
  if (col.kind === 'int64') {
    const v = col.values;
    const words = new Int32Array(v.buffer, v.byteOffset, 2 * v.length);
    return { same: (p, q) => words[2 * p] === words[2 * q] && words[2 * p + 1] === words[2 * q + 1], text: (r) => v[r].toString() };
  }
  const v = col.values as Int32Array;
  return { same: (p, q) => v[p] === v[q], text: (r) => String(v[r]) };
}

const decoder = new TextDecoder();

function floats(c: IpcColumn): Float32Array | Float64Array {
  if (c.kind !== 'float32' && c.kind !== 'float64') throw new Error(`not a float column: ${c.kind}`);
  return c.values;
}

/** The end of the run of rows from `r` that share row r's id. */
function runEnd(same: SameId, r: number, n: number): number {
  let e = r + 1;
  while (e < n && same(r, e)) e++;
  return e;
}

/** An object cut by the end of a block: its rows so far, copied. */
interface Carry {
  id: string;
  idx: number;
  keep: boolean;
  firstRow: number;
  /** The id's text as it stands in the file (to compare with the next block's first row). */
  key: string;
  cols: BatchBuilder | null;
}

async function* ipcGroupedBatches(bundle: Bundle, L: SampleLayout, opts: StreamOptions, ipc: IpcFile): AsyncGenerator<ObjectBatch> {
  const { sink, seen } = opts;
  const index = bundle.objects.index;
  const k = L.params.length;
  const W = opts.batchRows ?? IPC_BLOCK_ROWS;
  const fields: IpcField[] = [L.id, ...L.params, L.weight, ...(L.logPrior ? [L.logPrior] : []), ...(L.chain ? [L.chain] : [])].map((c) => ipc.field(c));
  let carry: Carry | null = null;
  const rawKey = (block: IpcBlock, r: number): string => {
    const c = block.columns[0];
    return c.kind === 'utf8' ? decoder.decode(c.data.subarray(c.offsets[r] - c.offsets[0], c.offsets[r + 1] - c.offsets[0])) : c.kind === 'int64' ? c.values[r].toString() : String(c.values[r]);
  };
  // a new object's first row: find it in the catalogue, report what is wrong with its id
  const identify = (block: IpcBlock, text: (r: number) => string, r: number, e: number) => {
    const id = text(r);
    const row0 = block.firstRow + r + 1;
    if (id === '') for (let q = 0; q < e - r; q++) sink.add({ severity: 'error', file: L.file, row: row0 + q, column: L.id, message: 'empty id', expected: 'a non-empty object id', got: 'an empty cell' });
    const idx = index.get(id);
    if (idx === undefined) {
      unknownIdRows(L, sink, id, row0, e - r);
      return { id, idx: -1, keep: false, firstRow: row0 };
    }
    if (seen[idx]) throw new NotGrouped(row0, id);
    seen[idx] = 1;
    return { id, idx, keep: !opts.only || opts.only(idx), firstRow: row0 };
  };
  const nb = ipc.batchCount;
  for (let bi = 0; bi < nb; bi++) {
    const R = ipc.batchRows(bi);
    for (let a = 0; a < R; a += W) {
      const b = Math.min(R, a + W);
      const last = bi === nb - 1 && b === R;
      let block: IpcBlock;
      try {
        block = await ipc.read(bi, a, b, fields);
      } catch (e) {
        throw new PosterityError({ severity: 'error', file: L.file, message: `cannot read the Arrow data (${(e as Error).message}); is the file truncated or corrupt?` });
      }
      const n = block.rows;
      const { same, text } = idReader(block);
      const cols: ColumnSet = {
        params: block.columns.slice(1, 1 + k).map(floats),
        weight: floats(block.columns[1 + k]),
        logPrior: L.logPrior ? floats(block.columns[2 + k]) : null,
        chain: L.chain ? (block.columns[block.columns.length - 1] as { values: Int32Array }).values : null,
      };
      const objIndex: number[] = [], objIds: string[] = [], part: number[] = [], start: number[] = [], end: number[] = [], firstRow: number[] = [];
      let extra: ColumnSet | null = null;
      let r = 0;
      if (carry && n > 0) {
        if (rawKey(block, 0) === carry.key) {
          const e = runEnd(same, 0, n);
          carry.cols?.append(cols, 0, e);
          r = e;
        }
        if (r < n || last) {
          // the carried object ends here: it goes first, from its own copy
          if (carry.keep && carry.cols) {
            carry.cols.end(true, carry.idx, carry.id, carry.firstRow);
            const copy = carry.cols.take(false);
            extra = copy.parts[0];
            objIndex.push(carry.idx);
            objIds.push(carry.id);
            part.push(1);
            start.push(0);
            end.push(copy.end[0]);
            firstRow.push(carry.firstRow);
          }
          carry = null;
        }
      }
      while (r < n) {
        const e = runEnd(same, r, n);
        const o = identify(block, text, r, e);
        if (e === n && !last) {
          // cut by the end of the block: carry a copy of its rows into the next block's batch
          carry = { ...o, key: rawKey(block, r), cols: o.keep ? new BatchBuilder(k, !!L.logPrior, !!L.chain) : null };
          carry.cols?.append(cols, r, e);
          break;
        }
        if (o.keep) {
          objIndex.push(o.idx);
          objIds.push(o.id);
          part.push(0);
          start.push(r);
          end.push(e);
          firstRow.push(o.firstRow);
        }
        r = e;
      }
      if (!objIndex.length) continue;
      yield {
        index: Int32Array.from(objIndex),
        ids: objIds,
        parts: extra ? [cols, extra] : [cols],
        part: Int32Array.from(part),
        start: Int32Array.from(start),
        end: Int32Array.from(end),
        firstRow: Float64Array.from(firstRow),
      };
    }
  }
  if (carry?.keep && carry.cols) {
    carry.cols.end(true, carry.idx, carry.id, carry.firstRow);
    yield carry.cols.take(true);
  }
}

export interface SpillOptions extends StreamOptions {
  /** Largest spill file read back at once (default 256 MB). */
  budgetBytes?: number;
  /** Folder for the temporary files (default the system's). */
  tmpDir?: string;
  /** Told the number of partitions and spilled bytes once the spill pass is done. */
  onSpill?: (info: { partitions: number; bytes: number; rows: number }) => void;
}

/** Batches of whole objects in catalogue order from rows in any order (see the module comment); rows checked here. */
export async function* spilledBatches(bundle: Bundle, L: SampleLayout, opts: SpillOptions): AsyncGenerator<ObjectBatch> {
  const { sink, seen } = opts;
  const n = bundle.objects.n;
  const index = bundle.objects.index;
  const k = L.params.length;
  const R = 2 + k + 1 + (L.logPrior ? 1 : 0) + (L.chain ? 1 : 0);
  const budget = opts.budgetBytes ?? 256 * 2 ** 20;
  const P = Math.max(1, Math.min(1024, Math.ceil((L.bytes * 2) / budget), n));
  const names = { file: L.file, weight: L.weight, params: L.params, paramNames: L.paramNames, logPrior: L.logPrior };
  const report = (p: Problem) => sink.add(p);
  const dir = await mkdtemp(join(opts.tmpDir ?? tmpdir(), 'posterity-spill-'));
  try {
    const perBuf = Math.max(256, Math.floor((32 * 2 ** 20) / (P * R * 8)));
    const bufs = Array.from({ length: P }, () => new Float64Array(perBuf * R));
    const fill = new Int32Array(P);
    const handles = await Promise.all(Array.from({ length: P }, (_, p) => open(join(dir, `part-${p}.f64`), 'w')));
    const flush = async (p: number) => {
      if (fill[p] === 0) return;
      const b = bufs[p];
      await handles[p].write(new Uint8Array(b.buffer, 0, fill[p] * R * 8));
      fill[p] = 0;
    };
    let rowOffset = 0;
    let spilled = 0;
    try {
      for await (const t of readTableBatches(L.path, { file: L.file, columns: L.columns })) {
        const T = typedBatch(t, L, sink, rowOffset);
        let r = 0;
        while (r < T.n) {
          const id = T.ids[r];
          let e = r + 1;
          while (e < T.n && T.ids[e] === id) e++;
          const idx = index.get(id);
          if (idx === undefined) unknownIdRows(L, sink, id, rowOffset + r + 1, e - r);
          else {
            seen[idx] = 1;
            if (!opts.only || opts.only(idx)) {
              checkRows(T, r, e, names, L.logWeights, rowOffset + r + 1, report);
              const p = Math.floor((idx * P) / n);
              for (let q = r; q < e; q++) {
                if (fill[p] === perBuf) await flush(p);
                const b = bufs[p];
                let at = fill[p] * R;
                b[at++] = idx;
                b[at++] = rowOffset + q + 1;
                for (let j = 0; j < k; j++) b[at++] = T.params[j][q];
                b[at++] = T.weight[q];
                if (T.logPrior) b[at++] = T.logPrior[q];
                if (T.chain) b[at] = T.chain[q];
                fill[p]++;
                spilled++;
              }
            }
          }
          r = e;
        }
        rowOffset += T.n;
      }
      for (let p = 0; p < P; p++) await flush(p);
    } finally {
      await Promise.all(handles.map((h) => h.close()));
    }
    opts.onSpill?.({ partitions: P, bytes: spilled * R * 8, rows: spilled });
    if (sink.hasErrors) return; // the caller reports them; nothing is summarised from bad input

    const batchRows = opts.batchRows ?? 16384;
    const builder = new BatchBuilder(k, !!L.logPrior, !!L.chain);
    for (let p = 0; p < P; p++) {
      const file = join(dir, `part-${p}.f64`);
      const bytes = await readFile(file);
      await rm(file);
      const recs = new Float64Array(bytes.buffer, bytes.byteOffset, bytes.byteLength / 8);
      const nRec = recs.length / R;
      if (nRec === 0) continue;
      let lo = Infinity, hi = -Infinity;
      for (let q = 0; q < nRec; q++) {
        const v = recs[q * R];
        if (v < lo) lo = v;
        if (v > hi) hi = v;
      }
      // stable counting sort by catalogue index: draws keep their file order within an object
      const span = hi - lo + 1;
      const start = new Int32Array(span + 1);
      for (let q = 0; q < nRec; q++) start[recs[q * R] - lo + 1]++;
      for (let s = 0; s < span; s++) start[s + 1] += start[s];
      const order = new Int32Array(nRec);
      const pos = start.slice(0, span);
      for (let q = 0; q < nRec; q++) order[pos[recs[q * R] - lo]++] = q;
      for (let s = 0; s < span; s++) {
        const a = start[s], b = start[s + 1];
        if (a === b) continue;
        const idx = lo + s;
        const id = bundle.objects.id[idx];
        for (let q = a; q < b; q++) builder.appendRecord(recs, order[q] * R + 2);
        let keep = true;
        if (!builder.anyPositive(L.logWeights)) {
          sink.add(zeroWeightProblem(names, L.logWeights, recs[order[a] * R + 1], id, b - a));
          keep = false;
        }
        builder.end(keep, idx, id);
        if (builder.size >= batchRows) yield builder.take(false);
      }
    }
    if (builder.objects) yield builder.take(false);
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}

/** A batch in the layout of one contiguous float64 array per column (object o at rows [offsets[o], offsets[o + 1])). */
export interface FlatBatch {
  index: Int32Array;
  ids: string[];
  offsets: Int32Array;
  params: Float64Array[];
  weight: Float64Array;
  logPrior: Float64Array | null;
}

/** `batch` copied into one contiguous float64 array per column (for the samples pass). */
export function flatten(batch: ObjectBatch): FlatBatch {
  const count = batch.index.length;
  const offsets = new Int32Array(count + 1);
  for (let o = 0; o < count; o++) offsets[o + 1] = offsets[o] + batch.end[o] - batch.start[o];
  const rows = offsets[count];
  const k = batch.parts[0]?.params.length ?? 0;
  const params = Array.from({ length: k }, () => new Float64Array(rows));
  const weight = new Float64Array(rows);
  const hasLogPrior = !!batch.parts[0]?.logPrior;
  const logPrior = hasLogPrior ? new Float64Array(rows) : null;
  for (let o = 0; o < count; o++) {
    const c = batch.parts[batch.part[o]];
    const a = batch.start[o], b = batch.end[o];
    for (let j = 0; j < k; j++) params[j].set(c.params[j].subarray(a, b), offsets[o]);
    weight.set(c.weight.subarray(a, b), offsets[o]);
    if (logPrior && c.logPrior) logPrior.set(c.logPrior.subarray(a, b), offsets[o]);
  }
  return { index: batch.index, ids: batch.ids, offsets, params, weight, logPrior };
}
