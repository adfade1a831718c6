import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeMiniContent } from '../helpers/mini-content.ts';

let dir: string;
const saved = process.env.POSTERITY_CONTENT;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'posterity-load-'));
  await writeMiniContent(dir, { omit: ['quality', 'outliers'] });
  process.env.POSTERITY_CONTENT = dir;
});
afterAll(() => {
  if (saved === undefined) delete process.env.POSTERITY_CONTENT;
  else process.env.POSTERITY_CONTENT = saved;
});

describe('site loader', () => {
  it('reads the content folder named by POSTERITY_CONTENT', async () => {
    const load = await import('../../src/site/load.ts');
    expect(load.contentDir()).toBe(dir);
    expect(load.loadSite().counts.objects).toBe(3);
    const index = load.objectIndex();
    expect(index.map((e) => e.id)).toEqual(['GAL-0001', 'GAL 0002/b+', '9007199254740993']);
    expect(load.loadObject(index[1].slug).id).toBe('GAL 0002/b+');
    expect(load.loadRelation('main-sequence')?.bins.length).toBe(2);
    expect(load.loadMassFunction()).not.toBeNull();
  });

  it('returns null for absent optional parts and refuses paths that are not slugs', async () => {
    const load = await import('../../src/site/load.ts');
    expect(load.loadQuality()).toBeNull();
    expect(load.loadOutliers()).toBeNull();
    expect(load.loadRelation('../site')).toBeNull();
    expect(load.figure('../site.json')).toBeNull();
    expect(load.figure('home/sky.svg')).toBeNull(); // not prerendered here
    expect(() => load.loadObject('../site')).toThrow(/not an object slug/);
  });
});
