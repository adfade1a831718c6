/**
 * Viewer mode in headless Chromium: a 300-object release with `site.objectPageLimit` 100 builds
 * no full page per object but a small one at every `objects/<slug>/` address (HTTP 200), a copy
 * of the viewer page that reads the object's shard and draws the object (facts, flags in words,
 * parameter table, SED and posterior matrix) in the browser. Served under two prefixes; the
 * direct `objects/view/?id=` entry and a missing id (the host's not-found page) are checked too.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Browser } from 'playwright-core';
import { hasChromium } from '../helpers/chromium.ts';
import { buildRelease, PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { serveStatic } from '../../scripts/serve.ts';
import { gunzipSync } from 'node:zlib';
import type { ObjectContent } from '../../src/lib/pipeline/content.ts';
import { decodeObject, type Shard } from '../../src/lib/pipeline/object-codec.ts';
import { launch, relativeLinks, screenshot, statuses, visit } from './helpers/browse.ts';

const ROOT = join(PROJECT_ROOT, 'test-output', 'browser-viewer');
const N = 300;
const SHARD = 50;
/** An address of no object: the host answers it with the not-found page (status 404). */
const MISSING = /\/objects\/NO-SUCH-OBJECT\/$/;

describe.runIf(hasChromium())('viewer mode', () => {
  let browser: Browser;
  const servers: Awaited<ReturnType<typeof serveStatic>>[] = [];
  let objects: ObjectContent[] = [];

  beforeAll(async () => {
    rmSync(ROOT, { recursive: true, force: true });
    mkdirSync(ROOT, { recursive: true });
    const bundle = join(ROOT, 'bundle');
    await generateDemoBundle(bundle, { nObjects: N, drawsRange: [64, 64] });
    const cfg = JSON.parse(readFileSync(join(bundle, 'release.json'), 'utf8'));
    cfg.site = { objectPageLimit: 100, shardSize: SHARD };
    writeFileSync(join(bundle, 'release.json'), JSON.stringify(cfg, null, 2));
    await buildRelease(bundle, { out: join(ROOT, 'dist') });
    const view = join(ROOT, 'dist', 'objects', 'view');
    for (const f of readdirSync(view).filter((x) => x.startsWith('shard-')).sort()) objects.push(...(JSON.parse(gunzipSync(readFileSync(join(view, f))).toString('utf8')) as Shard).objects.map(decodeObject));
    servers.push(await serveStatic(join(ROOT, 'dist'), { base: '/' }), await serveStatic(join(ROOT, 'dist'), { base: '/p/q/' }));
    browser = await launch();
  }, 600_000);

  afterAll(async () => {
    await browser?.close();
    for (const s of servers) s.server.close();
  });

  it('builds a small page per object, a lookup and gzipped shards', () => {
    const dist = join(ROOT, 'dist');
    const pages = readdirSync(join(dist, 'objects')).filter((d) => existsSync(join(dist, 'objects', d, 'index.html')));
    expect(pages.sort()).toEqual(['view', ...objects.map((o) => o.slug)].sort());
    const viewer = readFileSync(join(dist, 'objects', 'view', 'index.html'), 'utf8');
    const own = readFileSync(join(dist, 'objects', objects[7].slug, 'index.html'), 'utf8');
    expect(own).toContain('<base href="../view/">');
    expect(own).toContain(`data-index="7"`);
    expect(own.length).toBeLessThan(viewer.length + 200);
    expect(objects.length).toBe(N);
    expect(objects.map((o) => o.index)).toEqual(objects.map((_, i) => i));
    const lookup = JSON.parse(readFileSync(join(dist, 'objects', 'view', 'lookup.json'), 'utf8'));
    expect(lookup.count).toBe(N);
    expect(lookup.shardSize).toBe(SHARD);
  });

  const ready = (p: import('playwright-core').Page) => p.waitForSelector('#viewer[data-state="ready"], #viewer[data-state="missing"], #viewer[data-state="error"]', { timeout: 60_000 });

  for (const which of [0, 1] as const) {
    it(`shows objects at their own address (prefix ${which ? '/p/q/' : '/'})`, async () => {
      const server = servers[which];
      for (const k of [0, 137, N - 1]) {
        const o = objects[k];
        const v = await visit(browser, `${server.url}objects/${o.slug}/`, { wait: ready });
        const p = v.page;
        expect(v.status).toBe(200);
        expect(await p.getAttribute('#viewer', 'data-state')).toBe('ready');
        expect(new URL(p.url()).pathname).toBe(`${new URL(server.url).pathname}objects/${o.slug}/`);
        expect(await p.textContent('main h1')).toBe(o.id);
        expect(await p.title()).toContain(o.id);
        // parameter table, flags in words, charts with text alternatives
        expect(await p.$$eval('table.params tbody tr', (r) => r.length)).toBe(o.params.length);
        expect(await p.$eval('table.params', (t) => !!t.querySelector('caption') && t.querySelectorAll('thead th[scope=col]').length > 3)).toBe(true);
        for (const f of o.flagReasons) expect(await p.textContent('main')).toContain(f.text);
        const charts = await p.$$eval('.fig svg', (s) => s.map((e) => ({ role: e.getAttribute('role'), title: e.querySelector('title')?.textContent ?? '', desc: e.querySelector('desc')?.textContent ?? '', marks: e.querySelectorAll('path, line, circle, rect, text').length })));
        expect(charts.length).toBe((o.photometry.length ? 2 : 0) + (o.marginals.length ? 1 : 0));
        for (const c of charts) {
          expect(c.role).toBe('img');
          expect(c.title.length).toBeGreaterThan(3);
          expect(c.desc.length).toBeGreaterThan(10);
          expect(c.marks).toBeGreaterThan(10);
        }
        expect(v.errors).toEqual([]);
        expect(v.failed).toEqual([]);
        expect(v.external).toEqual([]);
        // every relative link answers 200, object pages included; in-page links stay on this page
        const links = await relativeLinks(p);
        const st = await statuses(links);
        for (const [u, code] of st) expect(`${code} ${u}`).toBe(`200 ${u}`);
        const fragments = await p.$$eval('a[href*="#"]', (as) => as.map((a) => (a as HTMLAnchorElement).href));
        for (const f of fragments) expect(new URL(f).pathname).toBe(new URL(p.url()).pathname);
        if (k === 137) {
          await screenshot(p, `viewer-1280${which ? '-prefixed' : ''}`);
          await Promise.all([p.waitForURL(new RegExp(`objects/${objects[k + 1].slug}/$`)), p.click('a[rel=next]')]);
          await ready(p);
          expect(await p.textContent('main h1')).toBe(objects[k + 1].id);
        }
        await p.close();
      }
    });
  }

  it('has a direct objects/view/?id= entry, and says when an id is not in the release', async () => {
    const server = servers[1];
    const o = objects[42];
    const v = await visit(browser, `${server.url}objects/view/?id=${encodeURIComponent(o.id)}`, { wait: ready });
    expect(await v.page.textContent('main h1')).toBe(o.id);
    expect(v.status).toBe(200);
    expect(v.errors).toEqual([]);
    expect(v.failed).toEqual([]);
    await v.page.close();
    const w = await visit(browser, `${server.url}objects/NO-SUCH-OBJECT/`, { expect404: MISSING });
    expect(w.status).toBe(404);
    expect(await w.page.textContent('main')).toContain('There is no object with id “NO-SUCH-OBJECT”');
    expect(w.errors).toEqual([]);
    expect(w.failed).toEqual([]);
    await w.page.close();
  });

  it('looks right at phone width, and the explorer links into the viewer', async () => {
    const server = servers[1];
    const v = await visit(browser, `${server.url}objects/${objects[137].slug}/`, { width: 390, wait: ready });
    await screenshot(v.page, 'viewer-390');
    expect(await v.page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(392);
    await v.page.close();
    const c = await visit(browser, `${server.url}catalogue/`, { wait: (p) => p.waitForSelector('#explorer[data-ready="1"]') });
    await Promise.all([c.page.waitForURL(new RegExp(`objects/${objects[0].slug}/$`)), c.page.click('#explorer tbody a[data-pos="0"]')]);
    await ready(c.page);
    expect(await c.page.textContent('main h1')).toBe(objects[0].id);
    await c.page.close();
  });
});
