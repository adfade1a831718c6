/**
 * Viewer mode (above `site.objectPageLimit`): every object still gets its own address that
 * answers HTTP 200 on any static host, `objects/<slug>/index.html`: a copy of the built viewer
 * page (`objects/view/index.html`) with `<base href="../view/">` first in its head, so that its
 * relative URLs resolve exactly as the viewer's do, the object's catalogue index on the viewer
 * element (the viewer reads its shard directly, no lookup), and the object's id in its title.
 * Written here rather than by the site build because they are the same page N times over:
 * a string substitution each, about a kilobyte of work, instead of an Astro page each.
 */
import { mkdir, readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { ObjectIndexEntry } from '../pipeline/content.ts';

function escapeHtml(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

export interface ObjectPageTemplate {
  head: string;
  beforeTitle: string;
  afterTitle: string;
  beforeIndex: string;
  rest: string;
}

/** Cut the viewer page at the places an object's page differs; throws when the page does not have them. */
export function objectPageTemplate(viewerHtml: string): ObjectPageTemplate {
  const charset = viewerHtml.indexOf('<meta charset="utf-8">');
  const title = /<title>[^<]*<\/title>/.exec(viewerHtml);
  const viewer = viewerHtml.indexOf('<div id="viewer"');
  if (charset < 0 || !title || viewer < 0 || !(charset < title.index && title.index < viewer)) throw new Error('objects/view/index.html has not the shape the object pages are cut from (charset, title, #viewer)');
  const afterCharset = charset + '<meta charset="utf-8">'.length;
  return {
    head: viewerHtml.slice(0, afterCharset),
    beforeTitle: viewerHtml.slice(afterCharset, title.index),
    afterTitle: viewerHtml.slice(title.index + title[0].length, viewer),
    beforeIndex: '<div id="viewer"',
    rest: viewerHtml.slice(viewer + '<div id="viewer"'.length),
  };
}

/** One object's page from the template. */
export function objectPageHtml(t: ObjectPageTemplate, e: ObjectIndexEntry, siteTitle: string): string {
  return `${t.head}<base href="../view/">${t.beforeTitle}<title>${escapeHtml(e.id)} · ${escapeHtml(siteTitle)}</title>${t.afterTitle}${t.beforeIndex} data-index="${e.index}"${t.rest}`;
}

/** Write the page of every object under `<site>/objects/`; returns how many. */
export async function writeObjectPages(siteDir: string, index: ObjectIndexEntry[], siteTitle: string): Promise<number> {
  const t = objectPageTemplate(await readFile(join(siteDir, 'objects', 'view', 'index.html'), 'utf8'));
  for (const e of index) {
    const dir = join(siteDir, 'objects', e.slug);
    await mkdir(dir, { recursive: true });
    await writeFile(join(dir, 'index.html'), objectPageHtml(t, e, siteTitle));
  }
  return index.length;
}
