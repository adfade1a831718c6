import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { compile } from 'vega-lite';
import { writeMiniContent } from '../helpers/mini-content.ts';
import type { MassFunctionContent, ObjectContent, QualityContent, RelationContent, SiteContent } from '../../src/lib/pipeline/content.ts';
import {
  coverageSpec,
  posteriorSvg,
  essSpec,
  flagsByRedshiftSpec,
  flagsSpec,
  massFunctionSpec,
  massSpec,
  pitSpec,
  pvalueSpec,
  redshiftSpec,
  relationPointsSpec,
  relationSpec,
  sedPoints,
  sedModel,
  sedSvg,
  skySpec,
  maskedRanges,
  abMagFromUJy,
  massLabel,
} from '../../src/lib/charts/index.ts';
import { renderSvg, stableStringify, specHash } from '../../src/lib/charts/render.ts';

let plain: string;
let mock: string;
const read = <T>(dir: string, p: string): T => JSON.parse(readFileSync(join(dir, p), 'utf8')) as T;

beforeAll(async () => {
  plain = mkdtempSync(join(tmpdir(), 'posterity-charts-'));
  mock = mkdtempSync(join(tmpdir(), 'posterity-charts-mock-'));
  await writeMiniContent(plain);
  await writeMiniContent(mock, { mock: true });
});

function compiles(spec: unknown): void {
  const warnings: string[] = [];
  const logger = { level: () => logger, warn: (...a: unknown[]) => (warnings.push(a.join(' ')), logger), info: () => logger, debug: () => logger, error: (...a: unknown[]) => { throw new Error(a.join(' ')); } };
  expect(() => compile(spec as never, { logger: logger as never })).not.toThrow();
}

const sed = (o: ObjectContent, units: 'flux' | 'mag') => sedSvg(sedModel(o, { units }));

describe('SED figure', () => {
  it('draws photometry, model, spectrum and residuals in both units', () => {
    const o = read<ObjectContent>(plain, 'objects/GAL-0001.json');
    for (const units of ['flux', 'mag'] as const) {
      const svg = sed(o, units);
      expect(svg.startsWith('<svg')).toBe(true);
      expect(svg).toContain('model SED');
      expect(svg).toContain('spectrum');
      expect(svg).toContain('Residual / error');
      expect(svg).toContain(units === 'mag' ? 'AB magnitude' : 'Flux density');
      expect(svg).toContain('<desc>');
    }
  });

  it('draws upper limits as downward markers at their n-sigma value, and in magnitudes turns non-positive fluxes into limits', () => {
    const o = read<ObjectContent>(plain, 'objects/GAL~200002~2Fb~2B.json');
    const flux = sedPoints(o.photometry, 'flux');
    const mag = sedPoints(o.photometry, 'mag');
    const limit = o.photometry.find((p) => p.upperLimit)!;
    expect(flux.limits.map((l) => l.band)).toEqual([limit.label]);
    expect(flux.limits[0].y).toBeCloseTo(limit.limitUJy!, 4);
    expect(flux.limits[0].tip).toBeLessThan(flux.limits[0].y);
    // the negative forced flux (band g) is a measurement in flux units, a 3-sigma limit in magnitudes
    const g = o.photometry.find((p) => p.band === 'g')!;
    expect(g.fluxUJy).toBeLessThan(0);
    expect(flux.meas.some((p) => p.band === g.label)).toBe(true);
    expect(mag.limits.map((l) => l.band)).toEqual([limit.label, g.label]);
    expect(mag.limits[1].y).toBeCloseTo(abMagFromUJy(3 * g.errUJy), 3);
    const svg = sed(o, 'flux');
    expect(svg).toContain('upper limit');
    expect(svg).toContain('flux ≤ 0 (on axis floor)');
  });

  it('AB magnitude of 3631 Jy is 0 (Oke and Gunn 1983 zero point)', () => {
    expect(abMagFromUJy(3631e6)).toBeCloseTo(0, 3);
  });

  it('finds masked spectral ranges', () => {
    expect(maskedRanges([1, 2, 3, 4, 5], [false, true, true, false, true])).toEqual([[1.5, 3.5], [4.5, 5]]);
  });

  it('escapes text from the input tables', () => {
    const o = read<ObjectContent>(plain, 'objects/GAL-0001.json');
    for (const svg of [sed({ ...o, id: 'a<b>&"c' }, 'flux'), posteriorSvg({ ...o, id: 'a<b>&"c' })]) {
      expect(svg).not.toContain('a<b>');
      expect(svg).toContain('a&lt;b&gt;&amp;');
    }
  });

  it('is the same text whatever was drawn before, with geometry at hundredths of a pixel', () => {
    const o = read<ObjectContent>(plain, 'objects/GAL-0001.json');
    const first = sed(o, 'flux');
    posteriorSvg(o);
    sed(o, 'mag');
    expect(sed(o, 'flux')).toBe(first);
    expect(first).not.toMatch(/ (d|transform|x|y)="[^"]*\d\.\d{3,}[^"]*"/);
    expect(first).not.toMatch(/NaN|Infinity|undefined/);
  });
});

describe('posterior matrix', () => {
  it('shades credible regions named by enclosed mass, never in sigma, and marks truth only for mocks', () => {
    const o = read<ObjectContent>(plain, 'objects/GAL-0001.json');
    const m = read<ObjectContent>(mock, 'objects/GAL-0001.json');
    const a = posteriorSvg(o);
    const b = posteriorSvg(m);
    for (const svg of [a, b]) {
      expect(svg).toContain('68% credible');
      expect(svg).toContain('95% credible');
      expect(svg.toLowerCase()).not.toContain('sigma');
      expect(svg).not.toContain('σ');
      expect(svg).not.toContain('<rect x'); // regions are paths, not density cells
      expect(svg).not.toMatch(/NaN|Infinity|undefined/);
    }
    expect(a).not.toContain('true value');
    expect(b).toContain('true value (mock)');
    expect(b).toContain('marked with a diamond');
  });

  it('formats mass levels as percentages', () => {
    expect(massLabel(0.68)).toBe('68%');
    expect(massLabel(0.954)).toBe('95.4%');
  });

  it('stays small: a 4-parameter matrix under 8 KB gzipped', async () => {
    const { gzipSync } = await import('node:zlib');
    const svg = posteriorSvg(read<ObjectContent>(plain, 'objects/GAL-0001.json'));
    expect(gzipSync(svg).length).toBeLessThan(8_000);
  });
});

describe('population specs', () => {
  it('relation: density, bands, running medians, reference, completeness and outliers', async () => {
    const r = read<RelationContent>(mock, 'relations/main-sequence.json');
    const spec = relationSpec(r);
    compiles(spec);
    compiles(relationPointsSpec(r));
    const svg = await renderSvg(spec);
    expect(svg).toContain('0.2 &lt; z &lt; 0.8');
    expect(svg).toContain('outliers_1_marks'); // the outlier at z = 1.204 sits in the second panel
    expect((spec as { description: string }).description).toContain('completeness');
  });

  it('site, quality and mass-function specs compile and render', async () => {
    const site = read<SiteContent>(mock, 'site.json');
    const q = read<QualityContent>(mock, 'quality.json');
    const mf = read<MassFunctionContent>(mock, 'massfunction.json');
    const specs = [skySpec(site), redshiftSpec(site), massSpec(site), essSpec(q, 100), pvalueSpec(q, 0.01), flagsSpec(q), flagsByRedshiftSpec(q), coverageSpec(q), pitSpec(q), massFunctionSpec(mf)];
    for (const s of specs) {
      compiles(s);
      const svg = await renderSvg(s);
      expect(svg.length).toBeGreaterThan(500);
      expect(svg).toMatch(/role="img" aria-label="[^"]+"/);
    }
  });
});

describe('renderSvg', () => {
  it('is deterministic whatever was rendered before', async () => {
    const site = read<SiteContent>(mock, 'site.json');
    const q = read<QualityContent>(mock, 'quality.json');
    const spec = redshiftSpec(site);
    const first = await renderSvg(spec);
    await renderSvg(essSpec(q, 100));
    await renderSvg(skySpec(site));
    expect(await renderSvg(spec)).toBe(first);
    expect(first).not.toMatch(/id="clip\d+"/);
    // geometry is rounded to hundredths of a pixel
    expect(first).not.toMatch(/ (d|transform)="[^"]*\d\.\d{3,}[^"]*"/);
  });

  it('hashes specs independently of key order', () => {
    expect(stableStringify({ b: 1, a: [1, { d: 2, c: 3 }] })).toBe('{"a":[1,{"c":3,"d":2}],"b":1}');
    expect(specHash({ a: 1, b: 2 })).toBe(specHash({ b: 2, a: 1 }));
  });
});
