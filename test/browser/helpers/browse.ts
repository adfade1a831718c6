/**
 * Shared pieces of the browser tests: one Chromium per file, a page visit that records console
 * errors, failed and external requests, a one-level crawl of relative links, screenshots at
 * phone and desktop widths, and WCAG contrast of computed colours.
 */
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { CHROMIUM, CHROMIUM_ARGS } from '../../helpers/chromium.ts';
import { PROJECT_ROOT } from '../../../src/lib/release/build.ts';

export const SHOTS = join(PROJECT_ROOT, 'test-output', 'screenshots');

export async function launch(): Promise<Browser> {
  const { chromium } = await import('playwright-core');
  return chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
}

export interface Visit {
  page: Page;
  status: number | null;
  errors: string[];
  failed: string[];
  external: string[];
}

/**
 * Open `url` and record what went wrong. `expect404` pages (the not-found page and viewer-mode
 * object addresses, which a static host answers with 404.html) may have a 404 main document.
 */
export async function visit(browser: Browser, url: string, opts: { width?: number; expect404?: boolean | RegExp; colorScheme?: 'light' | 'dark'; wait?: (p: Page) => Promise<unknown> } = {}): Promise<Visit> {
  const page = await browser.newPage({ viewport: { width: opts.width ?? 1280, height: 900 }, colorScheme: opts.colorScheme ?? 'light' });
  const origin = new URL(url).origin;
  const errors: string[] = [];
  const failed: string[] = [];
  const external: string[] = [];
  const isMainDoc = (u: string) => u.split('#')[0] === url.split('#')[0];
  // `true`: the page's own address; a pattern: any document address matching it (pages reached by navigation)
  const expected404 = (u: string) => (opts.expect404 instanceof RegExp ? opts.expect404.test(u.split(/[?#]/)[0]) : opts.expect404 === true && isMainDoc(u));
  page.on('console', (m) => {
    if (m.type() !== 'error') return;
    if (expected404(m.location().url) && /status of 404/.test(m.text())) return;
    errors.push(`${m.text()} (${m.location().url})`);
  });
  page.on('pageerror', (e) => errors.push(String(e)));
  page.on('requestfailed', (r) => {
    // a navigation away (e.g. a redirect by script) aborts nothing of ours
    if (r.failure()?.errorText === 'net::ERR_ABORTED' && r.resourceType() === 'document') return;
    failed.push(`${r.url()} ${r.failure()?.errorText ?? ''}`);
  });
  page.on('request', (r) => {
    const u = r.url();
    if (!u.startsWith(origin + '/') && !u.startsWith('data:') && !u.startsWith('blob:')) external.push(u);
  });
  page.on('response', (r) => {
    if (r.status() >= 400 && !(r.status() === 404 && r.request().resourceType() === 'document' && expected404(r.url()))) failed.push(`${r.status()} ${r.url()}`);
  });
  const res = await page.goto(url, { waitUntil: 'networkidle' });
  if (opts.wait) await opts.wait(page);
  return { page, status: res?.status() ?? null, errors, failed, external };
}

export async function screenshot(page: Page, name: string): Promise<void> {
  mkdirSync(SHOTS, { recursive: true });
  await page.screenshot({ path: join(SHOTS, `${name}.png`), fullPage: true });
}

/** Relative links of the page (hrefs as written), absolute URLs, without fragments, unique. */
export async function relativeLinks(page: Page): Promise<string[]> {
  const hrefs = await page.$$eval('a[href]', (as) => as.map((a) => [a.getAttribute('href') as string, (a as HTMLAnchorElement).href]));
  const out = new Set<string>();
  for (const [raw, abs] of hrefs) {
    if (/^[a-z]+:/i.test(raw) || raw.startsWith('//') || raw.startsWith('#') || raw.startsWith('blob:')) continue;
    out.add(abs.split('#')[0]);
  }
  return [...out].sort();
}

/** Status of each URL (GET; bodies discarded). */
export async function statuses(urls: string[]): Promise<Map<string, number>> {
  const out = new Map<string, number>();
  const queue = urls.slice();
  const worker = async () => {
    for (let u = queue.shift(); u !== undefined; u = queue.shift()) {
      const r = await fetch(u, { redirect: 'follow' });
      await r.arrayBuffer();
      out.set(u, r.status);
    }
  };
  await Promise.all([worker(), worker(), worker(), worker()]);
  return out;
}

/** WCAG 2.1 contrast ratio of the computed text colour of each matching element against its effective background. */
export async function contrasts(page: Page, selectors: string[]): Promise<{ selector: string; text: string; fg: string; bg: string; ratio: number }[]> {
  return page.evaluate((sels) => {
    const parse = (c: string): [number, number, number, number] => {
      const m = /rgba?\(([^)]+)\)/.exec(c);
      if (!m) return [0, 0, 0, 0];
      const p = m[1].split(/[\s,/]+/).filter(Boolean).map(Number);
      return [p[0], p[1], p[2], p.length > 3 ? p[3] : 1];
    };
    const lum = ([r, g, b]: number[]) => {
      const f = (v: number) => {
        const s = v / 255;
        return s <= 0.04045 ? s / 12.92 : ((s + 0.055) / 1.055) ** 2.4;
      };
      return 0.2126 * f(r) + 0.7152 * f(g) + 0.0722 * f(b);
    };
    const background = (e: Element | null): number[] => {
      for (let x = e; x; x = x.parentElement) {
        const c = parse(getComputedStyle(x).backgroundColor);
        if (c[3] > 0.5) return c;
      }
      return parse(getComputedStyle(document.documentElement).backgroundColor).slice(0, 3).concat(1);
    };
    const out: { selector: string; text: string; fg: string; bg: string; ratio: number }[] = [];
    for (const sel of sels) {
      for (const e of [...document.querySelectorAll(sel)].slice(0, 3)) {
        if (!(e as HTMLElement).offsetParent && getComputedStyle(e).position !== 'fixed') continue;
        const fg = parse(getComputedStyle(e).color);
        const bg = background(e);
        const a = fg[3];
        const mixed = [0, 1, 2].map((k) => fg[k] * a + bg[k] * (1 - a));
        const l1 = lum(mixed);
        const l2 = lum(bg);
        const ratio = (Math.max(l1, l2) + 0.05) / (Math.min(l1, l2) + 0.05);
        out.push({ selector: sel, text: (e.textContent ?? '').trim().slice(0, 30), fg: getComputedStyle(e).color, bg: `rgb(${bg.slice(0, 3).join(',')})`, ratio: Math.round(ratio * 100) / 100 });
      }
    }
    return out;
  }, selectors);
}
