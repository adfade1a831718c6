/**
 * Every page type of a small static-mode release in headless Chromium, served under two
 * prefixes: no console error, no failed or external request, every relative link answers 200
 * (one level), screenshots at phone and desktop widths (test-output/screenshots/), and the
 * accessibility basics: charts with a title and a data summary, tables with captions and
 * headers, named controls, a visible keyboard focus, and WCAG 2.1 AA contrast of the main text
 * styles in the light and the dark theme.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { hasChromium } from '../helpers/chromium.ts';
import { buildRelease, PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { serveStatic } from '../../scripts/serve.ts';
import { slugOf } from '../../src/lib/core/slug.ts';
import { contrasts, launch, relativeLinks, screenshot, statuses, visit } from './helpers/browse.ts';

const ROOT = join(PROJECT_ROOT, 'test-output', 'browser-site');
const N = 100;

/** Text styles whose contrast is checked (first few visible matches of each). */
const TEXT_STYLES = ['main p', 'main h1', 'main h2', '.lede', 'caption', 'caption .sub', 'th', 'td', '.facts dt', '.facts dd', 'main a', '.site-nav a', '.site-title', '.site-title .ver', '.site-footer p', '.badge.flag', '.badge.ok', 'button', 'input', 'select', 'figcaption', '.explorer-status', '.explorer-controls label', '.warn', '.note', 'label.opt', 'pre', 'code'];

describe.runIf(hasChromium())('site pages in the browser', () => {
  let browser: Browser;
  const servers: Awaited<ReturnType<typeof serveStatic>>[] = [];
  let pages: { name: string; path: string; expect404?: boolean; wait?: (p: Page) => Promise<unknown> }[] = [];

  beforeAll(async () => {
    rmSync(ROOT, { recursive: true, force: true });
    mkdirSync(ROOT, { recursive: true });
    const bundle = join(ROOT, 'bundle');
    await generateDemoBundle(bundle, { nObjects: N, drawsRange: [128, 256] });
    const dist = join(ROOT, 'dist');
    await buildRelease(bundle, { out: dist });
    const firstId = readFileSync(join(dist, 'downloads', 'catalogue.csv'), 'utf8').split('\n')[1].split(',')[0].replace(/"/g, '');
    const slug = slugOf(firstId);
    const explorerReady = (p: Page) => p.waitForSelector('#explorer[data-ready="1"]', { timeout: 60_000 });
    pages = [
      { name: 'release', path: '' },
      { name: 'catalogue', path: 'catalogue/', wait: explorerReady },
      { name: 'object', path: `objects/${slug}/` },
      { name: 'relations', path: 'relations/' },
      { name: 'relation', path: 'relations/main_sequence/' },
      { name: 'outliers', path: 'outliers/' },
      { name: 'quality', path: 'quality/' },
      { name: 'massfunction', path: 'massfunction/' },
      { name: 'columns', path: 'columns/' },
      { name: 'downloads', path: 'downloads/' },
      { name: '404', path: 'catalogue/no/such/page/', expect404: true },
      { name: 'viewer-entry', path: 'objects/view/' },
    ];
    servers.push(await serveStatic(dist, { base: '/' }), await serveStatic(dist, { base: '/a/b/' }));
    browser = await launch();
  }, 600_000);

  afterAll(async () => {
    await browser?.close();
    for (const s of servers) s.server.close();
  });

  for (const which of [0, 1] as const) {
    it(`every page type loads cleanly and its links work (prefix ${which ? '/a/b/' : '/'})`, async () => {
      const server = servers[which];
      const bad: string[] = [];
      for (const pg of pages) {
        const v = await visit(browser, server.url + pg.path, { expect404: pg.expect404, wait: pg.wait });
        for (const e of v.errors) bad.push(`${pg.name}: console error ${e}`);
        for (const e of v.failed) bad.push(`${pg.name}: failed ${e}`);
        for (const e of v.external) bad.push(`${pg.name}: external ${e}`);
        if (v.status !== (pg.expect404 ? 404 : 200)) bad.push(`${pg.name}: status ${v.status}`);
        const links = await relativeLinks(v.page);
        if (links.length < 5) bad.push(`${pg.name}: only ${links.length} links`);
        for (const [u, code] of await statuses(links)) {
          if (code !== 200) bad.push(`${pg.name}: link ${u} answers ${code}`);
          if (!u.startsWith(server.url)) bad.push(`${pg.name}: link ${u} leaves the site's folder`);
        }
        await v.page.close();
      }
      expect(bad).toEqual([]);
    });
  }

  it('screenshots of every page type at 390 and 1280 px, with nothing wider than a phone screen', async () => {
    const wide: string[] = [];
    for (const pg of pages) {
      for (const width of [390, 1280]) {
        const v = await visit(browser, servers[1].url + pg.path, { width, expect404: pg.expect404, wait: pg.wait });
        await screenshot(v.page, `${pg.name}-${width}`);
        if (width === 390) {
          const sw = await v.page.evaluate(() => document.documentElement.scrollWidth);
          if (sw > 392) wide.push(`${pg.name}: page is ${sw} px wide`);
        }
        await v.page.close();
      }
    }
    const v = await visit(browser, servers[1].url, { colorScheme: 'dark' });
    await screenshot(v.page, 'release-1280-dark');
    await v.page.close();
    expect(wide).toEqual([]);
  });

  it('charts have a text alternative, tables have captions and headers, controls have names', async () => {
    const bad: string[] = [];
    let charts = 0;
    for (const pg of pages) {
      const v = await visit(browser, servers[0].url + pg.path, { expect404: pg.expect404, wait: pg.wait });
      const r = await v.page.evaluate(() => {
        const out: string[] = [];
        const svgs = [...document.querySelectorAll('main svg')].filter((s) => s.getBoundingClientRect().width > 60);
        for (const s of svgs) {
          const title = s.querySelector(':scope > title')?.textContent?.trim() ?? '';
          const desc = s.querySelector(':scope > desc')?.textContent?.trim() ?? '';
          if (s.getAttribute('role') !== 'img' || !s.getAttribute('aria-label')) out.push(`chart without role/label: ${title}`);
          if (title.length < 3) out.push('chart without a title');
          if (desc.length < 20) out.push(`chart "${title}" without a data summary`);
        }
        for (const t of document.querySelectorAll('main table')) {
          if ((t as HTMLElement).closest('[hidden]')) continue;
          // tables the release authors wrote in their Markdown description cannot carry a caption
          const authored = !!t.closest('.description');
          if (!authored && !t.querySelector('caption')?.textContent?.trim()) out.push('table without a caption');
          if (!t.querySelector('thead th')) out.push(`table without column headers: ${t.querySelector('caption')?.textContent}`);
        }
        for (const c of document.querySelectorAll('input, select, button, textarea')) {
          const e = c as HTMLInputElement;
          if (e.type === 'hidden' || e.closest('[hidden]')) continue;
          const named = (e.labels && e.labels.length > 0) || e.getAttribute('aria-label') || e.getAttribute('aria-labelledby') || (e.tagName === 'BUTTON' && e.textContent?.trim()) || e.title;
          if (!named) out.push(`unnamed control ${e.tagName} ${e.name}`);
        }
        return { out, svgs: svgs.length };
      });
      charts += r.svgs;
      bad.push(...r.out.map((x) => `${pg.name}: ${x}`));
      await v.page.close();
    }
    expect(charts).toBeGreaterThan(8);
    expect(bad).toEqual([]);
  });

  it('every control is reachable from the keyboard with a visible focus', async () => {
    for (const pg of pages.filter((p) => ['catalogue', 'object', 'release'].includes(p.name))) {
      const v = await visit(browser, servers[0].url + pg.path, { wait: pg.wait });
      const seen: string[] = [];
      for (let k = 0; k < 30; k++) {
        await v.page.keyboard.press('Tab');
        const f = await v.page.evaluate(() => {
          const e = document.activeElement as HTMLElement | null;
          if (!e || e === document.body) return null;
          const st = getComputedStyle(e);
          const label = `${e.tagName.toLowerCase()}${e.getAttribute('name') ? `[name=${e.getAttribute('name')}]` : ''} ${(e.textContent ?? '').trim().slice(0, 20)}`;
          const visible = st.outlineStyle !== 'none' && parseFloat(st.outlineWidth) >= 2;
          // the SED unit switch draws its focus ring on the label of the focused radio button
          const radioLabel = e.matches('input[type=radio]') ? getComputedStyle(document.querySelector(`label[for="${e.id}"]`) as Element).outlineStyle !== 'none' : false;
          return { label, visible: visible || radioLabel };
        });
        if (!f) continue;
        seen.push(f.label);
        expect(f.visible, `${pg.name}: focus on ${f.label} is not visible`).toBe(true);
      }
      expect(seen.length).toBeGreaterThan(10);
      await v.page.close();
    }
  });

  for (const scheme of ['light', 'dark'] as const) {
    it(`text contrast meets WCAG 2.1 AA in the ${scheme} theme`, async () => {
      const bad: string[] = [];
      let checked = 0;
      for (const pg of pages) {
        const v = await visit(browser, servers[0].url + pg.path, { colorScheme: scheme, expect404: pg.expect404, wait: pg.wait });
        for (const c of await contrasts(v.page, TEXT_STYLES)) {
          checked++;
          if (c.ratio < 4.5) bad.push(`${pg.name} ${c.selector} "${c.text}": ${c.fg} on ${c.bg} = ${c.ratio}`);
        }
        await v.page.close();
      }
      expect(checked).toBeGreaterThan(100);
      expect(bad).toEqual([]);
    });
  }
});
