/**
 * End to end: a small demo bundle is generated, built into a release, and the output is
 * checked on disk and in headless Chromium (release page, an object page, a relation page).
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { execFileSync, spawnSync } from 'node:child_process';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { buildRelease, PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { serveStatic } from '../../scripts/serve.ts';
import { hasChromium, CHROMIUM, CHROMIUM_ARGS } from '../helpers/chromium.ts';
import { slugOf } from '../../src/lib/core/slug.ts';

const ROOT = join(PROJECT_ROOT, 'test-output', 'e2e');
const BUNDLE = join(ROOT, 'bundle');
const OUT = join(ROOT, 'dist');
const N = 160;

beforeAll(async () => {
  rmSync(ROOT, { recursive: true, force: true });
  mkdirSync(ROOT, { recursive: true });
  await generateDemoBundle(BUNDLE, { nObjects: N });
  await buildRelease(BUNDLE, { out: OUT });
}, 900_000);

describe('built release', () => {
  it('has the release, catalogue, relation and one page per object', () => {
    expect(existsSync(join(OUT, 'index.html'))).toBe(true);
    expect(existsSync(join(OUT, 'catalogue', 'index.html'))).toBe(true);
    const index = JSON.parse(readFileSync(join(OUT, 'downloads', 'release.json'), 'utf8'));
    expect(index.provenance.inputs.length).toBeGreaterThan(3);
    const objects = readdirSync(join(OUT, 'objects')).filter((d) => existsSync(join(OUT, 'objects', d, 'index.html')));
    const csv = readFileSync(join(OUT, 'downloads', 'catalogue.csv'), 'utf8').trim().split('\n');
    const ids = csv.slice(1).map((l) => (l.startsWith('"') ? JSON.parse(l.slice(0, l.indexOf('"', 1) + 1)) : l.split(',')[0]));
    for (const id of ids) expect(objects, id).toContain(slugOf(id));
    expect(objects.length).toBeGreaterThan(N * 0.5);
    const rel = readFileSync(join(OUT, 'relations', 'main_sequence', 'index.html'), 'utf8');
    expect(rel).toContain('<svg');
  });

  it('publishes the catalogue columns of the design', () => {
    const head = readFileSync(join(OUT, 'downloads', 'catalogue.csv'), 'utf8').split('\n')[0].split(',');
    for (const c of ['id', 'ra', 'dec', 'redshift', 'n_samples', 'ess', 'chi2', 'chi2_pvalue', 'flags', 'population', 'log_mstar_mean', 'log_mstar_std', 'log_mstar_p025', 'log_mstar_p16', 'log_mstar_p50', 'log_mstar_p84', 'log_mstar_p975', 'main_sequence_offset', 'main_sequence_tension'])
      expect(head).toContain(c);
    const sums = readFileSync(join(OUT, 'downloads', 'SHA256SUMS'), 'utf8');
    expect(sums).toMatch(/^[0-9a-f]{64} {2}catalogue\.csv$/m);
  });

  it('a malformed release.json is refused with the field named, and the output is untouched', () => {
    const bad = join(ROOT, 'bad-bundle');
    rmSync(bad, { recursive: true, force: true });
    mkdirSync(bad);
    const cfg = JSON.parse(readFileSync(join(BUNDLE, 'release.json'), 'utf8'));
    delete cfg.title;
    cfg.survey.areaDeg2 = 'large';
    writeFileSync(join(bad, 'release.json'), JSON.stringify(cfg));
    const before = readFileSync(join(OUT, 'index.html'));
    const r = spawnSync(process.execPath, [join(PROJECT_ROOT, 'scripts', 'posterity.mjs'), 'build', bad, '--out', OUT], { encoding: 'utf8' });
    expect(r.status).not.toBe(0);
    expect(r.stderr).toContain('field "title"');
    expect(r.stderr).toContain('required field is missing');
    expect(r.stderr).toContain('field "survey.areaDeg2"');
    expect(readFileSync(join(OUT, 'index.html')).equals(before)).toBe(true);
    const c = spawnSync(process.execPath, [join(PROJECT_ROOT, 'scripts', 'posterity.mjs'), 'check', bad], { encoding: 'utf8' });
    expect(c.status).toBe(1);
  });
});

describe.runIf(hasChromium())('in headless Chromium', () => {
  let server: Awaited<ReturnType<typeof serveStatic>>;
  let browser: import('playwright-core').Browser;
  beforeAll(async () => {
    server = await serveStatic(OUT, { base: '/release/v1/' });
    const { chromium } = await import('playwright-core');
    browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
  });
  afterAll(async () => {
    await browser?.close();
    server?.server.close();
  });

  async function visit(path: string, shot: string) {
    const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
    const errors: string[] = [];
    const failed: string[] = [];
    const external: string[] = [];
    page.on('console', (m) => {
      if (m.type() === 'error') errors.push(m.text());
    });
    page.on('pageerror', (e) => errors.push(String(e)));
    page.on('requestfailed', (r) => failed.push(r.url()));
    page.on('request', (r) => {
      if (!r.url().startsWith(server.url.replace(/release\/v1\/$/, ''))) external.push(r.url());
    });
    page.on('response', (r) => {
      if (r.status() >= 400) failed.push(`${r.status()} ${r.url()}`);
    });
    await page.goto(server.url + path, { waitUntil: 'networkidle' });
    mkdirSync(join(PROJECT_ROOT, 'test-output', 'screenshots'), { recursive: true });
    await page.screenshot({ path: join(PROJECT_ROOT, 'test-output', 'screenshots', `${shot}.png`), fullPage: true });
    const charts = await page.$$eval('svg', (els) => els.filter((e) => e.getBoundingClientRect().width > 100).map((e) => e.querySelectorAll('path, rect, circle, line, text').length));
    await page.close();
    return { errors, failed, external, charts };
  }

  it('release page loads cleanly with charts', async () => {
    const r = await visit('', 'release');
    expect(r.errors).toEqual([]);
    expect(r.failed).toEqual([]);
    expect(r.external).toEqual([]);
    expect(r.charts.length).toBeGreaterThan(0);
    expect(Math.min(...r.charts)).toBeGreaterThan(3);
  });

  it('an object page loads cleanly with its SED and corner plot', async () => {
    const id = readFileSync(join(OUT, 'downloads', 'catalogue.csv'), 'utf8').split('\n')[1].split(',')[0];
    const r = await visit(`objects/${slugOf(id)}/`, 'object');
    expect(r.errors).toEqual([]);
    expect(r.failed).toEqual([]);
    expect(r.external).toEqual([]);
    expect(r.charts.length).toBeGreaterThanOrEqual(2);
    expect(Math.min(...r.charts)).toBeGreaterThan(3);
  });

  it('brushing the catalogue x-y view filters the table, and the URL keeps the box', async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 1100 } });
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(String(e)));
    await page.goto(server.url + 'catalogue/', { waitUntil: 'networkidle' });
    await page.waitForSelector('.explorer-plot canvas');
    const before = Number(await page.getAttribute('[data-rows]', 'data-rows'));
    const box = (await (await page.$('.explorer-plot canvas'))!.boundingBox())!;
    await page.mouse.move(box.x + box.width * 0.45, box.y + box.height * 0.15);
    await page.mouse.down();
    await page.mouse.move(box.x + box.width * 0.85, box.y + box.height * 0.7, { steps: 5 });
    await page.mouse.up();
    await page.waitForFunction((n) => Number(document.querySelector('[data-rows]')?.getAttribute('data-rows')) < n, before);
    const after = Number(await page.getAttribute('[data-rows]', 'data-rows'));
    expect(after).toBeGreaterThan(0);
    expect(after).toBeLessThan(before);
    expect(page.url()).toMatch(/r\.log_mstar_p50=/);
    expect(errors).toEqual([]);
    await page.close();
  });

  it('brushing the relation plot lists the galaxies inside, and clicking a point opens its page', async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 1000 } });
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(String(e)));
    await page.goto(server.url + 'relations/main_sequence/', { waitUntil: 'networkidle' });
    await page.locator('.linked').scrollIntoViewIfNeeded();
    await page.waitForSelector('.linked-live:not([hidden]) canvas, .linked-live:not([hidden]) svg', { timeout: 30_000 });
    const live = (await (await page.$('.linked-live'))!.boundingBox())!;
    await page.mouse.move(live.x + live.width * 0.15, live.y + live.height * 0.1);
    await page.mouse.down();
    await page.mouse.move(live.x + live.width * 0.85, live.y + live.height * 0.85, { steps: 8 });
    await page.mouse.up();
    await page.waitForSelector('.linked-table:not([hidden]) tbody tr', { timeout: 10_000 });
    expect(await page.locator('.linked-table tbody tr').count()).toBeGreaterThan(0);
    // a fresh view (no brush); hover until the tooltip names a point, then click it
    await page.goto(server.url + 'relations/main_sequence/', { waitUntil: 'networkidle' });
    await page.locator('.linked').scrollIntoViewIfNeeded();
    await page.waitForSelector('.linked-live:not([hidden]) canvas, .linked-live:not([hidden]) svg', { timeout: 30_000 });
    const view = (await (await page.$('.linked-live'))!.boundingBox())!;
    const start = page.url();
    let opened = false;
    outer: for (let py = view.y + view.height * 0.1; py < view.y + view.height * 0.9; py += 6)
      for (let px = view.x + view.width * 0.1; px < view.x + view.width * 0.9; px += 6) {
        await page.mouse.move(px, py);
        if (await page.locator('.linked-tip:not([hidden])').count()) {
          await page.mouse.down();
          await page.mouse.up();
          await page.waitForURL((u) => u.toString() !== start, { timeout: 5000 }).catch(() => undefined);
          opened = page.url() !== start;
          break outer;
        }
      }
    if (opened) await page.waitForLoadState('domcontentloaded');
    expect(opened).toBe(true);
    expect(page.url()).toMatch(/\/objects\/[^/]+\/$/);
    expect(errors).toEqual([]);
    await page.close();
  });

  it('the relation page loads cleanly with its chart', async () => {
    const r = await visit('relations/main_sequence/', 'relation');
    expect(r.errors).toEqual([]);
    expect(r.failed).toEqual([]);
    expect(r.external).toEqual([]);
    expect(r.charts.length).toBeGreaterThan(0);
    expect(Math.min(...r.charts)).toBeGreaterThan(3);
  });
});

void execFileSync;
