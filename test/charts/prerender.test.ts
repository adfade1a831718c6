import { mkdtempSync, readFileSync, readdirSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { describe, expect, it } from 'vitest';
import { writeMiniContent } from '../helpers/mini-content.ts';
import { prerenderFigures } from '../../src/lib/charts/prerender.ts';

function files(dir: string): Map<string, string> {
  const out = new Map<string, string>();
  const walk = (d: string) => {
    for (const n of readdirSync(d).sort()) {
      const f = join(d, n);
      if (statSync(f).isDirectory()) walk(f);
      else out.set(relative(dir, f), readFileSync(f, 'utf8'));
    }
  };
  walk(dir);
  return out;
}

describe('prerenderFigures', () => {
  it('writes every figure, reuses unchanged ones, and gives the same bytes with one or two workers', async () => {
    const a = mkdtempSync(join(tmpdir(), 'posterity-pre-a-'));
    const b = mkdtempSync(join(tmpdir(), 'posterity-pre-b-'));
    await writeMiniContent(a, { mock: true });
    await writeMiniContent(b, { mock: true });
    const r1 = await prerenderFigures(a, { workers: 1 });
    const r2 = await prerenderFigures(b, { workers: 2 });
    expect(r1.rendered).toBe(r1.count);
    expect(r2.count).toBe(r1.count);
    const fa = files(join(a, 'figures'));
    const fb = files(join(b, 'figures'));
    expect([...fa.keys()]).toEqual([...fb.keys()]);
    for (const [k, v] of fa) expect(fb.get(k), k).toBe(v);
    expect([...fa.keys()]).toEqual(
      expect.arrayContaining([
        'objects/GAL-0001.json',
        'relations/main-sequence.svg',
        'home/sky.svg',
        'home/redshift.svg',
        'home/mass.svg',
        'quality/ess.svg',
        'quality/coverage.svg',
        'quality/pit.svg',
        'massfunction.svg',
      ]),
    );
    const g1 = JSON.parse(fa.get('objects/GAL-0001.json')!);
    expect(g1.sed).toMatch(/^<svg/);
    expect(g1.sedMag).toMatch(/^<svg/);
    expect(g1.posterior).toMatch(/^<svg/);
    // the summaries-only object has a SED but no posterior matrix
    expect(JSON.parse(fa.get("objects/9007199254740993.json")!).posterior).toBeNull();
    // site figures whose spec did not change are reused; object figures are always drawn (cheaper than checking)
    const again = await prerenderFigures(a, { workers: 2 });
    const objectFigures = [...fa.keys()].filter((k) => k.startsWith('objects/')).length;
    expect(again.cached).toBe(r1.count - again.rendered);
    expect(again.rendered).toBeLessThanOrEqual(objectFigures * 3);
  });
});
