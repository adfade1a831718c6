/**
 * Each object's corner data, held on disk between summarising and page writing, so memory does
 * not grow with the catalogue: the JSON text of each object (as the worker threads wrote it,
 * with a newline, i.e. one JSON line) appended to a few large files, with an index of file,
 * offset and length per object. Appends are buffered and written in large writes; `take(i)`
 * reads one object back (the objects' loop of the pipeline reads them in catalogue order,
 * whatever order they were written in) and deletes a file once every object in it was taken.
 */
import { closeSync, mkdirSync, openSync, readSync, rmSync, unlinkSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import type { ObjectCharts } from './summarise-charts.ts';
import type { ChartsSource } from './partials.ts';

const encoder = new TextEncoder();
const decoder = new TextDecoder();
const NEWLINE = 10;

export interface ChartSpoolOptions {
  /** Bytes per spool file before the next one is started (default 1 GiB). */
  fileBytes?: number;
  /** Bytes gathered in memory before a write (default 4 MiB). */
  bufferBytes?: number;
}

export class ChartSpool {
  private readonly fileOf: Int32Array;
  private readonly offset: Float64Array;
  private readonly length: Int32Array;
  /** Objects held in each file, and the file's descriptor (-1 once deleted). */
  private live: number[] = [];
  private fds: number[] = [];
  private written: number[] = [];
  private current = -1;
  private buf: Uint8Array;
  private fill = 0;
  private readonly fileBytes: number;

  constructor(
    private readonly dir: string,
    n: number,
    opts: ChartSpoolOptions = {},
  ) {
    rmSync(dir, { recursive: true, force: true });
    mkdirSync(dir, { recursive: true });
    this.fileOf = new Int32Array(n).fill(-1);
    this.offset = new Float64Array(n);
    this.length = new Int32Array(n);
    this.fileBytes = opts.fileBytes ?? 2 ** 30;
    this.buf = new Uint8Array(opts.bufferBytes ?? 4 * 2 ** 20);
  }

  /** Store object i's corner data (JSON text, or the object itself); a later `set` of i replaces it. */
  set(i: number, charts: Uint8Array | ObjectCharts): void {
    const json = charts instanceof Uint8Array ? charts : encoder.encode(JSON.stringify(charts));
    this.forget(i);
    const size = json.length + 1;
    if (this.current < 0 || this.written[this.current] + this.fill + size > this.fileBytes) this.nextFile();
    const f = this.current;
    this.fileOf[i] = f;
    this.offset[i] = this.written[f] + this.fill;
    this.length[i] = size;
    this.live[f]++;
    if (this.fill + size > this.buf.length) this.flush();
    if (size > this.buf.length) {
      const line = new Uint8Array(size);
      line.set(json);
      line[json.length] = NEWLINE;
      this.writeAll(f, line);
      return;
    }
    this.buf.set(json, this.fill);
    this.buf[this.fill + json.length] = NEWLINE;
    this.fill += size;
  }

  /** Whether object i has corner data here. */
  has(i: number): boolean {
    return this.fileOf[i] >= 0;
  }

  /** Object i's JSON line (with its newline), or null; it stays in the spool. */
  bytes(i: number): Uint8Array | null {
    const f = this.fileOf[i];
    if (f < 0) return null;
    const at = this.offset[i];
    const out = new Uint8Array(this.length[i]);
    if (f === this.current && at >= this.written[f]) out.set(this.buf.subarray(at - this.written[f], at - this.written[f] + out.length));
    else {
      if (f === this.current && at + out.length > this.written[f]) this.flush();
      let done = 0;
      while (done < out.length) {
        const got = readSync(this.fds[f], out, done, out.length - done, at + done);
        if (got === 0) throw new Error(`chart spool: ${join(this.dir, name(f))} ends before object ${i}'s data`);
        done += got;
      }
    }
    return out;
  }

  /** Object i's corner data (parsed), or null; it is removed from the spool. */
  take(i: number): ObjectCharts | null {
    const line = this.bytes(i);
    if (!line) return null;
    this.forget(i);
    return JSON.parse(decoder.decode(line)) as ObjectCharts;
  }

  /** The stored objects among `members` (in that order) as the corner-data section of a partial file. */
  source(members: Int32Array): ChartsSource {
    const have = Array.from(members).filter((i) => this.fileOf[i] >= 0);
    const index = Int32Array.from(have);
    const lengths = Float64Array.from(have, (i) => this.length[i]);
    const self = this;
    return {
      index,
      lengths,
      lines: async function* () {
        for (const i of have) yield self.bytes(i)!;
      },
    };
  }

  /** Forget every object (a summarising pass that starts again). */
  reset(): void {
    this.closeFiles();
    this.fileOf.fill(-1);
  }

  close(): void {
    this.closeFiles();
    rmSync(this.dir, { recursive: true, force: true });
  }

  private forget(i: number): void {
    const f = this.fileOf[i];
    if (f < 0) return;
    this.fileOf[i] = -1;
    if (--this.live[f] === 0 && f !== this.current) this.deleteFile(f);
  }

  private nextFile(): void {
    this.flush();
    if (this.current >= 0 && this.live[this.current] === 0) this.deleteFile(this.current);
    const f = this.fds.length;
    this.fds.push(openSync(join(this.dir, name(f)), 'w+'));
    this.live.push(0);
    this.written.push(0);
    this.current = f;
  }

  private flush(): void {
    if (this.fill === 0 || this.current < 0) return;
    this.writeAll(this.current, this.buf.subarray(0, this.fill));
    this.fill = 0;
  }

  private writeAll(f: number, bytes: Uint8Array): void {
    let done = 0;
    while (done < bytes.length) done += writeSync(this.fds[f], bytes, done, bytes.length - done, this.written[f] + done);
    this.written[f] += bytes.length;
  }

  private deleteFile(f: number): void {
    if (this.fds[f] < 0) return;
    closeSync(this.fds[f]);
    this.fds[f] = -1;
    unlinkSync(join(this.dir, name(f)));
  }

  private closeFiles(): void {
    this.fill = 0;
    for (let f = 0; f < this.fds.length; f++) this.deleteFile(f);
    this.fds = [];
    this.live = [];
    this.written = [];
    this.current = -1;
  }
}

function name(f: number): string {
  return `charts-${String(f).padStart(4, '0')}.jsonl`;
}
