/**
 * Sequential byte source over a FITS file: positioned reads on a file handle for plain
 * files, a streaming gunzip for gzip-compressed ones (detected by the magic bytes 1f 8b,
 * RFC 1952 sect. 2.3.1), so neither loads the whole file.
 */
import { createReadStream } from 'node:fs';
import { open, type FileHandle } from 'node:fs/promises';
import { createGunzip } from 'node:zlib';
import { PosterityError, problem, type Problem } from '../../core/problems.ts';

/** A PosterityError from one problem (severity error). */
function ioError(p: Omit<Problem, 'severity'>): PosterityError {
  return new PosterityError(problem(p));
}

export interface ByteSource {
  /** Reads up to n bytes; fewer only at the end of the data. */
  read(n: number): Promise<Uint8Array>;
  /** Skips up to n bytes; returns how many were skipped. */
  skip(n: number): Promise<number>;
  /** Bytes consumed so far (uncompressed offset). */
  readonly position: number;
  close(): Promise<void>;
}

class FileSource implements ByteSource {
  position = 0;
  constructor(private fh: FileHandle, private size: number) {}
  async read(n: number): Promise<Uint8Array> {
    const want = Math.max(0, Math.min(n, this.size - this.position));
    const buf = new Uint8Array(want);
    let got = 0;
    while (got < want) {
      const { bytesRead } = await this.fh.read(buf, got, want - got, this.position + got);
      if (bytesRead === 0) break;
      got += bytesRead;
    }
    this.position += got;
    return got === want ? buf : buf.subarray(0, got);
  }
  async skip(n: number): Promise<number> {
    const k = Math.max(0, Math.min(n, this.size - this.position));
    this.position += k;
    return k;
  }
  close(): Promise<void> {
    return this.fh.close();
  }
}

class GzipSource implements ByteSource {
  position = 0;
  private chunks: Uint8Array[] = [];
  private buffered = 0;
  private done = false;
  private iter: AsyncIterator<Buffer>;
  private stream: ReturnType<typeof createGunzip>;
  constructor(filePath: string, private file: string) {
    const raw = createReadStream(filePath);
    this.stream = createGunzip();
    raw.on('error', (e) => this.stream.destroy(e));
    raw.pipe(this.stream);
    this.iter = this.stream[Symbol.asyncIterator]();
  }
  private async fill(n: number): Promise<void> {
    while (this.buffered < n && !this.done) {
      let r: IteratorResult<Buffer>;
      try {
        r = await this.iter.next();
      } catch (e) {
        throw ioError({
          message: `gzip stream is corrupt or truncated after ${this.position + this.buffered} uncompressed bytes (${(e as Error).message})`,
          file: this.file,
        });
      }
      if (r.done) { this.done = true; break; }
      const c = new Uint8Array(r.value.buffer, r.value.byteOffset, r.value.byteLength);
      this.chunks.push(c);
      this.buffered += c.length;
    }
  }
  private take(n: number, copy: boolean): Uint8Array {
    const k = Math.min(n, this.buffered);
    const out = copy ? new Uint8Array(k) : null;
    let o = 0;
    while (o < k) {
      const c = this.chunks[0]!;
      const m = Math.min(c.length, k - o);
      if (out) out.set(c.subarray(0, m), o);
      if (m === c.length) this.chunks.shift();
      else this.chunks[0] = c.subarray(m);
      o += m;
    }
    this.buffered -= k;
    this.position += k;
    return out ?? new Uint8Array(0);
  }
  async read(n: number): Promise<Uint8Array> {
    await this.fill(n);
    return this.take(n, true);
  }
  async skip(n: number): Promise<number> {
    let left = n;
    while (left > 0) {
      await this.fill(Math.min(left, 1 << 20));
      if (this.buffered === 0) break;
      const k = Math.min(left, this.buffered);
      this.take(k, false);
      left -= k;
    }
    return n - left;
  }
  async close(): Promise<void> {
    this.stream.destroy();
  }
}

/** Opens a FITS file as a byte source, gunzipping on the fly when it is gzip-compressed. */
export async function openFitsSource(filePath: string, file: string = filePath): Promise<ByteSource> {
  let fh: FileHandle;
  try {
    fh = await open(filePath, 'r');
  } catch (e) {
    throw ioError({ message: `cannot open FITS file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`, file });
  }
  const { size } = await fh.stat();
  const magic = new Uint8Array(2);
  await fh.read(magic, 0, 2, 0);
  if (size >= 2 && magic[0] === 0x1f && magic[1] === 0x8b) {
    await fh.close();
    return new GzipSource(filePath, file);
  }
  return new FileSource(fh, size);
}
