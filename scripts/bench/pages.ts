/**
 * The site rows of the benchmark: object-page build time against a trivial Astro page, and
 * the gzipped bytes of each object page.
 *
 * Time per page comes from two builds of each site, so that each build's fixed start-up
 * cost (process start, config, Vite bundling, the pages that do not scale with the objects)
 * cancels out:
 *   trivial: a tiny Astro project (bench/cache/trivial-astro/, so that node_modules resolve)
 *            of N one-paragraph pages and of 1 page; per page = (T_N - T_1) / (N - 1).
 *   real:    the Posterity site built from a demo of N objects and from the smallest demo (10
 *            objects; the generator needs at least 10); per object page =
 *            (T_N - T_small) / (object pages_N - object pages_small). Anything else that grows
 *            with the objects (catalogue pages) is charged to the object pages.
 * Each build runs REPEATS times, small and large alternating, and the fastest is kept. Only the `astro build` process is timed: the pipeline and the figure prerender run first.
 * Bytes: gzip level 9 of each `objects/<slug>/index.html` plus any per-object data file it
 * loads (none in static mode: the figures are inline SVG), average and maximum.
 */
import { spawn } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdir, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { gzipSync } from 'node:zlib';

const ROOT = resolve(fileURLToPath(new URL('../..', import.meta.url)));
const ASTRO = join(ROOT, 'node_modules', 'astro', 'astro.js');
const now = () => performance.now() / 1000;
/** Each Astro build is run this many times and the fastest kept (the machine is shared). */
const REPEATS = 3;

function astroBuild(cwd: string, env: Record<string, string>): Promise<number> {
  return new Promise((ok, fail) => {
    const t0 = now();
    const child = spawn(process.execPath, [ASTRO, 'build', '--silent'], { cwd, env: { ...process.env, ASTRO_TELEMETRY_DISABLED: '1', ...env }, stdio: ['ignore', 'pipe', 'pipe'] });
    let tail = '';
    const take = (b: Buffer) => (tail = (tail + b.toString()).slice(-4000));
    child.stdout.on('data', take);
    child.stderr.on('data', take);
    child.on('error', fail);
    child.on('close', (code) => (code === 0 ? ok(now() - t0) : fail(new Error(`astro build in ${cwd} failed (exit ${code}): ${tail.trim().split('\n').slice(-3).join(' | ')}`))));
  });
}

/** A tiny Astro project of `n` one-paragraph pages, built; returns the build seconds. */
async function trivialSetup(base: string, n: number) {
  const proj = join(base, `n${n}`);
  await rm(proj, { recursive: true, force: true });
  await mkdir(join(proj, 'src', 'pages'), { recursive: true });
  await writeFile(join(proj, 'package.json'), JSON.stringify({ name: `trivial-astro-${n}`, private: true, type: 'module' }) + '\n');
  await writeFile(
    join(proj, 'astro.config.mjs'),
    "import { defineConfig } from 'astro/config';\nexport default defineConfig({ output: 'static', outDir: './dist', trailingSlash: 'always', build: { format: 'directory' }, devToolbar: { enabled: false } });\n",
  );
  await writeFile(
    join(proj, 'src', 'pages', '[n].astro'),
    [
      '---',
      'export function getStaticPaths() {',
      `  return Array.from({ length: ${n} }, (_, i) => ({ params: { n: String(i) } }));`,
      '}',
      'const { n } = Astro.params;',
      '---',
      '<html lang="en"><head><meta charset="utf-8"><title>Page {n}</title></head>',
      '<body><p>This is page {n}, one paragraph of text.</p></body></html>',
      '',
    ].join('\n'),
  );
  return {
    seconds: Infinity,
    build: async () => {
      await rm(join(proj, 'dist'), { recursive: true, force: true });
      return astroBuild(proj, {});
    },
    check: async () => {
      const pages = (await readdir(join(proj, 'dist'))).filter((d) => existsSync(join(proj, 'dist', d, 'index.html'))).length;
      if (pages !== n) throw new Error(`trivial build wrote ${pages} pages, expected ${n}`);
    },
  };
}

/** Demo bundle -> pipeline -> figures (untimed); then `build` times the Astro build of the real site. */
async function realSetup(base: string, n: number) {
  const { generateDemoBundle } = await import('../demo/generate.ts');
  const { runPipeline } = await import('../../src/lib/pipeline/run.ts');
  const { prerenderFigures } = await import('../../src/lib/charts/prerender.ts');
  const dir = join(base, `n${n}`);
  await rm(dir, { recursive: true, force: true });
  const bundle = join(dir, 'bundle'), content = join(dir, 'content'), out = join(dir, 'site');
  const t0 = now();
  await generateDemoBundle(bundle, { nObjects: n });
  await runPipeline(bundle, { contentDir: content, downloadsDir: join(content, 'downloads') });
  await prerenderFigures(content, {});
  const r = {
    out,
    seconds: Infinity,
    prepSeconds: now() - t0,
    slugs: [] as string[],
    allHtml: 0,
    build: async () => {
      await rm(out, { recursive: true, force: true });
      return astroBuild(ROOT, { POSTERITY_CONTENT: content, POSTERITY_OUT: out });
    },
    count: async () => {
      // object pages: objects/<slug>/index.html (the viewer page objects/view/ is not an object page)
      const objDir = join(out, 'objects');
      r.slugs = (await readdir(objDir, { withFileTypes: true })).filter((e) => e.isDirectory() && e.name !== 'view' && existsSync(join(objDir, e.name, 'index.html'))).map((e) => e.name);
      const walk = async (d: string) => {
        for (const e of await readdir(d, { withFileTypes: true })) {
          if (e.isDirectory()) await walk(join(d, e.name));
          else if (e.name.endsWith('.html')) r.allHtml++;
        }
      };
      await walk(out);
    },
  };
  return r;
}

/** Per-object data files a page loads: same-site fetch/src/href of .json/.arrow/.parquet/.svg (none in static mode). */
function dataRefs(html: string): string[] {
  const refs = new Set<string>();
  for (const m of html.matchAll(/(?:src|href|data-[a-z-]+)=["']([^"'#?]+\.(?:json|arrow|parquet|svg|bin))["']/g)) if (!/^[a-z]+:/.test(m[1])) refs.add(m[1]);
  return [...refs];
}

async function pageBytes(out: string, slugs: string[]) {
  const sizes: number[] = [];
  const raw: number[] = [];
  let dataFiles = 0;
  for (const slug of slugs) {
    const pageDir = join(out, 'objects', slug);
    const html = await readFile(join(pageDir, 'index.html'));
    let gz = gzipSync(html, { level: 9 }).length;
    let r = html.length;
    for (const ref of dataRefs(html.toString('utf8'))) {
      const p = ref.startsWith('/') ? join(out, ref) : resolve(pageDir, ref);
      // only files of this object (under its page folder or named by its slug); site-wide assets are shared
      if (!existsSync(p) || !(p.startsWith(pageDir + '/') || p.includes(slug))) continue;
      const b = await readFile(p);
      gz += gzipSync(b, { level: 9 }).length;
      r += b.length;
      dataFiles++;
    }
    sizes.push(gz);
    raw.push(r);
  }
  const avg = sizes.reduce((a, b) => a + b, 0) / sizes.length;
  return { avgGzipBytes: avg, maxGzipBytes: Math.max(...sizes), avgRawBytes: raw.reduce((a, b) => a + b, 0) / raw.length, dataFiles };
}

export async function pages(nArg: string, smallArg = '10') {
  const n = Number(nArg), small = Number(smallArg);
  const base = join(ROOT, 'bench', 'cache', 'pages');
  const trivialBase = join(ROOT, 'bench', 'cache', 'trivial-astro');
  await mkdir(base, { recursive: true });
  try {
    // the small and large build of each site alternate, so that load on the shared machine hits both alike
    const t1 = await trivialSetup(trivialBase, 1), tN = await trivialSetup(trivialBase, n);
    const r0 = await realSetup(base, small), rN = await realSetup(base, n);
    for (let i = 0; i < REPEATS; i++) for (const b of [t1, tN, r0, rN]) b.seconds = Math.min(b.seconds, await b.build());
    await tN.check();
    await Promise.all([r0.count(), rN.count()]);
    const trivialMsPerPage = ((tN.seconds - t1.seconds) / (n - 1)) * 1000;
    const realMsPerPage = ((rN.seconds - r0.seconds) / (rN.slugs.length - r0.slugs.length)) * 1000;
    const bytes = await pageBytes(rN.out, rN.slugs);
    return {
      objects: n,
      repeats: REPEATS,
      smallObjects: small,
      trivial: { seconds1: t1.seconds, secondsN: tN.seconds, msPerPage: trivialMsPerPage },
      real: {
        secondsSmall: r0.seconds,
        secondsN: rN.seconds,
        objectPagesSmall: r0.slugs.length,
        objectPagesN: rN.slugs.length,
        htmlPagesSmall: r0.allHtml,
        htmlPagesN: rN.allHtml,
        prepSecondsN: rN.prepSeconds,
        msPerPage: realMsPerPage,
      },
      ratio: realMsPerPage / trivialMsPerPage,
      ...bytes,
    };
  } finally {
    await rm(base, { recursive: true, force: true });
    await rm(trivialBase, { recursive: true, force: true });
  }
}
