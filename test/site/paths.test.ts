import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { rel, PATHS } from '../../src/site/paths.ts';
import { relativise } from '../../src/integrations/relative-urls.ts';
import { DARK_REMAP } from '../../src/lib/charts/theme.ts';

describe('rel', () => {
  it('links between directory pages and files relatively', () => {
    expect(rel('/', '/catalogue/')).toBe('./catalogue/');
    expect(rel('/objects/a/', '/')).toBe('../../');
    expect(rel('/objects/a/', '/objects/b/')).toBe('../b/');
    expect(rel('/objects/a/', '/objects/a/')).toBe('./');
    expect(rel('/objects/a/', '/downloads/catalogue.csv')).toBe('../../downloads/catalogue.csv');
    expect(rel('/', '/#relations')).toBe('./#relations');
    expect(rel('/404.html', '/catalogue/')).toBe('./catalogue/');
    expect(rel('/objects/a/index.html', '/_astro/x.css')).toBe('../../_astro/x.css');
  });

  it('puts ids in URLs only through the slug', () => {
    expect(PATHS.objectOfId('a/b c')).toBe('/objects/a~2Fb~20c/');
  });
});

describe('relativise', () => {
  it('rewrites root-absolute href, src and url() but not protocol-relative or external ones', () => {
    const html = '<link href="/_astro/a.css"><script src="/_astro/b.js"></script><a href="//x.org/">x</a><a href="https://x.org/">y</a><div style="background:url(/_astro/c.png)"></div>';
    const out = relativise(html, 'objects/a/index.html', 'html');
    expect(out).toContain('href="../../_astro/a.css"');
    expect(out).toContain('src="../../_astro/b.js"');
    expect(out).toContain('href="//x.org/"');
    expect(out).toContain('url(../../_astro/c.png)');
    expect(relativise('a{background:url("/_astro/f.woff")}', '_astro/x.css', 'css')).toBe('a{background:url("./f.woff")}');
  });
});

describe('chart colours', () => {
  it('the dark-theme stylesheet remaps exactly the colours of DARK_REMAP', () => {
    const css = readFileSync(new URL('../../src/styles/chart-colours.css', import.meta.url), 'utf8');
    const pairs = [...css.matchAll(/\[(fill|stroke)="(#[0-9a-f]{6})"\] \{ \1: (#[0-9a-f]{6}); \}/g)].map((m) => [m[1], m[2], m[3]]);
    const expected = Object.entries(DARK_REMAP).flatMap(([from, to]) => [['fill', from, to], ['stroke', from, to]]);
    expect(pairs.sort()).toEqual(expected.sort());
  });
});
