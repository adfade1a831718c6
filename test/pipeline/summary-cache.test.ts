/**
 * Incremental rebuilds: the summaries of a build are kept for the next build of the same output
 * (`summary-cache.ts`). Editing display text in release.json reuses them and gives the same
 * content as summarising again; changing a summary setting or the samples summarises again.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { join, relative } from 'node:path';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { runPipeline } from '../../src/lib/pipeline/run.ts';
import { readTable } from '../../src/lib/io/read.ts';
import { writeArrow } from '../../src/lib/io/arrow.ts';

const ROOT = join(PROJECT_ROOT, 'test-output', 'summary-cache');
const bundle = join(ROOT, 'bundle');
const cache = join(ROOT, 'cache');

function files(dir: string): Map<string, Buffer> {
  const out = new Map<string, Buffer>();
  const walk = (d: string) => {
    for (const e of readdirSync(d)) {
      const p = join(d, e);
      if (statSync(p).isDirectory()) walk(p);
      else out.set(relative(dir, p), readFileSync(p));
    }
  };
  walk(dir);
  return out;
}

async function run(name: string, useCache = true) {
  const d = join(ROOT, name);
  const r = await runPipeline(bundle, { contentDir: join(d, 'content'), downloadsDir: join(d, 'downloads'), ...(useCache ? { summaryCache: cache } : {}) });
  return { r, content: files(join(d, 'content')), downloads: files(join(d, 'downloads')) };
}

function editConfig(f: (c: Record<string, any>) => void) {
  const p = join(bundle, 'release.json');
  const c = JSON.parse(readFileSync(p, 'utf8'));
  f(c);
  writeFileSync(p, JSON.stringify(c, null, 2));
}

describe('summaries reused between builds', () => {
  let first: Awaited<ReturnType<typeof run>>;
  beforeAll(async () => {
    rmSync(ROOT, { recursive: true, force: true });
    mkdirSync(ROOT, { recursive: true });
    await generateDemoBundle(bundle, { nObjects: 30, drawsRange: [48, 64], seed: 5 });
    first = await run('first');
  }, 300_000);

  it('computes them the first time and reuses them, byte for byte, when nothing changed', async () => {
    expect(first.r.summaries).toBe('computed');
    const again = await run('again');
    expect(again.r.summaries).toBe('reused');
    expect([...again.content.keys()].sort()).toEqual([...first.content.keys()].sort());
    for (const [k, v] of first.content) expect(again.content.get(k)!.equals(v), k).toBe(true);
    for (const [k, v] of first.downloads) if (k !== 'release.json' && k !== 'SHA256SUMS') expect(again.downloads.get(k)!.equals(v), k).toBe(true);
  }, 300_000);

  it('reuses them after a change of display text, and the text reaches the content', async () => {
    editConfig((c) => (c.title = `${c.title} (second edition)`));
    const t = await run('title');
    expect(t.r.summaries).toBe('reused');
    expect(JSON.parse(t.content.get('site.json')!.toString()).title).toMatch(/second edition/);
    // the same as summarising again without the cache
    const fresh = await run('title-fresh', false);
    expect(fresh.r.summaries).toBe('computed');
    for (const [k, v] of fresh.content) expect(t.content.get(k)?.equals(v), k).toBe(true);
  }, 300_000);

  it('summarises again when a summary setting or the samples change', async () => {
    editConfig((c) => (c.quality = { ...(c.quality ?? {}), minEss: 77 }));
    expect((await run('threshold')).r.summaries).toBe('computed');
    expect((await run('threshold-again')).r.summaries).toBe('reused');
    editConfig((c) => (c.seed = (c.seed ?? 1) + 1));
    expect((await run('seed')).r.summaries).toBe('computed');
    // one draw of one object moved
    const cfg = JSON.parse(readFileSync(join(bundle, 'release.json'), 'utf8'));
    const path = join(bundle, cfg.tables.samples.path);
    const t = await readTable(path);
    const col = t.columns.find((c) => c.kind === 'float32' || c.kind === 'float64')!;
    (col.values as Float64Array)[0] += 0.01;
    await writeArrow(path, t);
    expect((await run('samples')).r.summaries).toBe('computed');
  }, 300_000);
});
