/**
 * Runs the per-object step over worker threads (or in this thread for one worker). Batches
 * are whole objects, their arrays are transferred both ways, and each result comes back
 * tagged with the batch's sequence number, so the caller can apply results in catalogue order
 * whatever order the workers finish in.
 */
import { Worker } from 'node:worker_threads';
import { PosterityError, type Problem } from '../core/problems.ts';
import { batchBuffers, summariseBatch, type BatchResult, type KernelContext, type ObjectBatch } from './summarise-kernel.ts';

interface Pending {
  seq: number;
  batch: ObjectBatch;
  resolve: (r: BatchResult) => void;
  reject: (e: unknown) => void;
}

export class SummaryPool {
  private readonly workers: Worker[] = [];
  private readonly idle: Worker[] = [];
  private readonly queue: Pending[] = [];
  private readonly running = new Map<Worker, Pending>();
  private seq = 0;
  private failed: unknown = null;

  /** `workers` <= 1 runs every batch in this thread. */
  constructor(private readonly ctx: KernelContext, workers: number) {
    if (workers <= 1) return;
    const ext = import.meta.url.endsWith('.ts') ? '.ts' : '.js';
    const module = new URL(`./summarise-worker${ext}`, import.meta.url).href;
    const entry = new URL('./summarise-worker-entry.mjs', import.meta.url);
    for (let i = 0; i < workers; i++) {
      const w = new Worker(entry, { workerData: { ctx, module } });
      w.on('message', (msg: { seq: number; result?: BatchResult; error?: { message: string; problems: Problem[] | null } }) => this.done(w, msg));
      w.on('error', (e) => this.fail(w, e));
      w.on('exit', (code) => {
        if (this.running.has(w)) this.fail(w, new Error(`summary worker exited with code ${code} while busy`));
      });
      this.workers.push(w);
      this.idle.push(w);
    }
  }

  get threads(): number {
    return this.workers.length;
  }

  /** Batches submitted and not yet finished. */
  get inFlight(): number {
    return this.queue.length + this.running.size;
  }

  /** Summarise a batch; its arrays are transferred (unusable by the caller afterwards). */
  run(batch: ObjectBatch): Promise<BatchResult> {
    if (this.failed) return Promise.reject(this.failed);
    if (this.workers.length === 0) {
      try {
        return Promise.resolve(summariseBatch(this.ctx, batch));
      } catch (e) {
        return Promise.reject(e);
      }
    }
    return new Promise((resolve, reject) => {
      this.queue.push({ seq: this.seq++, batch, resolve, reject });
      this.pump();
    });
  }

  private pump(): void {
    while (this.idle.length && this.queue.length) {
      const w = this.idle.pop()!;
      const job = this.queue.shift()!;
      this.running.set(w, job);
      w.postMessage({ seq: job.seq, batch: job.batch }, batchBuffers(job.batch));
    }
  }

  private done(w: Worker, msg: { seq: number; result?: BatchResult; error?: { message: string; problems: Problem[] | null } }): void {
    const job = this.running.get(w);
    this.running.delete(w);
    this.idle.push(w);
    if (job) {
      if (msg.result) job.resolve(msg.result);
      else if (msg.error?.problems) job.reject(new PosterityError(msg.error.problems));
      else job.reject(new Error(`summary worker: ${msg.error?.message}`));
    }
    this.pump();
  }

  private fail(w: Worker, e: unknown): void {
    this.failed = e;
    const job = this.running.get(w);
    this.running.delete(w);
    job?.reject(e);
    for (const p of this.queue.splice(0)) p.reject(e);
  }

  async close(): Promise<void> {
    await Promise.all(this.workers.map((w) => w.terminate()));
    this.workers.length = 0;
    this.idle.length = 0;
  }
}
