import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { writeMiniContent } from '../helpers/mini-content.ts';
import type { ObjectContent } from '../../src/lib/pipeline/content.ts';
import { objectFigureJobs } from '../../src/lib/charts/figures.ts';
import { clearTemplates, liftSpec, renderSvg, renderSvgFresh, stableStringify } from '../../src/lib/charts/render.ts';

let objs: ObjectContent[];
beforeAll(async () => {
  const dir = mkdtempSync(join(tmpdir(), 'posterity-tpl-'));
  await writeMiniContent(dir, { mock: true });
  const index = JSON.parse(readFileSync(join(dir, 'objects/index.json'), 'utf8')) as { slug: string }[];
  objs = index.map((e) => JSON.parse(readFileSync(join(dir, 'objects', `${e.slug}.json`), 'utf8')) as ObjectContent);
});

describe('template rendering', () => {
  it('lifts data, numeric domains and titles out of the spec, so objects of one shape share a skeleton', () => {
    const [a, b] = objs.filter((o) => o.marginals.length).map((o) => liftSpec(objectFigureJobs(o).find((j) => j.path.endsWith('corner.svg'))!.spec));
    expect(a.datasets.length).toBeGreaterThan(0);
    expect(a.params.length).toBeGreaterThan(0);
    expect(stableStringify(a.skeleton)).not.toMatch(/"values":/);
    expect(stableStringify(a.skeleton)).toBe(stableStringify(b.skeleton));
  });

  it('gives the same bytes as compiling each spec afresh, whatever was rendered before', async () => {
    const jobs = objs.flatMap((o) => objectFigureJobs(o));
    const fresh = await Promise.all(jobs.map((j) => renderSvgFresh(j.spec)));
    clearTemplates();
    const forward: string[] = [];
    for (const j of jobs) forward.push(await renderSvg(j.spec));
    const backward: string[] = [];
    for (const j of [...jobs].reverse()) backward.unshift(await renderSvg(j.spec));
    expect(forward).toEqual(fresh);
    expect(backward).toEqual(fresh);
  });
});
