/**
 * Prerender every figure the pages inline, under `<content>/figures/` (paths in `figures.ts`).
 * Site figures are Vega-Lite specs rendered to SVG; each file carries the hash of its spec
 * (`data-spec-hash` on the root element), so a figure whose spec has not changed is not
 * rendered again. Object figures are written straight to SVG (`objectFigures`, about a
 * millisecond an object), one JSON file per object, split by whole objects over worker
 * threads (one per core by default). Files are written whole (temporary name, then rename),
 * and the bytes do not depend on the number of workers or on what was rendered before.
 */
import { existsSync } from 'node:fs';
import { mkdir, open, readFile, rename, writeFile } from 'node:fs/promises';
import { availableParallelism } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { threadId, Worker } from 'node:worker_threads';
import type { MassFunctionContent, ObjectContent, ObjectIndexEntry, QualityContent, RelationContent, SiteContent } from '../pipeline/content.ts';
import { FIGURES, objectFigures, pngOf, siteFigureJobs, type FigureJob } from './figures.ts';
import { canRasterise, svgToPng } from './raster.ts';
import { renderSvg, specHash } from './render.ts';

export interface PrerenderOptions {
  /** Worker threads for the object figures (default: one per core; 1 renders in this thread). */
  workers?: number;
  /** Re-render even when the spec hash matches. */
  force?: boolean;
  /** Thresholds drawn on the quality histograms. */
  thresholds?: { ess?: number; pvalue?: number };
}

export interface PrerenderResult {
  /** Figures the pages can use (rendered now or unchanged). */
  count: number;
  rendered: number;
  cached: number;
}

async function readJson<T>(file: string): Promise<T | null> {
  if (!existsSync(file)) return null;
  return JSON.parse(await readFile(file, 'utf8')) as T;
}

async function existingHash(file: string): Promise<string | null> {
  let fh;
  try {
    fh = await open(file, 'r');
  } catch {
    return null;
  }
  try {
    const buf = Buffer.alloc(200);
    const { bytesRead } = await fh.read(buf, 0, 200, 0);
    const m = /^<svg data-spec-hash="([0-9a-f]+)"/.exec(buf.subarray(0, bytesRead).toString('utf8'));
    return m ? m[1] : null;
  } finally {
    await fh.close();
  }
}

/** Render the jobs whose spec changed; returns how many were rendered and how many reused. */
export async function runFigureJobs(figuresDir: string, jobs: FigureJob[], force = false): Promise<{ rendered: number; cached: number }> {
  let rendered = 0;
  let cached = 0;
  for (const job of jobs) {
    const file = join(figuresDir, ...job.path.split('/'));
    const hash = specHash(job.spec);
    const png = job.png && (await canRasterise()) ? join(figuresDir, ...pngOf(job.path).split('/')) : null;
    if (!force && (await existingHash(file)) === hash && (!png || existsSync(png))) {
      cached++;
      continue;
    }
    const svg = (await renderSvg(job.spec)).replace(/^<svg/, `<svg data-spec-hash="${hash}"`);
    await mkdir(dirname(file), { recursive: true });
    const tmp = `${file}.tmp-${process.pid}-${threadId}`;
    // the PNG first: an SVG with the current hash means its PNG is current too
    if (png) {
      const bytes = await svgToPng(svg);
      if (bytes) {
        await writeFile(tmp, bytes);
        await rename(tmp, png);
      }
    }
    await writeFile(tmp, svg);
    await rename(tmp, file);
    rendered++;
  }
  return { rendered, cached };
}

/** Figures of a run of objects, read one at a time from `objects/<slug>.json`; always drawn (cheaper than checking). */
export async function renderObjectFigures(contentDir: string, slugs: string[], force = false): Promise<{ rendered: number; cached: number; count: number }> {
  void force;
  const figuresDir = join(contentDir, 'figures');
  let rendered = 0;
  await mkdir(join(figuresDir, 'objects'), { recursive: true });
  for (const slug of slugs) {
    const obj = await readJson<ObjectContent>(join(contentDir, 'objects', `${slug}.json`));
    if (!obj) continue;
    const figs = objectFigures(obj);
    const file = join(figuresDir, ...FIGURES.objectFigures(slug).split('/'));
    const tmp = `${file}.tmp-${process.pid}-${threadId}`;
    await writeFile(tmp, JSON.stringify(figs));
    await rename(tmp, file);
    rendered += (figs.sed ? 2 : 0) + (figs.posterior ? 1 : 0);
  }
  return { rendered, cached: 0, count: rendered };
}

function runWorker(contentDir: string, slugs: string[], force: boolean): Promise<{ rendered: number; cached: number; count: number }> {
  const ext = import.meta.url.endsWith('.ts') ? '.ts' : '.js';
  const module = new URL(`./prerender-worker${ext}`, import.meta.url).href;
  const entry = new URL('./prerender-worker-entry.mjs', import.meta.url);
  return new Promise((ok, fail) => {
    const w = new Worker(entry, { workerData: { contentDir, slugs, force, module } });
    let result: { rendered: number; cached: number; count: number } | null = null;
    w.on('message', (m: { ok: boolean; result?: typeof result; error?: string }) => {
      if (m.ok) result = m.result ?? null;
      else fail(new Error(`figure worker: ${m.error}`));
    });
    w.on('error', fail);
    w.on('exit', (code) => (result ? ok(result) : fail(new Error(`figure worker exited with code ${code} before finishing`))));
  });
}

export async function prerenderFigures(contentDir: string, opts: PrerenderOptions = {}): Promise<PrerenderResult> {
  const dir = resolve(contentDir);
  const site = await readJson<SiteContent>(join(dir, 'site.json'));
  if (!site) throw new Error(`prerenderFigures: ${join(dir, 'site.json')} is missing`);
  const index = (await readJson<ObjectIndexEntry[]>(join(dir, 'objects', 'index.json'))) ?? [];
  const relations: RelationContent[] = [];
  for (const r of site.relations) {
    const rel = await readJson<RelationContent>(join(dir, 'relations', `${r.name}.json`));
    if (rel) relations.push(rel);
  }
  const quality = await readJson<QualityContent>(join(dir, 'quality.json'));
  const mf = await readJson<MassFunctionContent>(join(dir, 'massfunction.json'));
  const force = opts.force ?? false;

  const siteJobs = siteFigureJobs(site, relations, quality, mf, opts.thresholds ?? (site.quality ? { ess: site.quality.minEss, pvalue: site.quality.minChi2Pvalue } : undefined));
  // viewer mode: object figures are drawn in the browser from the shards, none are prerendered
  const slugs = site.objectPages?.mode === 'viewer' ? [] : index.map((e) => e.slug);
  const nWorkers = Math.max(1, Math.min(opts.workers ?? availableParallelism(), slugs.length));
  let rendered = 0;
  let cached = 0;
  let count = siteJobs.length;
  const parts: Promise<{ rendered: number; cached: number; count: number }>[] = [];
  if (nWorkers <= 1) {
    parts.push(renderObjectFigures(dir, slugs, force));
  } else {
    // contiguous runs of whole objects, one per worker
    const per = Math.ceil(slugs.length / nWorkers);
    for (let w = 0; w < nWorkers; w++) {
      const part = slugs.slice(w * per, (w + 1) * per);
      if (part.length) parts.push(runWorker(dir, part, force));
    }
  }
  const siteDone = runFigureJobs(join(dir, 'figures'), siteJobs, force);
  const results = await Promise.all([...parts, siteDone.then((r) => ({ ...r, count: 0 }))]);
  for (const r of results) {
    rendered += r.rendered;
    cached += r.cached;
    count += r.count;
  }
  return { count, rendered, cached };
}
