// Entry of the summary worker threads. Registers the TypeScript loader when the sources run
// as .ts (loader hooks of the parent thread do not reach worker threads), then loads the worker.
import { workerData } from 'node:worker_threads';

if (workerData.module.endsWith('.ts')) {
  const { register } = await import('tsx/esm/api');
  register();
}
await import(workerData.module);
