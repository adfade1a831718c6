/**
 * The changes page and an object's earlier values in headless Chromium: two small demo
 * releases (0.9.0 derived from 1.0.0 by scripts/demo/previous.ts), built side by side as
 * releases/0.9.0/ and releases/1.0.0/, the second compared with the first and told that it
 * is published at ../0.9.0/. Checked: the counts the page shows are those of changes.json, no
 * console error or failed request, every relative link answers 200 (the object page's link
 * into 0.9.0 included), nothing wider than a phone screen, text contrast (WCAG 2.1 AA), and
 * screenshots at 390 and 1280 px in test-output/screenshots/.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import type { Browser } from 'playwright-core';
import { hasChromium } from '../helpers/chromium.ts';
import { buildRelease, PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { derivePreviousBundle, type PreviousPlan } from '../../scripts/demo/previous.ts';
import { serveStatic } from '../../scripts/serve.ts';
import { slugOf } from '../../src/lib/core/slug.ts';
import type { ChangesContent } from '../../src/lib/pipeline/changes-content.ts';
import { contrasts, launch, relativeLinks, screenshot, statuses, visit } from './helpers/browse.ts';

const ROOT = join(PROJECT_ROOT, 'test-output', 'browser-changes');
const RELEASES = join(ROOT, 'releases');

describe.runIf(hasChromium())('the changes page in the browser', () => {
  let browser: Browser;
  let server: Awaited<ReturnType<typeof serveStatic>>;
  let plan: PreviousPlan;
  let changes: ChangesContent;
  let base: string;

  beforeAll(async () => {
    rmSync(ROOT, { recursive: true, force: true });
    mkdirSync(RELEASES, { recursive: true });
    const bundle = join(ROOT, 'bundle');
    await generateDemoBundle(bundle, { nObjects: 120, drawsRange: [128, 256] });
    plan = await derivePreviousBundle(bundle, join(ROOT, 'bundle-0.9.0'));
    await buildRelease(join(ROOT, 'bundle-0.9.0'), { out: join(RELEASES, '0.9.0') });
    await buildRelease(bundle, { out: join(RELEASES, '1.0.0'), previous: { path: join(RELEASES, '0.9.0'), url: '../0.9.0/' } });
    changes = JSON.parse(readFileSync(join(RELEASES, '1.0.0', 'downloads', 'changes.json'), 'utf8'));
    server = await serveStatic(RELEASES, { base: '/r/' });
    base = `${server.url}1.0.0/`;
    browser = await launch();
  }, 900_000);

  afterAll(async () => {
    await browser?.close();
    server?.server.close();
  });

  const pages = () => {
    const moved = changes.parameters.find((p) => p.nMoved > 0)!.moved[0];
    return [
      { name: 'changes', path: 'changes/' },
      { name: 'object-moved', path: `objects/${moved.slug}/` },
      { name: 'object-renamed', path: `objects/${changes.renamed[0].slug}/` },
      { name: 'release-with-changes', path: '' },
    ];
  };

  it('shows the counts of changes.json', async () => {
    const v = await visit(browser, `${base}changes/`);
    const facts = await v.page.$$eval('.facts dt, .facts dd', (els) => els.map((e) => e.textContent!.trim().replace(/\u2009/g, '')));
    const get = (k: string) => facts[facts.indexOf(k) + 1];
    expect(get('Added')).toBe(String(plan.added.length));
    expect(get('Removed')).toBe(String(plan.removed.length));
    expect(get('Renamed (matched by position)')).toBe(String(plan.renamed.length));
    expect(get('Objects in 1.0.0')).toBe('120');
    const sfr = changes.parameters.find((p) => p.name === 'log_sfr')!;
    expect(sfr.nMoved).toBe(plan.corners.length);
    expect(await v.page.locator(`#moved-log_sfr tbody tr`).count()).toBe(Math.min(20, sfr.nMoved));
    expect(await v.page.locator('main svg[role=img]').count()).toBe(changes.parameters.length);
    expect(await v.page.textContent('.draft')).toContain(`${plan.added.length} added, ${plan.removed.length} removed`);
    await v.page.close();
    // the release page carries schema.org Dataset metadata for dataset search engines
    const home = await visit(browser, base);
    const ld = JSON.parse((await home.page.textContent('script[type="application/ld+json"]'))!);
    expect(ld).toMatchObject({ '@type': 'Dataset', version: '1.0.0', license: 'https://creativecommons.org/licenses/by/4.0/' });
    expect(ld.distribution.map((d: { contentUrl: string }) => d.contentUrl)).toContain('./downloads/changes.json');
    await home.page.close();
  });

  it('loads cleanly and every relative link answers, the earlier release included', async () => {
    const bad: string[] = [];
    for (const pg of pages()) {
      const v = await visit(browser, base + pg.path);
      for (const e of [...v.errors, ...v.failed, ...v.external]) bad.push(`${pg.name}: ${e}`);
      if (v.status !== 200) bad.push(`${pg.name}: status ${v.status}`);
      const links = await relativeLinks(v.page);
      for (const [u, code] of await statuses(links)) if (code !== 200) bad.push(`${pg.name}: link ${u} answers ${code}`);
      await v.page.close();
    }
    expect(bad).toEqual([]);
  });

  it("an object page shows its earlier values and links to its page in 0.9.0", async () => {
    const r = changes.renamed[0];
    const v = await visit(browser, `${base}objects/${r.slug}/`);
    expect(await v.page.textContent('#h-earlier')).toBe('Values in release 0.9.0');
    const href = await v.page.getAttribute('a:has-text("Its page in 0.9.0")', 'href');
    expect(href).toBe(`../../../0.9.0/objects/${slugOf(r.previousId)}/`);
    const res = await v.page.goto(new URL(href!, v.page.url()).toString());
    expect(res?.status()).toBe(200);
    expect(await v.page.textContent('h1')).toBe(r.previousId);
    await v.page.close();
  });

  it('screenshots at 390 and 1280 px, nothing wider than a phone, readable contrast in both themes', async () => {
    const bad: string[] = [];
    for (const pg of pages()) {
      for (const width of [390, 1280]) {
        const v = await visit(browser, base + pg.path, { width });
        await screenshot(v.page, `${pg.name}-${width}`);
        if (width === 390) {
          const sw = await v.page.evaluate(() => document.documentElement.scrollWidth);
          if (sw > 392) bad.push(`${pg.name}: ${sw} px wide at 390`);
        }
        await v.page.close();
      }
      for (const scheme of ['light', 'dark'] as const) {
        const v = await visit(browser, base + pg.path, { colorScheme: scheme });
        for (const c of await contrasts(v.page, ['main p', 'caption', 'caption .sub', 'th', 'td', '.facts dt', '.facts dd', 'main a', '.draft', '.note', 'summary', '.badge.flag']))
          if (c.ratio < 4.5) bad.push(`${pg.name} ${scheme} ${c.selector} "${c.text}": ${c.ratio}`);
        await v.page.close();
      }
    }
    const v = await visit(browser, `${base}changes/`, { colorScheme: 'dark' });
    await screenshot(v.page, 'changes-1280-dark');
    await v.page.close();
    expect(bad).toEqual([]);
  });
});
