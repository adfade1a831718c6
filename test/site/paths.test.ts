import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { rel, PATHS } from '../../src/site/paths.ts';
import { relativise, walk } from '../../src/integrations/relative-urls.ts';
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

describe('walk', () => {
  // a folder of 2x10^5 object pages once overflowed the stack (each file spread as an argument);
  // 160 000 files in one folder is past that limit on Node 20's default stack
  it('lists nested files sorted, and a folder of 160 000 files', () => {
    const dir = mkdtempSync(join(tmpdir(), 'posterity-walk-'));
    try {
      mkdirSync(join(dir, 'b', 'many'), { recursive: true });
      writeFileSync(join(dir, 'a.html'), '');
      writeFileSync(join(dir, 'b', 'c.css'), '');
      const N = 160000;
      for (let i = 0; i < N; i++) writeFileSync(join(dir, 'b', 'many', `${String(i).padStart(6, '0')}.txt`), '');
      const files = walk(dir);
      expect(files.length).toBe(N + 2);
      expect(files.slice(0, 3)).toEqual(['a.html', 'b/c.css', 'b/many/000000.txt']);
      expect(files[files.length - 1]).toBe('b/many/159999.txt');
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  }, 120000);
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
