/**
 * Zero-copy reading of an Arrow IPC file (the random-access "file" format, Arrow columnar
 * format specification, "IPC File Format"): the footer locates the record batches, each batch's
 * metadata locates its body buffers, and a block of rows of the wanted columns is read with one
 * large read per buffer into one fresh ArrayBuffer, over which typed arrays are laid
 * (Float32Array, Float64Array, Int32Array, BigInt64Array; strings as their offsets and UTF-8
 * bytes). Nothing is decoded value by value and nothing is copied after the read.
 *
 * `openIpcFile` returns null when the file is not one this reader takes, so that the caller
 * falls back to the general reader (`arrow.ts`): the stream format, compressed bodies, column
 * types other than the ones above (dictionary-encoded or view strings, nested or union columns
 * among the wanted ones), nulls in a wanted column, or a file it cannot parse. IPC buffers are
 * little-endian (what every common writer produces) and 8-byte aligned within the body.
 */
import { open, type FileHandle } from 'node:fs/promises';
import * as arrow from 'apache-arrow';
import { Footer } from 'apache-arrow/ipc/metadata/file';

export type IpcKind = 'float32' | 'float64' | 'int32' | 'int64' | 'utf8';

export interface IpcField {
  name: string;
  kind: IpcKind | null;
  /** Index of the field's first buffer and its node in each record batch. */
  buffer: number;
  node: number;
}

interface BatchMeta {
  rows: number;
  /** Row of the file where the batch starts. */
  firstRow: number;
  bodyOffset: number;
  buffers: { offset: number; length: number }[];
  nodes: { length: number; nullCount: number }[];
}

/** Rows [a, a + rows) of one record batch, as views over `buffers` (one view per wanted column, in the order asked). */
export interface IpcBlock {
  /** The memory the views lie over: the data, then the offsets of each string column. */
  buffers: ArrayBuffer[];
  rows: number;
  /** File row (0-based) of the block's first row. */
  firstRow: number;
  columns: IpcColumn[];
}

export type IpcColumn =
  | { kind: 'float32'; values: Float32Array }
  | { kind: 'float64'; values: Float64Array }
  | { kind: 'int32'; values: Int32Array }
  | { kind: 'int64'; values: BigInt64Array }
  /** String r is data[offsets[r] - offsets[0], offsets[r + 1] - offsets[0]). */
  | { kind: 'utf8'; offsets: Int32Array; data: Uint8Array };

const WIDTH: Record<Exclude<IpcKind, 'utf8'>, number> = { float32: 4, float64: 8, int32: 4, int64: 8 };

function kindOf(t: arrow.DataType): IpcKind | null {
  if (t.typeId === arrow.Type.Float) {
    const p = (t as arrow.Float).precision;
    return p === arrow.Precision.DOUBLE ? 'float64' : p === arrow.Precision.SINGLE ? 'float32' : null;
  }
  if (t.typeId === arrow.Type.Int) {
    const i = t as arrow.Int;
    return i.isSigned && i.bitWidth === 32 ? 'int32' : i.isSigned && i.bitWidth === 64 ? 'int64' : null;
  }
  if (t.typeId === arrow.Type.Utf8) return 'utf8';
  return null;
}

/** Buffers and nodes a field takes in a record batch (Arrow columnar format, "Buffer Layout"); null for layouts not counted here. */
function layoutOf(t: arrow.DataType): { buffers: number; nodes: number } | null {
  switch (t.typeId) {
    case arrow.Type.Null:
      return { buffers: 0, nodes: 1 };
    case arrow.Type.Int:
    case arrow.Type.Float:
    case arrow.Type.Bool:
    case arrow.Type.Decimal:
    case arrow.Type.Date:
    case arrow.Type.Time:
    case arrow.Type.Timestamp:
    case arrow.Type.Interval:
    case arrow.Type.Duration:
    case arrow.Type.FixedSizeBinary:
    case arrow.Type.Dictionary:
      return { buffers: 2, nodes: 1 };
    case arrow.Type.Utf8:
    case arrow.Type.Binary:
    case arrow.Type.LargeUtf8:
    case arrow.Type.LargeBinary:
      return { buffers: 3, nodes: 1 };
    case arrow.Type.List:
    case arrow.Type.LargeList:
    case arrow.Type.Map:
    case arrow.Type.Struct:
    case arrow.Type.FixedSizeList: {
      let buffers = t.typeId === arrow.Type.Struct || t.typeId === arrow.Type.FixedSizeList ? 1 : 2;
      let nodes = 1;
      for (const c of t.children ?? []) {
        const l = layoutOf(c.type);
        if (!l) return null;
        buffers += l.buffers;
        nodes += l.nodes;
      }
      return { buffers, nodes };
    }
    default:
      return null;
  }
}

export class IpcFile {
  private constructor(
    private readonly fh: FileHandle,
    readonly fields: IpcField[],
    private readonly batches: BatchMeta[],
    readonly rows: number,
  ) {}

  get batchCount(): number {
    return this.batches.length;
  }

  batchRows(b: number): number {
    return this.batches[b].rows;
  }

  /** File row (0-based) of the first row of batch b. */
  batchFirstRow(b: number): number {
    return this.batches[b].firstRow;
  }

  /**
   * The file, when this reader can take the wanted columns (by name): every one of a kind it
   * lays views over, no nulls in them, no compression. Null otherwise (see the module comment).
   */
  static async open(path: string, wanted: string[]): Promise<IpcFile | null> {
    let fh: FileHandle | null = null;
    try {
      fh = await open(path, 'r');
      const size = (await fh.stat()).size;
      const head = Buffer.alloc(8);
      await fh.read(head, 0, 8, 0);
      if (size < 18 || head.toString('latin1', 0, 6) !== 'ARROW1') return close(fh);
      const tail = Buffer.alloc(10);
      await fh.read(tail, 0, 10, size - 10);
      if (tail.toString('latin1', 4, 10) !== 'ARROW1') return close(fh);
      const footerLength = tail.readInt32LE(0);
      if (!(footerLength > 0 && footerLength < size - 18)) return close(fh);
      const fb = new Uint8Array(footerLength);
      await fh.read(fb, 0, footerLength, size - 10 - footerLength);
      const footer = Footer.decode(fb);
      const fields: IpcField[] = [];
      let buffer = 0;
      let node = 0;
      let countable = true;
      for (const f of footer.schema.fields) {
        const layout = countable ? layoutOf(f.type) : null;
        fields.push({ name: f.name, kind: countable ? kindOf(f.type) : null, buffer, node });
        if (!layout) countable = false;
        else {
          buffer += layout.buffers;
          node += layout.nodes;
        }
      }
      const want = wanted.map((name) => fields.find((f) => f.name === name));
      if (want.some((f) => !f || !f.kind)) return close(fh);
      const batches: BatchMeta[] = [];
      let rows = 0;
      for (const block of footer.recordBatches()) {
        const meta = Buffer.alloc(block.metaDataLength);
        await fh.read(meta, 0, meta.length, block.offset);
        // encapsulated message: 0xFFFFFFFF continuation, int32 length, flatbuffer (older files: no continuation)
        const cont = meta.readUInt32LE(0) === 0xffffffff;
        const len = meta.readInt32LE(cont ? 4 : 0);
        const start = cont ? 8 : 4;
        const message = arrow.Message.decode(meta.subarray(start, start + len));
        if (!message.isRecordBatch()) return close(fh);
        const rb = message.header();
        if (rb.compression) return close(fh);
        const m: BatchMeta = {
          rows: Number(rb.length),
          firstRow: rows,
          bodyOffset: Number(block.offset) + block.metaDataLength,
          buffers: rb.buffers.map((b) => ({ offset: Number(b.offset), length: Number(b.length) })),
          nodes: rb.nodes.map((n) => ({ length: Number(n.length), nullCount: Number(n.nullCount) })),
        };
        for (const f of want) if (m.nodes[f!.node]?.nullCount !== 0 || !m.buffers[f!.buffer + (f!.kind === 'utf8' ? 2 : 1)]) return close(fh);
        rows += m.rows;
        batches.push(m);
      }
      return new IpcFile(fh, fields, batches, rows);
    } catch {
      return fh ? close(fh) : null;
    }
  }

  /** Index of the named field (an error when missing: `open` checked the wanted ones). */
  field(name: string): IpcField {
    const f = this.fields.find((x) => x.name === name);
    if (!f) throw new Error(`no column ${name}`);
    return f;
  }

  /**
   * Rows [a, b) of batch `batch`, columns `cols` (fields from `field`): one read per buffer
   * straight into fresh memory (a string column: its offsets into their own buffer first, then
   * the bytes they span), each column's bytes at a multiple of 8 so the views are aligned.
   */
  async read(batch: number, a: number, b: number, cols: IpcField[]): Promise<IpcBlock> {
    const m = this.batches[batch];
    const n = b - a;
    const pad8 = (x: number) => (x + 7) & ~7;
    const offsets = new Map<number, Int32Array>();
    const buffers: ArrayBuffer[] = [];
    for (let k = 0; k < cols.length; k++) {
      const f = cols[k];
      if (f.kind !== 'utf8') continue;
      const o = new Int32Array(n + 1);
      await readFully(this.fh, new Uint8Array(o.buffer), m.bodyOffset + m.buffers[f.buffer + 1].offset + 4 * a);
      const data = m.buffers[f.buffer + 2];
      if (!(o[0] >= 0 && o[n] >= o[0] && o[n] <= data.length)) throw new Error(`string offsets of column ${f.name} lie outside its data (rows ${m.firstRow + a + 1} to ${m.firstRow + b})`);
      offsets.set(k, o);
      buffers.push(o.buffer);
    }
    // where each column's bytes go in the data buffer, and where they are in the file
    let size = 0;
    const plan = cols.map((f, k) => {
      const o = offsets.get(k);
      const pos = o ? m.bodyOffset + m.buffers[f.buffer + 2].offset + o[0] : m.bodyOffset + m.buffers[f.buffer + 1].offset + WIDTH[f.kind as Exclude<IpcKind, 'utf8'>] * a;
      const bytes = o ? o[n] - o[0] : WIDTH[f.kind as Exclude<IpcKind, 'utf8'>] * n;
      const at = size;
      size = pad8(size + bytes);
      return { pos, bytes, at };
    });
    const buffer = new ArrayBuffer(Math.max(8, size));
    buffers.unshift(buffer);
    const whole = new Uint8Array(buffer);
    await Promise.all(plan.map((p) => readFully(this.fh, whole.subarray(p.at, p.at + p.bytes), p.pos)));
    const columns: IpcColumn[] = cols.map((f, k) => {
      const { at, bytes } = plan[k];
      switch (f.kind) {
        case 'float32':
          return { kind: 'float32', values: new Float32Array(buffer, at, n) };
        case 'float64':
          return { kind: 'float64', values: new Float64Array(buffer, at, n) };
        case 'int32':
          return { kind: 'int32', values: new Int32Array(buffer, at, n) };
        case 'int64':
          return { kind: 'int64', values: new BigInt64Array(buffer, at, n) };
        default:
          return { kind: 'utf8', offsets: offsets.get(k)!, data: new Uint8Array(buffer, at, bytes) };
      }
    });
    return { buffers, rows: n, firstRow: m.firstRow + a, columns };
  }

  async close(): Promise<void> {
    await this.fh.close();
  }
}

async function close(fh: FileHandle): Promise<null> {
  await fh.close().catch(() => {});
  return null;
}

/** Reads exactly `dst.length` bytes at `pos` (a short read means a truncated file). */
async function readFully(fh: FileHandle, dst: Uint8Array, pos: number): Promise<void> {
  let done = 0;
  while (done < dst.length) {
    const { bytesRead } = await fh.read(dst, done, dst.length - done, pos + done);
    if (bytesRead === 0) throw new Error(`the Arrow IPC file ends at byte ${pos + done}, inside a record batch`);
    done += bytesRead;
  }
}
