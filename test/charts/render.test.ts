import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { writeMiniContent } from '../helpers/mini-content.ts';
import type { RelationContent, SiteContent } from '../../src/lib/pipeline/content.ts';
import { siteFigureJobs, type FigureJob } from '../../src/lib/charts/figures.ts';
import { renderSvg } from '../../src/lib/charts/render.ts';

let jobs: FigureJob[];
beforeAll(async () => {
  const dir = mkdtempSync(join(tmpdir(), 'posterity-tpl-'));
  await writeMiniContent(dir, { mock: true });
  const site = JSON.parse(readFileSync(join(dir, 'site.json'), 'utf8')) as SiteContent;
  const rel = JSON.parse(readFileSync(join(dir, 'relations/main-sequence.json'), 'utf8')) as RelationContent;
  jobs = siteFigureJobs(site, [rel], null, null);
});

describe('site figure rendering', () => {
  it('gives the same bytes whatever was rendered before (ids renamed in order of appearance)', async () => {
    const once = await Promise.all(jobs.map((j) => renderSvg(j.spec)));
    const backward: string[] = [];
    for (const j of [...jobs].reverse()) backward.unshift(await renderSvg(j.spec));
    expect(backward).toEqual(once);
  });
});
