/** Links to an earlier release of the same survey (presentation only). */
import { slugOf } from '../lib/core/slug.ts';
import { rel } from './paths.ts';

/**
 * The page of object `id` in the earlier release published at `url`: an absolute address, or a
 * path relative to this site's root (e.g. `../0.9.0/` when versions sit side by side), which is
 * made relative to the page at `path`. Null when the earlier release's address is unknown.
 */
export function earlierPage(url: string | undefined, path: string, id: string): string | null {
  return earlierLink(url, path, `objects/${slugOf(id)}/`);
}

/** A page of the earlier release (`sub` below its root, '' for its release page), as `earlierPage` resolves it. */
export function earlierLink(url: string | undefined, path: string, sub = ''): string | null {
  if (!url) return null;
  const base = url.endsWith('/') ? url : `${url}/`;
  const target = `${base}${sub}`;
  if (/^[a-z][a-z0-9+.-]*:/i.test(base) || base.startsWith('/')) return target;
  return rel(path, '/') + target.replace(/^\.\//, '');
}
