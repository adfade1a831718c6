/**
 * The object viewer (browser only, viewer mode): finds one object's shard through the slug
 * lookup (`viewer-data.ts`), then renders the object page in the browser: position and fit,
 * flags in words, the posterior table, the SED and the posterior matrix drawn by the same
 * spec builders the prerendered pages use, relation offsets and neighbours.
 *
 * The object comes from `?id=<id>` (looked up by slug), or it is the object whose own page this
 * is: every object has a page at `…/objects/<slug>/`, a copy of the viewer page that names the
 * object's catalogue index and sets its base to the viewer's folder (written by the release
 * build, `src/lib/release/object-pages.ts`), so it answers HTTP 200 on any static host. All
 * data URLs resolve against `document.baseURI`, the viewer's folder in both cases.
 */
import type { ObjectContent } from '../lib/pipeline/content.ts';
import { idOfSlug, slugOf } from '../lib/core/slug.ts';
import { objectFigures } from '../lib/charts/figures.ts';
import { PATHS, rel } from './paths.ts';
import { objectMainHtml } from './object-page.ts';
import { decodeObject, SHARD_FORMAT, type Shard } from '../lib/pipeline/object-codec.ts';
import type { ViewerLookup } from './viewer-data.ts';

const HERE = '/objects/view/';

type Child = Node | string | null | undefined | false;

function h<K extends keyof HTMLElementTagNameMap>(tag: K, attrs: Record<string, string | undefined> | null, ...children: (Child | Child[])[]): HTMLElementTagNameMap[K] {
  const e = document.createElement(tag);
  if (attrs) for (const [k, v] of Object.entries(attrs)) if (v !== undefined) e.setAttribute(k, v);
  for (const c of children.flat()) if (c !== null && c !== undefined && c !== false) e.append(c);
  return e;
}

const link = (to: string, text: string, attrs: Record<string, string> = {}) => h('a', { href: rel(HERE, to), ...attrs }, text);

/**
 * A shard: gzip, decompressed here (a host that sends the file with Content-Encoding gzip has
 * already decompressed it, which the magic bytes tell).
 */
async function getShard(url: string): Promise<Shard> {
  const res = await fetch(new URL(url, document.baseURI));
  if (!res.ok) throw new Error(`${url}: HTTP ${res.status}`);
  let bytes = new Uint8Array(await res.arrayBuffer());
  if (bytes[0] === 0x1f && bytes[1] === 0x8b) {
    if (typeof DecompressionStream === 'undefined') throw new Error('this browser cannot decompress the object data (DecompressionStream)');
    bytes = new Uint8Array(await new Response(new Blob([bytes]).stream().pipeThrough(new DecompressionStream('gzip'))).arrayBuffer());
  }
  const shard = JSON.parse(new TextDecoder().decode(bytes)) as Shard;
  if (shard.v !== SHARD_FORMAT) throw new Error(`${url}: shard format ${shard.v}, this viewer reads ${SHARD_FORMAT}`);
  return shard;
}

async function getJson<T>(url: string): Promise<T> {
  const res = await fetch(new URL(url, document.baseURI));
  if (!res.ok) throw new Error(`${url}: HTTP ${res.status}`);
  return (await res.json()) as T;
}

/** Last index i with heads[i] <= key (code-unit order), or -1. */
function floorSearch(heads: string[], key: string): number {
  let lo = 0;
  let hi = heads.length - 1;
  let best = -1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (heads[mid] <= key) {
      best = mid;
      lo = mid + 1;
    } else hi = mid - 1;
  }
  return best;
}

/** The catalogue index of `slug`, or null when the release has no such object. */
export async function findObject(slug: string): Promise<{ index: number; shardSize: number } | null> {
  const lookup = await getJson<ViewerLookup>('lookup.json');
  const page = floorSearch(lookup.heads, slug);
  if (page < 0) return null;
  const entries = await getJson<[string, number][]>(`lookup-${String(page).padStart(6, '0')}.json`);
  let lo = 0;
  let hi = entries.length - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    const s = entries[mid][0];
    if (s === slug) return { index: entries[mid][1], shardSize: lookup.shardSize };
    if (s < slug) lo = mid + 1;
    else hi = mid - 1;
  }
  return null;
}

/** Which object this page shows: `?id=` first, else the slug in the path (`objects/<slug>/`). */
export function requestedSlug(loc: Location): string | null {
  const id = new URLSearchParams(loc.search).get('id');
  if (id !== null && id.trim() !== '') return slugOf(id.trim());
  const m = /\/objects\/([^/]+)\/?(?:index\.html)?$/.exec(loc.pathname);
  if (!m) return null;
  let s: string;
  try {
    s = decodeURIComponent(m[1]);
  } catch {
    return null;
  }
  return s;
}

/** Render the object page (the same renderer and figures as the prerendered pages). */
export function renderObject(main: HTMLElement, o: ObjectContent, total: number, priorEdgeMass = 0): void {
  main.innerHTML = objectMainHtml(o, { here: HERE, total, priorEdgeMass, figures: objectFigures(o) });
}

/**
 * An object's own page resolves its relative URLs against the viewer's folder (`<base>`), so
 * in-page links (`#main`, `#sed`) are pointed back at this page.
 */
function keepFragmentLinks(): void {
  const here = location.pathname + location.search;
  for (const a of document.querySelectorAll<HTMLAnchorElement>('a[href^="#"]')) a.setAttribute('href', here + a.getAttribute('href'));
}

function notFound(main: HTMLElement, what: string): void {
  main.replaceChildren(
    h('h1', null, 'Object not found'),
    h('p', null, what),
    h('ul', null, h('li', null, link(PATHS.catalogue, 'Search the catalogue')), h('li', null, link(PATHS.home, 'Release page'))),
  );
}

export async function startViewer(root: HTMLElement): Promise<void> {
  const status = root.querySelector('.viewer-status') as HTMLElement;
  const main = root.querySelector('.viewer-object') as HTMLElement;
  const total = Number(root.dataset.total ?? '0');
  const siteTitle = root.dataset.siteTitle ?? '';
  const slug = requestedSlug(location);
  const t0 = performance.now();
  try {
    if (slug === null) {
      status.textContent = 'Give an object id, e.g. objects/view/?id=<id>, or find the object in the catalogue.';
      return;
    }
    const id = idOfSlug(slug);
    if (id === null) {
      notFound(main, 'This address does not name an object of this release.');
      status.textContent = '';
      root.dataset.state = 'missing';
      return;
    }
    status.textContent = `Loading ${id}…`;
    // an object's own page (objects/<slug>/) names its catalogue index; objects/view/?id= looks it up
    const own = root.dataset.index !== undefined && !new URLSearchParams(location.search).has('id');
    const where = own ? { index: Number(root.dataset.index), shardSize: Number(root.dataset.shardSize) } : await findObject(slug);
    if (!where) {
      if (slug === 'view' && !new URLSearchParams(location.search).has('id')) {
        status.textContent = 'Give an object id, e.g. objects/view/?id=<id>, or find the object in the catalogue.';
        return;
      }
      notFound(main, `There is no object with id “${id}” in this release.`);
      status.textContent = '';
      root.dataset.state = 'missing';
      document.title = `Object not found · ${siteTitle}`;
      return;
    }
    const shard = Math.floor(where.index / where.shardSize);
    const objects = (await getShard(`shard-${String(shard).padStart(6, '0')}.json.gz`)).objects;
    const o = objects[where.index - shard * where.shardSize] ? decodeObject(objects[where.index - shard * where.shardSize]) : null;
    if (!o || o.slug !== slug) throw new Error(`shard ${shard} does not hold object ${where.index}`);
    document.title = `${o.id} · ${siteTitle}`;
    status.textContent = '';
    renderObject(main, o, total, Number(root.dataset.priorEdgeMass ?? '0'));
    keepFragmentLinks();
    root.dataset.state = 'ready';
    root.dataset.loadMs = (performance.now() - t0).toFixed(0);
  } catch (e) {
    status.textContent = `The object could not be loaded (${(e as Error).message}).`;
    root.dataset.state = 'error';
  }
}
