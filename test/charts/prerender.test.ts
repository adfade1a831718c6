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
        'objects/GAL-0001/sed.svg',
        'objects/GAL-0001/sed-mag.svg',
        'objects/GAL-0001/corner.svg',
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
    // the summaries-only object has neither SED nor corner
    expect([...fa.keys()].some((k) => k.startsWith('objects/9007199254740993/'))).toBe(false);
    const again = await prerenderFigures(a, { workers: 2 });
    expect(again.rendered).toBe(0);
    expect(again.cached).toBe(r1.count);
  });
});
