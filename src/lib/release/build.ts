/**
 * A whole release build: pipeline into a staging folder, figures prerendered, the Astro
 * site built, downloads moved in, and only then the finished folder swapped into place.
 * A failed or interrupted build removes its staging folder and leaves the previous
 * output byte for byte as it was.
 */
import { spawn } from 'node:child_process';
import { existsSync, readFileSync, rmSync } from 'node:fs';
import { cp, mkdir, rename, rm } from 'node:fs/promises';
import { basename, dirname, join, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import { runPipeline, type PipelineOptions } from '../pipeline/run.ts';
import { PosterityError } from '../core/problems.ts';
import type { ObjectIndexEntry } from '../pipeline/content.ts';
import { publishedVersion, sameContent } from './immutable.ts';

export const PROJECT_ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '../../..');

export interface BuildOptions {
  out: string;
  progress?: PipelineOptions['progress'];
  log?: (line: string) => void;
  truth?: PipelineOptions['truth'];
  massFunctionTruth?: PipelineOptions['massFunctionTruth'];
  /** Keep a copy of the derived content here (default: none). */
  keepContent?: string;
  /** Folder of merged summaries (`posterity merge --out`), used instead of summarising again. */
  summaries?: string;
  /** An earlier release to compare with: publishes /changes/ and downloads/changes.json. */
  previous?: PipelineOptions['previous'];
  /**
   * Overwrite an output folder that holds a published version (another version, or this one
   * with different content). Without it such a build is refused, so a cited version never
   * silently changes.
   */
  replace?: boolean;
}

export interface BuildSummary {
  objects: number;
  out: string;
  warnings: string[];
  seconds: number;
  pages: number;
  files: number;
  /** Figures rendered in this build and reused unchanged from the previous build of the same output. */
  figures: { rendered: number; reused: number };
  /** Posterior summaries: computed in this build, reused from the previous build of the same output, or given as merged partials. */
  summaries: 'computed' | 'reused' | 'given';
  bytes: number;
  downloadBytes: number;
}

/** Count pages, files and bytes of a built site. */
async function siteStats(dir: string): Promise<Pick<BuildSummary, 'pages' | 'files' | 'bytes' | 'downloadBytes'>> {
  const { readdir, stat } = await import('node:fs/promises');
  let pages = 0, files = 0, bytes = 0, downloadBytes = 0;
  const walk = async (d: string, inDownloads: boolean) => {
    for (const e of await readdir(d, { withFileTypes: true })) {
      const p = join(d, e.name);
      if (e.isDirectory()) await walk(p, inDownloads || (d === dir && e.name === 'downloads'));
      else {
        const size = (await stat(p)).size;
        files++;
        bytes += size;
        if (inDownloads) downloadBytes += size;
        if (e.name.endsWith('.html')) pages++;
      }
    }
  };
  await walk(dir, false);
  return { pages, files, bytes, downloadBytes };
}

const staging = new Set<string>();
const children = new Set<import('node:child_process').ChildProcess>();
let handlersInstalled = false;

function installSignalHandlers(): void {
  if (handlersInstalled) return;
  handlersInstalled = true;
  const cleanup = (sig: NodeJS.Signals) => {
    for (const child of children) child.kill('SIGTERM');
    for (const dir of staging) {
      try {
        // synchronous: the process is about to exit
        rmSync(dir, { recursive: true, force: true });
      } catch {
        /* best effort */
      }
    }
    process.exit(sig === 'SIGINT' ? 130 : 143);
  };
  process.once('SIGINT', cleanup);
  process.once('SIGTERM', cleanup);
}

function run(cmd: string, args: string[], env: NodeJS.ProcessEnv, log: (l: string) => void): Promise<void> {
  return new Promise((ok, fail) => {
    const child = spawn(cmd, args, { cwd: PROJECT_ROOT, env: { ...process.env, ...env }, stdio: ['ignore', 'pipe', 'pipe'] });
    children.add(child);
    child.on('exit', () => children.delete(child));
    let tail = '';
    const take = (b: Buffer) => {
      const s = b.toString();
      tail = (tail + s).slice(-8000);
      for (const line of s.split('\n')) if (line.trim()) log(line);
    };
    child.stdout.on('data', take);
    child.stderr.on('data', take);
    child.on('error', fail);
    child.on('close', (code) => (code === 0 ? ok() : fail(new Error(`${cmd} ${args.join(' ')} failed (exit ${code}):\n${tail}`))));
  });
}

/** The partial-summary files (`*.partial`) of a folder, sorted; temporary files of unfinished writes are not among them. */
export async function partialFilesIn(dir: string): Promise<string[]> {
  const { readdir } = await import('node:fs/promises');
  let names: string[];
  try {
    names = await readdir(dir);
  } catch (e) {
    throw new PosterityError({ severity: 'error', file: dir, message: `cannot read the summaries folder (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})` });
  }
  return names.filter((f) => f.endsWith('.partial')).sort().map((f) => join(dir, f));
}

/** Summaries from a folder written by `posterity merge` (a folder of partials is merged on the way). */
async function readSummaries(dir: string): Promise<NonNullable<PipelineOptions['summaries']>> {
  const files = await partialFilesIn(resolve(dir));
  if (!files.length) throw new PosterityError({ severity: 'error', file: resolve(dir), message: 'no summaries (*.partial) in this folder', expected: 'the output folder of posterity merge' });
  const { mergePartials } = await import('../pipeline/summarise-partition.ts');
  return { merged: await mergePartials(files), source: files.length === 1 ? files[0] : resolve(dir) };
}

/** The version a bundle's release.json declares, or null when it cannot be read (the pipeline reports why). */
function bundleVersion(bundleDir: string): string | null {
  try {
    const v = (JSON.parse(readFileSync(join(bundleDir, 'release.json'), 'utf8')) as { version?: unknown }).version;
    return typeof v === 'string' ? v : null;
  } catch {
    return null;
  }
}

function replaceProblem(out: string, held: string, building: string) {
  return {
    severity: 'error' as const,
    file: join(out, 'downloads', 'release.json'),
    field: 'version',
    message: `the output folder holds the published version ${held}; building version ${building} into it would replace it: build each version into a folder of its own, or pass --replace`,
    expected: `an output folder without a published version, or one holding ${building}`,
    got: held,
  };
}

/**
 * The site stage: the Astro build of a content folder (figures already prerendered) into
 * `siteDir`, then, in viewer mode, every object's own page cut from the built viewer page.
 */
export async function buildSite(contentDir: string, siteDir: string, log: (line: string) => void = () => {}, opts: { objectPagesFor?: (e: ObjectIndexEntry) => boolean } = {}): Promise<void> {
  await run(process.execPath, [join(PROJECT_ROOT, 'node_modules/astro/astro.js'), 'build', '--silent'], { POSTERITY_CONTENT: contentDir, POSTERITY_OUT: siteDir, ASTRO_TELEMETRY_DISABLED: '1' }, log);
  const site = JSON.parse(readFileSync(join(contentDir, 'site.json'), 'utf8')) as { title: string; objectPages?: { mode: string } };
  if (site.objectPages?.mode === 'viewer') {
    const { writeObjectPages } = await import('./object-pages.ts');
    const index = JSON.parse(readFileSync(join(contentDir, 'objects', 'index.json'), 'utf8')) as ObjectIndexEntry[];
    await writeObjectPages(siteDir, opts.objectPagesFor ? index.filter(opts.objectPagesFor) : index, site.title);
  }
}

/** Object figures are drawn every build (cheaper than checking), so the figure cache skips them. */
function isObjectFigures(path: string, figures: string): boolean {
  return path === join(figures, 'objects') || path.startsWith(join(figures, 'objects') + sep);
}

export async function buildRelease(bundleDir: string, opts: BuildOptions): Promise<BuildSummary> {
  const t0 = Date.now();
  const out = resolve(opts.out);
  const log = opts.log ?? (() => {});
  const stage = join(dirname(out), `.posterity-tmp-${basename(out)}-${process.pid}`);
  let figures = { rendered: 0, reused: 0 };
  // a published version is never replaced unless asked: a different version is refused before
  // the build, the same version with different content once the new content is known
  const held = opts.replace ? null : publishedVersion(out);
  const version = held === null ? null : bundleVersion(bundleDir);
  if (held !== null && version !== null && held !== version) throw new PosterityError(replaceProblem(out, held, version));
  installSignalHandlers();
  staging.add(stage);
  try {
    await rm(stage, { recursive: true, force: true });
    await mkdir(stage, { recursive: true });
    const contentDir = join(stage, 'content');
    const downloadsDir = join(contentDir, 'downloads'); // copied into the site by the relative-urls integration
    const summaries = opts.summaries ? await readSummaries(opts.summaries) : undefined;
    const cacheDir = join(dirname(out), `.posterity-cache-${basename(out)}`);
    const summaryCache = join(cacheDir, 'summaries');
    const result = await runPipeline(resolve(bundleDir), { contentDir, downloadsDir, progress: opts.progress, truth: opts.truth, massFunctionTruth: opts.massFunctionTruth, summaries, summaryCache, previous: opts.previous });
    opts.log?.(`summaries: ${result.summaries === 'reused' ? 'reused from the previous build (samples, objects, photometry and summary settings unchanged)' : result.summaries === 'given' ? 'given (merged partials)' : 'computed'}`);
    opts.progress?.('figures', 0, 1);
    const { prerenderFigures } = await import('../charts/prerender.ts');
    // figures of the previous build of this output are reused where their spec did not change
    const figureCache = join(cacheDir, 'figures');
    if (existsSync(figureCache)) await cp(figureCache, join(contentDir, 'figures'), { recursive: true, filter: (src) => !isObjectFigures(src, figureCache) });
    const fig = await prerenderFigures(contentDir, {});
    if (existsSync(join(contentDir, 'changes.json'))) {
      // the comparison's figures (charts/changes.ts)
      const { changesFigureJobs } = await import('../charts/changes.ts');
      const { runFigureJobs } = await import('../charts/prerender.ts');
      const c = await runFigureJobs(join(contentDir, 'figures'), changesFigureJobs(JSON.parse(readFileSync(join(contentDir, 'changes.json'), 'utf8'))));
      fig.rendered += c.rendered;
      fig.cached += c.cached;
    }
    figures = { rendered: fig.rendered, reused: fig.cached };
    opts.log?.(`figures: ${fig.rendered} rendered, ${fig.cached} reused from the previous build`);
    opts.progress?.('figures', 1, 1);
    opts.progress?.('site', 0, 1);
    const siteDir = join(stage, 'site');
    await buildSite(contentDir, siteDir, log);
    opts.progress?.('site', 1, 1);
    if (!existsSync(join(siteDir, 'downloads', 'SHA256SUMS'))) throw new Error('the site build did not copy the downloads');
    if (held !== null) {
      const built = result.bundle.config.version;
      if (held !== built) throw new PosterityError(replaceProblem(out, held, built));
      const differs = await sameContent(siteDir, out);
      if (differs !== null)
        throw new PosterityError({
          severity: 'error',
          file: join(out, 'downloads', 'release.json'),
          field: 'version',
          message: `version ${built} is already published in this folder with other content (${differs}); a cited version must not change: give this build a new version, or pass --replace to overwrite it`,
          expected: 'the same bytes as the published output',
          got: differs,
        });
    }
    if (opts.keepContent) {
      await rm(opts.keepContent, { recursive: true, force: true });
      await rename(contentDir, resolve(opts.keepContent));
    }
    // keep the figures for the next build, then swap into place
    await rm(figureCache, { recursive: true, force: true });
    await mkdir(dirname(figureCache), { recursive: true });
    if (existsSync(join(contentDir, 'figures'))) await cp(join(contentDir, 'figures'), figureCache, { recursive: true, filter: (src) => !isObjectFigures(src, join(contentDir, 'figures')) });
    // swap into place
    const old = join(dirname(out), `.posterity-old-${basename(out)}-${process.pid}`);
    if (existsSync(out)) await rename(out, old);
    await rename(siteDir, out);
    await rm(old, { recursive: true, force: true });
    return { objects: result.objects, out, warnings: result.warnings, seconds: (Date.now() - t0) / 1000, figures, summaries: result.summaries, ...(await siteStats(out)) };
  } finally {
    await rm(stage, { recursive: true, force: true });
    staging.delete(stage);
  }
}
