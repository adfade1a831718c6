/**
 * Build-time data of the object viewer (viewer mode, see `SiteContent.objectPages`), published
 * under `objects/view/`:
 *
 *   lookup.json              { count, pageSize, shardSize, heads }: the first slug of each lookup page
 *   lookup-<NNNNNN>.json     [slug, catalogue index][] of one page, sorted by slug (code-unit order)
 *   shard-<NNNNNN>.json.gz   the pipeline's shard `objects/shards/<NNNNNN>.json.gz` as it is (gzip of
 *                            `Shard`, src/lib/pipeline/object-codec.ts)
 *
 * The viewer finds an object in three small requests whatever the catalogue size: binary search
 * of `heads` for the page, binary search of the page for the slug, then shard floor(index /
 * shardSize). With 4096 entries a page, 10^7 objects need 2442 heads (about 40 KB).
 */
import { loadSite, objectIndex, shardBytes, shardFiles, viewerMode } from './load.ts';

export const LOOKUP_PAGE = 4096;

export interface ViewerLookup {
  count: number;
  pageSize: number;
  shardSize: number;
  heads: string[];
}

let sorted: { key: string; entries: [string, number][] } | null = null;

function sortedEntries(): [string, number][] {
  const index = objectIndex();
  const key = `${index.length}:${index[0]?.slug ?? ''}:${index[index.length - 1]?.slug ?? ''}`;
  if (sorted?.key === key) return sorted.entries;
  const entries = index.map((e) => [e.slug, e.index] as [string, number]);
  entries.sort((a, b) => (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : a[1] - b[1]));
  sorted = { key, entries };
  return entries;
}

const pageName = (k: number) => `lookup-${String(k).padStart(6, '0')}.json`;

/** File names under `objects/view/` (none in static mode). */
export function viewerFiles(): string[] {
  if (!viewerMode()) return [];
  const pages = Math.ceil(objectIndex().length / LOOKUP_PAGE);
  return ['lookup.json', ...Array.from({ length: pages }, (_, k) => pageName(k)), ...shardFiles().map((f) => `shard-${f}`)];
}

export function viewerFile(name: string): Uint8Array | null {
  if (!viewerMode()) return null;
  if (name === 'lookup.json') {
    const entries = sortedEntries();
    const heads: string[] = [];
    for (let k = 0; k < entries.length; k += LOOKUP_PAGE) heads.push(entries[k][0]);
    const lookup: ViewerLookup = { count: entries.length, pageSize: LOOKUP_PAGE, shardSize: loadSite().objectPages.shardSize, heads };
    return new TextEncoder().encode(JSON.stringify(lookup));
  }
  const page = /^lookup-(\d{6})\.json$/.exec(name);
  if (page) {
    const k = Number(page[1]);
    const entries = sortedEntries().slice(k * LOOKUP_PAGE, (k + 1) * LOOKUP_PAGE);
    return entries.length ? new TextEncoder().encode(JSON.stringify(entries)) : null;
  }
  const shard = /^shard-(\d{6}\.json\.gz)$/.exec(name);
  if (shard) return shardBytes(shard[1]);
  return null;
}
