/**
 * The one loader of the site: reads the pipeline's `content/` folder (path from
 * `POSTERITY_CONTENT`, default `content`, resolved against the working directory) at build
 * time. Pages call these in their frontmatter and hand the results to components.
 * Optional parts of a release (relations, quality, mass function, outliers) return null when
 * their file is absent, so their pages can say so instead of failing.
 */
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import type {
  MassFunctionContent,
  ObjectContent,
  ObjectIndexEntry,
  OutlierEntry,
  QualityContent,
  RelationContent,
  SiteContent,
} from '../lib/pipeline/content.ts';
import { idOfSlug } from '../lib/core/slug.ts';
import { FIGURES, type ObjectFigures } from '../lib/charts/figures.ts';

export type {
  MassFunctionContent,
  ObjectContent,
  ObjectIndexEntry,
  OutlierEntry,
  QualityContent,
  RelationContent,
  SiteContent,
} from '../lib/pipeline/content.ts';

/** Absolute path of the content folder. */
export function contentDir(): string {
  return resolve(process.cwd(), process.env.POSTERITY_CONTENT ?? 'content');
}

function read<T>(rel: string, required: boolean): T | null {
  const file = join(contentDir(), rel);
  if (!existsSync(file)) {
    if (required) throw new Error(`Posterity site: content file ${file} is missing; run the pipeline first or set POSTERITY_CONTENT`);
    return null;
  }
  try {
    return JSON.parse(readFileSync(file, 'utf8')) as T;
  } catch (e) {
    throw new Error(`Posterity site: content file ${file} is not valid JSON: ${(e as Error).message}`);
  }
}

const cache = new Map<string, unknown>();
function cached<T>(key: string, f: () => T): T {
  const k = `${contentDir()}\0${key}`;
  if (!cache.has(k)) cache.set(k, f());
  return cache.get(k) as T;
}

export function loadSite(): SiteContent {
  return cached('site', () => read<SiteContent>('site.json', true) as SiteContent);
}

/** Every object in catalogue order. */
export function objectIndex(): ObjectIndexEntry[] {
  return cached('index', () => read<ObjectIndexEntry[]>('objects/index.json', true) as ObjectIndexEntry[]);
}

/** Whether object pages are served by the one viewer page (`site.objectPages.mode === 'viewer'`). */
export function viewerMode(): boolean {
  return loadSite().objectPages?.mode === 'viewer';
}

/** Slugs that get a page of their own: every object in static mode, none in viewer mode. */
export function objectPageSlugs(): string[] {
  return viewerMode() ? [] : objectIndex().map((e) => e.slug);
}

/** The shard files of viewer mode (`objects/shards/<NNNNNN>.json.gz`), names without folder, sorted. */
export function shardFiles(): string[] {
  const dir = join(contentDir(), 'objects', 'shards');
  if (!existsSync(dir)) return [];
  return readdirSync(dir).filter((f) => /^\d{6}\.json\.gz$/.test(f)).sort();
}

/** Bytes of one shard file (name as listed by `shardFiles`), or null. */
export function shardBytes(name: string): Buffer | null {
  if (!/^\d{6}\.json\.gz$/.test(name)) return null;
  const file = join(contentDir(), 'objects', 'shards', name);
  return existsSync(file) ? readFileSync(file) : null;
}

/** One object's content; `slug` must be a valid slug (no path can be smuggled in). */
export function loadObject(slug: string): ObjectContent {
  if (idOfSlug(slug) === null) throw new Error(`Posterity site: "${slug}" is not an object slug`);
  return read<ObjectContent>(`objects/${slug}.json`, true) as ObjectContent;
}

const SAFE_NAME = /^[A-Za-z0-9_.-]+$/;

export function loadRelation(name: string): RelationContent | null {
  if (!SAFE_NAME.test(name) || name.startsWith('.')) return null;
  return cached(`rel:${name}`, () => read<RelationContent>(`relations/${name}.json`, false));
}

export function loadQuality(): QualityContent | null {
  return cached('quality', () => read<QualityContent>('quality.json', false));
}

export function loadMassFunction(): MassFunctionContent | null {
  return cached('massfunction', () => read<MassFunctionContent>('massfunction.json', false));
}

/** Outlier list (`outliers.json`), or null when the release has none. */
export function loadOutliers(): OutlierEntry[] | null {
  return cached('outliers', () => read<OutlierEntry[]>('outliers.json', false));
}

/** An object's prerendered figures (`figures/objects/<slug>.json`); nulls when they were not rendered. */
export function loadObjectFigures(slug: string): ObjectFigures {
  if (idOfSlug(slug) === null) throw new Error(`Posterity site: "${slug}" is not an object slug`);
  const file = join(contentDir(), 'figures', ...FIGURES.objectFigures(slug).split('/'));
  if (!existsSync(file)) return { sed: null, sedMag: null, posterior: null };
  return JSON.parse(readFileSync(file, 'utf8')) as ObjectFigures;
}

/** A prerendered SVG from `content/figures/<path>`, or null when it was not rendered. */
export function figure(path: string): string | null {
  if (path.split('/').some((p) => p === '..' || p === '')) return null;
  const file = join(contentDir(), 'figures', ...path.split('/'));
  if (!existsSync(file)) return null;
  return readFileSync(file, 'utf8');
}

/** A prerendered binary figure (e.g. a PNG) from `content/figures/<path>`, or null when absent. */
export function figureBytes(path: string): Buffer | null {
  if (path.split('/').some((p) => p === '..' || p === '')) return null;
  const file = join(contentDir(), 'figures', ...path.split('/'));
  return existsSync(file) ? readFileSync(file) : null;
}

/** Whether a file exists under `content/downloads/` (copied to the site's `downloads/`). */
export function hasDownload(path: string): boolean {
  if (path.split('/').some((p) => p === '..' || p === '')) return false;
  return existsSync(join(contentDir(), 'downloads', ...path.split('/')));
}

/** The comparison with an earlier release (`changes.json`, lists cut for the site), or null when none was made. */
export function loadChanges(): import('../lib/pipeline/changes-content.ts').ChangesContent | null {
  return cached('changes', () => read<import('../lib/pipeline/changes-content.ts').ChangesContent>('changes.json', false));
}

/** An object's values in the earlier release (`changes-objects.json`), or null when it was not in it or none was compared. */
export function loadPreviousObject(slug: string): import('../lib/pipeline/changes-content.ts').PreviousObject | null {
  const all = cached('changes-objects', () => read<Record<string, import('../lib/pipeline/changes-content.ts').PreviousObject>>('changes-objects.json', false));
  return all && Object.prototype.hasOwnProperty.call(all, slug) ? all[slug] : null;
}

/** schema.org Dataset metadata of the release (`dataset.json`, JSON-LD), or null in older content. */
export function loadDatasetJsonLd(): Record<string, unknown> | null {
  return cached('dataset', () => read<Record<string, unknown>>('dataset.json', false));
}
