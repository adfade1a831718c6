/** The per-object pages of viewer mode, cut from the viewer page. */
import { describe, expect, it } from 'vitest';
import { objectPageHtml, objectPageTemplate } from '../../src/lib/release/object-pages.ts';

const viewer = '<!DOCTYPE html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width"><title>Object · A &amp; B survey</title><link rel="stylesheet" href="../../_astro/a.css"></head><body><a href="../../">Release</a><main id="main"><div id="viewer" data-mode="viewer" data-total="3"><p>Loading</p></div></main></body></html>';

describe('object pages of viewer mode', () => {
  it('set the base to the viewer folder before any URL, name the object and its catalogue index', () => {
    const html = objectPageHtml(objectPageTemplate(viewer), { id: 'G<1>', slug: 'G~3C1~3E', index: 2, ra: 0, dec: 0, redshift: 1, flags: 0, population: 'x' }, 'A & B survey');
    expect(html.indexOf('<base href="../view/">')).toBeLessThan(html.indexOf('href="../../_astro'));
    expect(html.indexOf('<base href="../view/">')).toBeGreaterThan(html.indexOf('<meta charset="utf-8">'));
    expect(html).toContain('<title>G&lt;1&gt; · A &amp; B survey</title>');
    expect(html).toContain('<div id="viewer" data-index="2" data-mode="viewer"');
    expect(html.match(/<title>/g)).toHaveLength(1);
  });

  it('refuse a viewer page without the places they are cut at', () => {
    expect(() => objectPageTemplate(viewer.replace('<div id="viewer"', '<div id="other"'))).toThrow(/shape/);
  });
});
