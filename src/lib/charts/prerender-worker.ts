/** Worker thread of `prerenderFigures`: renders the figures of a run of whole objects. */
import { parentPort, workerData } from 'node:worker_threads';
import { renderObjectFigures } from './prerender.ts';

const { contentDir, slugs, force } = workerData as { contentDir: string; slugs: string[]; force: boolean };
try {
  const result = await renderObjectFigures(contentDir, slugs, force);
  parentPort?.postMessage({ ok: true, result });
} catch (e) {
  parentPort?.postMessage({ ok: false, error: e instanceof Error ? `${e.message}\n${e.stack ?? ''}` : String(e) });
}
