/** Build the site from a content folder (figures prerendered first), as a release build does. */
import { buildSite as siteStage } from '../../../src/lib/release/build.ts';
import { prerenderFigures } from '../../../src/lib/charts/prerender.ts';
import type { ObjectIndexEntry } from '../../../src/lib/pipeline/content.ts';

/** `objectPagesFor`: in viewer mode, which objects get their own page (a synthetic catalogue may carry content for a few only). */
export async function buildSite(contentDir: string, outDir: string, objectPagesFor?: (e: ObjectIndexEntry) => boolean): Promise<void> {
  await prerenderFigures(contentDir, {});
  await siteStage(contentDir, outDir, () => {}, { objectPagesFor });
}
