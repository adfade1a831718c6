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
 * Rows are checked as the loader checks them (unknown ids, weights, finite values), with the
 * same messages, file rows and columns.
 */
import { mkdtemp, open, readFile, rm, stat } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Bundle } from '../bundle/load.ts';
import { sampleColumnOf } from '../bundle/load.ts';
import { ProblemSink, toFloat64, toIds, toInt32 } from '../bundle/coerce.ts';
import type { TableRefConfig } from '../bundle/schema.ts';
import { PosterityError } from '../core/problems.ts';
import { readTableBatches } from '../io/read.ts';
import type { Column, Table } from '../io/table.ts';
import type { ObjectBatch } from './summarise-kernel.ts';

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
  /** Rows per handed-on batch (whole objects; default 16384). */
  batchRows?: number;
  /** Set to 1 for each object that has rows in the file. */
  seen: Uint8Array;
}

/** One decoded reader batch, typed. */
interface Typed {
  n: number;
  ids: string[];
  params: Float64Array[];
  weight: Float64Array;
  logPrior: Float64Array | null;
  chain: Int32Array | null;
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

/** The loader's row checks (same messages) over rows [a, b) of a typed batch; false if any row is bad. */
function checkRows(T: Typed, a: number, b: number, L: SampleLayout, sink: ProblemSink, rowOffset: number): boolean {
  let ok = true;
  const bad = (column: string, r: number, message: string, expected: string, v: number) => {
    ok = false;
    sink.add({ severity: 'error', file: L.file, row: rowOffset + r + 1, column, message, expected, got: String(v) });
  };
  for (let r = a; r < b; r++) {
    const x = T.weight[r];
    if (L.logWeights) {
      if (Number.isNaN(x)) bad(L.weight, r, 'log_weight is missing or NaN', 'a finite number, or -inf for a zero weight', x);
      else if (x === Infinity) bad(L.weight, r, 'log_weight is +infinity', 'a finite number, or -inf for a zero weight', x);
    } else if (!(Number.isFinite(x) && x >= 0))
      bad(L.weight, r, Number.isNaN(x) ? 'weight is missing or NaN' : !Number.isFinite(x) ? 'weight is infinite' : 'weight is negative', 'a finite weight >= 0', x);
  }
  for (let j = 0; j < T.params.length; j++) {
    const x = T.params[j];
    for (let r = a; r < b; r++)
      if (!Number.isFinite(x[r])) bad(L.params[j], r, Number.isNaN(x[r]) ? `value of ${L.paramNames[j]} is missing or NaN` : `value of ${L.paramNames[j]} is infinite`, 'a finite number', x[r]);
  }
  if (T.logPrior)
    for (let r = a; r < b; r++) {
      const x = T.logPrior[r];
      if (Number.isNaN(x) || x === Infinity) bad(L.logPrior!, r, Number.isNaN(x) ? 'log_prior is missing or NaN' : 'log_prior is +infinity', 'a finite log density (or -inf)', x);
    }
  return ok;
}

function unknownIds(T: Typed, a: number, b: number, L: SampleLayout, sink: ProblemSink, rowOffset: number): void {
  for (let r = a; r < b; r++)
    if (T.ids[r] !== '') sink.add({ severity: 'error', file: L.file, row: rowOffset + r + 1, column: L.id, message: 'id not in the objects table', expected: 'the id of a row of the objects table', got: JSON.stringify(T.ids[r]) });
}

/** Accumulates whole objects into the arrays of one `ObjectBatch`. */
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
  append(params: Float64Array[], weight: Float64Array, logPrior: Float64Array | null, chain: Int32Array | null, a: number, b: number): void {
    const n = b - a;
    this.reserve(n);
    for (let j = 0; j < this.k; j++) this.params[j].set(params[j].subarray(a, b), this.rows);
    this.weight.set(weight.subarray(a, b), this.rows);
    if (this.logPrior && logPrior) this.logPrior.set(logPrior.subarray(a, b), this.rows);
    if (this.chain && chain) this.chain.set(chain.subarray(a, b), this.rows);
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
    for (let r = this.objStart; r < this.rows; r++) if (logWeights ? this.weight[r] > -Infinity : this.weight[r] > 0) return true;
    return false;
  }
  get pendingRows(): number {
    return this.rows - this.objStart;
  }
  /** Finish the object being assembled (keep) or drop its rows. */
  end(keep: boolean, index: number, id: string): void {
    if (keep && this.rows > this.objStart) {
      this.index.push(index);
      this.ids.push(id);
      this.offsets.push(this.rows);
      this.objStart = this.rows;
    } else {
      this.rows = this.objStart;
    }
  }
  /** The finished objects as a batch of fresh arrays (safe to transfer); the builder starts empty. */
  take(): ObjectBatch {
    const n = this.objStart;
    const batch: ObjectBatch = {
      index: Int32Array.from(this.index),
      ids: this.ids,
      offsets: Int32Array.from(this.offsets),
      params: this.params.map((p) => p.slice(0, n)),
      weight: this.weight.slice(0, n),
      logPrior: this.logPrior ? this.logPrior.slice(0, n) : null,
      chain: this.chain ? this.chain.slice(0, n) : null,
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
    return batch;
  }
}

function zeroWeightProblem(L: SampleLayout, sink: ProblemSink, row: number, id: string, draws: number): void {
  sink.add({
    severity: 'error',
    file: L.file,
    row,
    object: id,
    column: L.weight,
    message: 'every draw of this object has zero weight',
    expected: 'at least one draw with a weight > 0',
    got: `${draws} draws of weight ${L.logWeights ? '0 (log_weight -inf)' : '0'}`,
  });
}

/** Batches of whole objects from input whose objects are contiguous runs of rows (see the module comment). */
export async function* groupedBatches(bundle: Bundle, L: SampleLayout, opts: StreamOptions): AsyncGenerator<ObjectBatch> {
  const { sink, seen } = opts;
  const index = bundle.objects.index;
  const k = L.params.length;
  const batchRows = opts.batchRows ?? 16384;
  const builder = new BatchBuilder(k, !!L.logPrior, !!L.chain);
  let curId: string | null = null;
  let curIdx = -1;
  let curKeep = false;
  let curOk = true;
  let curFirstRow = 0;
  let rowOffset = 0;
  const close = () => {
    if (curId === null) return;
    let keep = curKeep && curOk;
    if (keep && !builder.anyPositive(L.logWeights)) {
      zeroWeightProblem(L, sink, curFirstRow, curId, builder.pendingRows);
      keep = false;
    }
    builder.end(keep, curIdx, curId);
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
        if (builder.size >= batchRows) yield builder.take();
        const idx = index.get(id);
        curId = id;
        curIdx = idx ?? -1;
        curOk = true;
        curFirstRow = rowOffset + r + 1;
        if (idx === undefined) curKeep = false;
        else {
          if (seen[idx]) throw new NotGrouped(rowOffset + r + 1, id);
          seen[idx] = 1;
          curKeep = !opts.only || opts.only(idx);
        }
      }
      if (curIdx < 0) unknownIds(T, r, e, L, sink, rowOffset);
      else if (curKeep) {
        if (!checkRows(T, r, e, L, sink, rowOffset)) curOk = false;
        builder.append(T.params, T.weight, T.logPrior, T.chain, r, e);
      }
      r = e;
    }
    rowOffset += T.n;
  }
  close();
  if (builder.objects) yield builder.take();
}

export interface SpillOptions extends StreamOptions {
  /** Largest spill file read back at once (default 256 MB). */
  budgetBytes?: number;
  /** Folder for the temporary files (default the system's). */
  tmpDir?: string;
  /** Told the number of partitions and spilled bytes once the spill pass is done. */
  onSpill?: (info: { partitions: number; bytes: number; rows: number }) => void;
}

/** Batches of whole objects in catalogue order from rows in any order (see the module comment). */
export async function* spilledBatches(bundle: Bundle, L: SampleLayout, opts: SpillOptions): AsyncGenerator<ObjectBatch> {
  const { sink, seen } = opts;
  const n = bundle.objects.n;
  const index = bundle.objects.index;
  const k = L.params.length;
  const R = 2 + k + 1 + (L.logPrior ? 1 : 0) + (L.chain ? 1 : 0);
  const budget = opts.budgetBytes ?? 256 * 2 ** 20;
  const P = Math.max(1, Math.min(1024, Math.ceil((L.bytes * 2) / budget), n));
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
          if (idx === undefined) unknownIds(T, r, e, L, sink, rowOffset);
          else {
            seen[idx] = 1;
            if (!opts.only || opts.only(idx)) {
              checkRows(T, r, e, L, sink, rowOffset);
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
          zeroWeightProblem(L, sink, recs[order[a] * R + 1], id, b - a);
          keep = false;
        }
        builder.end(keep, idx, id);
        if (builder.size >= batchRows) yield builder.take();
      }
    }
    if (builder.objects) yield builder.take();
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}
