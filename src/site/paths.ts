/**
 * Page paths of the site (root-relative, for reasoning only) and `rel`, which turns a link
 * between two of them into a relative URL, so the built site works from any base path.
 * Object ids and relation names reach URLs only through `slugOf`.
 */
import { slugOf } from '../lib/core/slug.ts';

export const PATHS = Object.freeze({
  home: '/',
  catalogue: '/catalogue/',
  object: (slug: string) => `/objects/${slug}/`,
  objectOfId: (id: string) => `/objects/${slugOf(id)}/`,
  relations: '/relations/',
  relation: (name: string) => `/relations/${slugOf(name)}/`,
  outliers: '/outliers/',
  quality: '/quality/',
  massFunction: '/massfunction/',
  columns: '/columns/',
  downloads: '/downloads/',
  changes: '/changes/',
  /** A file under `downloads/` (path below it, forward slashes). */
  download: (file: string) => `/downloads/${file.replace(/^\/+/, '')}`,
  /** A file at a site-root-relative path such as `downloads/objects/x/draws.fits`. */
  file: (path: string) => `/${path.replace(/^\/+/, '')}`,
  notFound: '/404.html',
});

/**
 * Relative URL from the page at `fromPath` to `toPath` (both root-absolute paths such as
 * `/objects/a/` or `/downloads/catalogue.csv`). A path ending in `/` is a directory page.
 * Query and fragment of `toPath` are kept.
 */
export function rel(fromPath: string, toPath: string): string {
  const m = /^([^?#]*)(.*)$/.exec(toPath) as RegExpExecArray;
  const target = m[1];
  const suffix = m[2];
  const fromDir = fromPath.endsWith('/') ? fromPath : fromPath.slice(0, fromPath.lastIndexOf('/') + 1);
  const from = fromDir.split('/').filter(Boolean);
  const toIsDir = target.endsWith('/');
  const to = target.split('/').filter(Boolean);
  let common = 0;
  const toDirParts = toIsDir ? to : to.slice(0, -1);
  while (common < from.length && common < toDirParts.length && from[common] === toDirParts[common]) common++;
  const up = from.length - common;
  const rest = to.slice(common);
  let out = '../'.repeat(up) + rest.join('/');
  if (toIsDir && rest.length) out += '/';
  if (out === '') out = './';
  else if (!out.startsWith('.')) out = './' + out;
  return out + suffix;
}
