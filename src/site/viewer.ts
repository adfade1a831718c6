/**
 * The object viewer (browser only, viewer mode): finds one object's shard through the slug
 * lookup (`viewer-data.ts`), then renders the object page in the browser: position and fit,
 * flags in words, the posterior table, the SED and the posterior matrix drawn by the same
 * spec builders the prerendered pages use, relation offsets and neighbours.
 *
 * The object comes from `?id=<id>` or from the path `…/objects/<slug>/` (the not-found page
 * serves those URLs in viewer mode and loads this page into itself; see 404.astro). All data
 * URLs resolve against `document.baseURI`, which is this page's folder in both cases.
 */
import type { ObjectContent } from '../lib/pipeline/content.ts';
import { idOfSlug, slugOf } from '../lib/core/slug.ts';
import { objectFigures } from '../lib/charts/figures.ts';
import { PATHS, rel } from './paths.ts';
import { objectMainHtml } from './object-page.ts';
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
    const where = await findObject(slug);
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
    const objects = await getJson<ObjectContent[]>(`shard-${String(shard).padStart(6, '0')}.json`);
    const o = objects[where.index - shard * where.shardSize];
    if (!o || o.slug !== slug) throw new Error(`shard ${shard} does not hold object ${where.index}`);
    document.title = `${o.id} · ${siteTitle}`;
    status.textContent = '';
    renderObject(main, o, total, Number(root.dataset.priorEdgeMass ?? '0'));
    root.dataset.state = 'ready';
    root.dataset.loadMs = (performance.now() - t0).toFixed(0);
  } catch (e) {
    status.textContent = `The object could not be loaded (${(e as Error).message}).`;
    root.dataset.state = 'error';
  }
}
