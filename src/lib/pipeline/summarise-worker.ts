/**
 * Worker thread of the summaries: receives batches of whole objects as typed arrays
 * (transferred, not copied), summarises them and transfers the result arrays back.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { PosterityError } from '../core/problems.ts';
import { resultBuffers, summariseBatch, type KernelContext, type ObjectBatch } from './summarise-kernel.ts';

const ctx = (workerData as { ctx: KernelContext }).ctx;

parentPort!.on('message', (msg: { seq: number; batch: ObjectBatch }) => {
  try {
    const result = summariseBatch(ctx, msg.batch);
    parentPort!.postMessage({ seq: msg.seq, result }, resultBuffers(result));
  } catch (e) {
    const problems = e instanceof PosterityError ? e.problems : null;
    parentPort!.postMessage({ seq: msg.seq, error: { message: e instanceof Error ? `${e.message}\n${e.stack ?? ''}` : String(e), problems } });
  }
});
