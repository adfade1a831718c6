/**
 * `npm run bench`: every ratio is measured in this one run, on this machine, each task in its
 * own process (`task.mjs`) so that peak memory is per task. Writes `bench/results/bench.md`
 * and `bench/results/bench.json` and prints the Markdown.
 *
 * Options: `--sizes 10000,100000` (default), `--workers N` (default: one per core),
 * `--no-pipeline` (skip the whole-build runs), `--cache DIR` (default bench/cache),
 * `--pages N` (objects of the site-build rows, default 1000), `--projection N` (the largest whole
 * build, viewer pages, from which 10^6 is projected; default twice the largest size), `--only summaries`, `--only pages`,
 * `--only build` or `--only relations` (run only the summary rows (read floor, scans, DuckDB,
 * summaries with and without corner data, the per-object kernel), only the page rows, only the
 * whole builds, or only the relation fits; the other rows are kept from the previous
 * report and marked with its date), `--report-only` (rewrite the report from
 * `bench/results/bench.json`, running nothing), `--resume` (go on with a run cut short: the tasks
 * saved in `bench/results/bench.partial.json` that succeeded are not run again).
 */
import { spawn } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdir, readFile, writeFile } from 'node:fs/promises';
import { availableParallelism, cpus, loadavg, totalmem } from 'node:os';
import { dirname, join, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import { bundlePaths, DRAWS, PARAMS } from './data.ts';

const ROOT = resolve(fileURLToPath(new URL('../..', import.meta.url)));
const TASK = join(ROOT, 'scripts', 'bench', 'task.mjs');

type Result = Record<string, any> & { maxRssMB: number };

function task(name: string, args: string[], timeoutS = 3600): Promise<Result | { error: string }> {
  // the whole pipeline keeps every object's corner data until the pages are written: give it room
  const flags = name === 'pipeline' || name === 'build' ? ['--max-old-space-size=12288'] : [];
  // the whole build spawns the Astro build: GNU time reports the largest resident set of the
  // task and the children it waited for (wait4's rusage), where the task alone cannot see them
  const timed = name === 'build' && existsSync('/usr/bin/time');
  return new Promise((ok) => {
    const t0 = Date.now();
    process.stderr.write(`  ${name} ${args.map((a) => a.replace(ROOT + '/', '')).join(' ')} ... `);
    const argv = [...flags, TASK, name, ...args];
    const child = timed
      ? spawn('/usr/bin/time', ['-f', 'POSTERITY-MAXRSS-KB %M', process.execPath, ...argv], { cwd: ROOT, stdio: ['ignore', 'pipe', 'pipe'] })
      : spawn(process.execPath, argv, { cwd: ROOT, stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '';
    let err = '';
    child.stdout.on('data', (d) => (out += d));
    child.stderr.on('data', (d) => (err += d));
    let timedOut = false;
    const timer = setTimeout(() => {
      timedOut = true;
      child.kill('SIGKILL');
    }, timeoutS * 1000);
    child.on('close', (code, signal) => {
      clearTimeout(timer);
      const line = out.split('\n').find((l) => l.startsWith('BENCH-RESULT '));
      const secs = ((Date.now() - t0) / 1000).toFixed(0);
      if (line) {
        process.stderr.write(`${secs} s\n`);
        const r = JSON.parse(line.slice('BENCH-RESULT '.length));
        const tree = /POSTERITY-MAXRSS-KB (\d+)/.exec(err);
        if (tree) r.maxRssTreeMB = Number(tree[1]) / 1024;
        ok(r);
      } else {
        // the error's own line (an uncaught exception ends with Node's version, which says nothing),
        // then the last lines
        const lines = err.trim().split('\n');
        const thrown = lines.find((l) => /^\w*(Error|Exception)\b|^\s*\[?\w+Error/.test(l.trim()));
        const why = timedOut ? `killed after ${timeoutS} s` : code === null ? `killed by ${signal} (out of memory?)` : `exit ${code}: ${[...(thrown ? [thrown.trim()] : []), ...lines.slice(-3)].join(' | ')}`;
        // the whole of stderr, for the next person
        void writeFile(join(ROOT, 'bench', 'results', `failed-${name}.log`), err).catch(() => {});
        process.stderr.write(`failed (${why})\n`);
        ok({ error: why });
      }
    });
  });
}

const isErr = (r: unknown): r is { error: string } => !!r && typeof r === 'object' && 'error' in (r as object);
const f = (x: number | null | undefined, d = 2) => (x === null || x === undefined || !Number.isFinite(x) ? 'n/a' : x.toFixed(d));

interface Row {
  what: string;
  value: string;
  target: string;
  status: 'met' | 'missed' | 'info' | 'not measured yet' | 'failed';
  note?: string;
  /** When the row was measured (the run's start); rows kept from earlier runs keep theirs. */
  measured?: string;
}

/** Why a target is missed, from what this benchmark measures (keyed by the start of the row's text; measured causes are added in `main`). */
const CAUSES: [string, string][] = [
  ['summaries / raw scan', 'The per-object kernel sets the time, not the reading (see the "summaries / read floor" rows and the per-object row).'],
  ['peak resident memory', 'Memory is held by the decoded record batches in flight and the per-object population draws (64 per object and parameter) kept for the relation fits.'],
  ['hierarchical relation fit', 'One exponential per draw per likelihood evaluation: 2x10^4 x 256 = 5.1x10^6 draws times about 6,700 evaluations (16 walkers x 400 steps plus the mode search), about 3.4x10^10 in all, in a WebAssembly SIMD kernel (4 float32 lanes while sampling) split over both cores, with each half of the ensemble evaluated in one pass over the draws. The fit\'s default sub-sampling to 64 draws per object (each marginal likelihood stays unbiased) would cut it by 4; fewer steps would not do, as the diagnostics show split R-hat near 1.2 at this length.'],
  ['object page build time', "An object page is far more than the one-paragraph trivial page: Astro renders its tables and three inline SVG figures (both SEDs and the posterior matrix, about 45 KB with 8 parameters; drawn before the site build, see the figures row) from two JSON files per page, writes a folder and about 55 KB of HTML, and the relative-links pass (src/integrations/relative-urls.ts) reads and rewrites each page's head once more. A profile of an earlier 200-page build put about 1.4 ms per page in rendering, 1.1 ms in the relative-links pass (since narrowed to the head and to bodies that need it) and 1 ms in making the page's folder. Next step: links written relative at render time, so the post-build pass leaves object pages alone, and one content file per object page."],
  ['bytes per object page', 'The three inline SVG figures are about 46 KB of the page with 8 parameters; the posterior matrix of k parameters has k(k-1)/2 pair panels, each with two filled credible regions, so the page grows with k^2.'],
  ['object figures per object', 'Drawing is string building: the posterior matrix traces and writes two filled regions for each of k(k-1)/2 pair panels and the SEDs one path per model and band set.'],
  ['whole release build', 'The 2x10^5 viewer build failed with "Maximum call stack size exceeded" (the runner of that run kept only the error\'s last lines; it now keeps the error line and bench/results/failed-<task>.log). A direct rerun of the 2x10^5 viewer build named the place: the site overview took the largest redshift as Math.max(0.5, ...redshifts), every redshift an argument (src/lib/pipeline/overview.ts). The file walk after the Astro build (src/integrations/relative-urls.ts) had the same fault for a folder of about 1.3x10^5 files or more (downloads/objects/ of a complete-page build holds two per object: the likely cause of the 10^5 complete-page failure, which was not rerun). Both are mended (a loop; one list filled on the way down, tested with a folder of 160 000 files in test/site/paths.test.ts), after this run: the failed rows were not measured again.'],
  ['site without the downloads', 'Viewer pages are small; the bytes are in the shards (every object\'s content, gzip) and the site\'s population figures.'],
];

function gapSection(rows: Row[], measured: [string, string][] = []): string[] {
  const missed = rows.filter((r) => r.status === 'missed' || r.status === 'failed');
  if (!missed.length) return [];
  const out = ['## Gaps and their causes', ''];
  for (const r of missed) {
    const cause = [...measured, ...CAUSES].find(([k]) => r.what.startsWith(k))?.[1] ?? (r.status === 'failed' ? 'the task did not finish; its value says why' : '');
    out.push(`- **${r.what}**: ${r.value}${r.target ? ` against ${r.target}` : ''}. ${cause}`);
  }
  out.push('');
  return out;
}

export async function main(argv: string[]): Promise<number> {
  const opt = (name: string) => {
    const i = argv.indexOf(name);
    return i >= 0 ? argv[i + 1] : undefined;
  };
  // --report-only: rebuild the report from bench/results/bench.json without running anything
  const reportOnly = argv.includes('--report-only');
  const prevRun = reportOnly ? (JSON.parse(await readFile(join(ROOT, 'bench', 'results', 'bench.json'), 'utf8')) as { started: string; sizes: number[]; workers: number; raw: Record<string, unknown> }) : null;
  const sizes = prevRun ? prevRun.sizes : (opt('--sizes') ?? '10000,100000').split(',').map(Number);
  const workers = prevRun ? String(prevRun.workers) : String(opt('--workers') ?? availableParallelism());
  const cache = resolve(ROOT, opt('--cache') ?? 'bench/cache');
  const only = opt('--only');
  const pagesN = opt('--pages') ?? '1000';
  const doPipeline = !argv.includes('--no-pipeline');
  const started = prevRun ? new Date(prevRun.started) : new Date();
  process.stderr.write(`posterity bench: ${sizes.join(', ')} objects x ${DRAWS} draws x ${PARAMS} parameters, ${workers} workers\n`);

  const raw: Record<string, unknown> = prevRun ? { ...prevRun.raw } : {};
  const get0 = (key: string): Result | null => (isErr(raw[key]) || !raw[key] ? null : (raw[key] as Result));
  // every task's result is saved as it ends (bench/results/bench.partial.json), so that a run cut
  // short can go on with --resume, which skips the tasks that already succeeded
  const partial = join(ROOT, 'bench', 'results', 'bench.partial.json');
  if (argv.includes('--resume')) Object.assign(raw, JSON.parse(await readFile(partial, 'utf8').catch(() => '{}')));
  const run = async (key: string, name: string, args: string[], timeoutS?: number) => {
    if (reportOnly || (raw[key] && !isErr(raw[key]))) return raw[key] as Result | { error: string };
    raw[key] = await task(name, args, timeoutS);
    await mkdir(dirname(partial), { recursive: true });
    await writeFile(partial, JSON.stringify(raw));
    return raw[key] as Result | { error: string };
  };

  const doSummaries = !only || only === 'summaries';
  if (doSummaries) for (const n of sizes) await run(`gen.${n}`, 'gen', [cache, String(n)], 7200);
  if (doSummaries) for (const n of sizes) {
    const p = bundlePaths(cache, n);
    const load = () => {
      if (!reportOnly) ((raw[`loads.${n}`] ??= []) as number[]).push(loadavg()[0]);
    };
    if (!reportOnly) raw[`loads.${n}`] = [];
    load();
    // the floor right before and right after the Arrow IPC summaries, so that a change in the
    // machine's load shows; the ratio uses their mean
    await run(`floor.arrow.${n}`, 'floor', [p.arrow]);
    await run(`summarise.arrow.${n}`, 'summarise', [p.arrow, workers]);
    await run(`floor2.arrow.${n}`, 'floor', [p.arrow]);
    load();
    await run(`duckdb.${n}`, 'duckdb', [p.parquet]);
    await run(`scan.arrow.${n}`, 'scan', [p.arrow]);
    if (n === sizes[0]) await run(`group.arrow.${n}`, 'group', [p.arrow]);
    await run(`summarise.charts.${n}`, 'summarise', [p.arrow, workers, 'charts'], 7200);
    load();
    await run(`scan.parquet.${n}`, 'scan', [p.parquet]);
    await run(`summarise.parquet.${n}`, 'summarise', [p.parquet, workers]);
    load();
  }
  if (doSummaries) await run('kernel', 'kernel', [bundlePaths(cache, sizes[0]).arrow, '400']);
  if (!only || only === 'relations') {
    await run('deconvolved', 'deconvolved', ['100000']);
    await run('hierarchical', 'hierarchical', ['20000', '256'], 1200);
    await run('hierarchical.double', 'hierarchical', ['20000', '256', 'double'], 1200);
  }
  // whole builds: static pages at each size, the default (viewer pages above the page limit) at
  // the largest size and at the projection size, whose growth projects 10^6
  const projection = Number(opt('--projection') ?? 2 * sizes[sizes.length - 1]);
  // (the order: the smallest static build and the figures first, then the viewer builds that give
  // the projection, then the larger static builds, the longest)
  const builds: [number, 'static' | 'viewer'][] = [[sizes[0], 'static'], [sizes[sizes.length - 1], 'viewer'], [projection, 'viewer'], ...sizes.slice(1).map((n) => [n, 'static'] as [number, 'static'])];
  if ((!only && doPipeline) || only === 'build') {
    for (const [n, mode] of builds) {
      await run(`gen.${n}`, 'gen', [cache, String(n)], 4 * 3600);
      await run(`build.${mode}.${n}`, 'build', [bundlePaths(cache, n).full, mode], 3 * 3600);
      // the figures from the objects the smallest static build kept, right after it
      const sample = mode === 'static' && n === sizes[0] ? (get0(`build.static.${n}`)?.figureSample as string | undefined) : undefined;
      if (sample) await run('figures', 'figures', [sample]);
    }
  }
  if (!only || only === 'pages') await run('pages', 'pages', [pagesN, '10'], 1800);
  if (!only || only === 'changes') await run('changes', 'changes', ['100000'], 1800);

  // ---- the report ------------------------------------------------------------------------
  const get = (key: string): Result | null => (isErr(raw[key]) || !raw[key] ? null : (raw[key] as Result));
  const rows: Row[] = [];
  const big = sizes[sizes.length - 1], small = sizes[0];
  const ratio = (a: Result | null, b: Result | null) => (a && b ? a.seconds / b.seconds : NaN);
  const floorOf = (n: number): Result | null => {
    const a = get(`floor.arrow.${n}`), b = get(`floor2.arrow.${n}`);
    if (!a || !b) return a ?? b;
    return { ...a, seconds: (a.seconds + b.seconds) / 2, before: a.seconds, after: b.seconds };
  };
  const loadText = (n: number) => {
    const l = raw[`loads.${n}`] as number[] | undefined;
    return l?.length ? l.map((v) => v.toFixed(1)).join(' -> ') : String((raw[`load.${n}`] as number | undefined)?.toFixed(1) ?? 'n/a');
  };
  if (doSummaries) for (const n of sizes) {
    const isTarget = n === big && n >= 100000;
    const fl = floorOf(n), sa = get(`summarise.arrow.${n}`), dk = get(`duckdb.${n}`);
    rows.push({
      what: `machine load while measuring ${n} objects (1-minute load average, ${cpus().length} cores)`,
      value: loadText(n),
      target: '',
      status: 'info',
      note: 'at the start, after the floor and summaries, after the corner-data run, at the end; other work on the shared machine slows every row, and takes cores from the worker threads',
    });
    rows.push({
      what: `read floor: Arrow IPC read zero-copy (typed arrays over the record batches' buffers), every value the summaries read summed, ${n} objects`,
      value: fl ? `${f(fl.seconds, 2)} s (${f(fl.bytes / 2 ** 30, 2)} GiB read, ${fl.rows} rows, ${fl.runs} objects)` : 'n/a',
      target: '',
      status: fl ? 'info' : 'failed',
      note: fl?.before !== undefined ? `mean of the run before the summaries (${f(fl.before, 2)} s) and after (${f(fl.after, 2)} s); one thread` : undefined,
    });
    const rf = ratio(fl, dk);
    rows.push({
      what: `read floor / DuckDB weighted mean and std per object (Parquet), ${n} objects`,
      value: `${f(rf)}x (${f(fl?.seconds, 2)} s / DuckDB ${f(dk?.seconds, 2)} s, ${dk?.threads ?? '?'} threads)`,
      target: isTarget ? '<= 2x' : '',
      status: !fl || !dk ? 'failed' : isTarget ? (rf <= 2 ? 'met' : 'missed') : 'info',
      note: dk?.arrowIpc ? `DuckDB over the same Arrow IPC file: ${dk.arrowIpc} (it needs an extension, which this machine cannot download)` : undefined,
    });
    const rs = ratio(sa, fl);
    rows.push({
      what: `summaries / read floor, Arrow IPC, ${n} objects`,
      value: `${f(rs)}x (${f(sa?.seconds, 1)} s / ${f(fl?.seconds, 2)} s)`,
      target: isTarget ? '<= 3x' : '',
      status: !sa || !fl ? 'failed' : isTarget ? (rs <= 3 ? 'met' : 'missed') : 'info',
      note: sa ? `${workers} worker threads; ${f(sa.cpuSeconds, 1)} CPU-seconds over ${f(sa.seconds, 1)} s of wall clock (${f(sa.cpuSeconds / sa.seconds, 2)} cores busy on average), main thread busy ${f(100 * sa.mainBusy, 0)}% of the time` : undefined,
    });
    for (const fmt of ['arrow', 'parquet'] as const) {
      const s2 = get(`summarise.${fmt}.${n}`), sc = get(`scan.${fmt}.${n}`);
      const r = ratio(s2, sc);
      rows.push({
        what: `summaries / raw scan, ${fmt === 'arrow' ? 'Arrow IPC' : 'Parquet'}, ${n} objects`,
        value: `${f(r)}x (${f(s2?.seconds, 1)} s / ${f(sc?.seconds, 1)} s)`,
        target: isTarget ? '<= 1.5x' : '',
        status: !s2 || !sc ? 'failed' : isTarget ? (r <= 1.5 ? 'met' : 'missed') : 'info',
        note: 'raw scan: the general reader (decode every value into the column model) and a sum',
      });
    }
    const g = get(`group.arrow.${n}`);
    if (n === small) rows.push({ what: `decode + group into objects, no statistics / read floor, Arrow IPC, ${n} objects`, value: `${f(ratio(g, fl))}x (${f(g?.seconds, 2)} s)`, target: '', status: g && fl ? 'info' : 'failed', note: 'the zero-copy reader grouping rows into objects by their ids, as the summaries read the file' });
    const sc2 = get(`summarise.charts.${n}`);
    rows.push({
      what: `summaries with corner data (as the object pages need it, into the spool) / without, Arrow IPC, ${n} objects`,
      value: `${f(ratio(sc2, sa))}x (${f(sc2?.seconds, 1)} s / ${f(sa?.seconds, 1)} s)`,
      target: '',
      status: sc2 && sa ? 'info' : 'failed',
      note: sc2 ? `main thread busy ${f(100 * sc2.mainBusy, 0)}% of the time with corner data (${f(100 * (sa?.mainBusy ?? NaN), 0)}% without): workers return each object's JSON text, the main thread appends it to the spool; ${f(sc2.chartBytesPerObject / 1024, 1)} KB of JSON per object; ${f(sc2.cpuSeconds, 1)} CPU-seconds; peak ${f(sc2.maxRssMB / 1024, 2)} GB` : undefined,
    });
    const s = get(`summarise.parquet.${n}`), d = get(`duckdb.${n}`);
    rows.push({ what: `summaries / DuckDB weighted mean and std per object, Parquet, ${n} objects`, value: `${f(ratio(s, d))}x (DuckDB ${f(d?.seconds, 1)} s, ${d?.threads ?? '?'} threads)`, target: '', status: s && d ? 'info' : 'failed' });
    for (const fmt of ['arrow', 'parquet'] as const) {
      const m = get(`summarise.${fmt}.${n}`);
      rows.push({
        what: `peak resident memory, summarise step, ${fmt === 'arrow' ? 'Arrow IPC' : 'Parquet'}, ${n} objects`,
        value: m ? `${f(m.maxRssMB / 1024, 2)} GB` : 'n/a',
        target: isTarget ? '< 1.5 GB' : '',
        status: !m ? 'failed' : isTarget ? (m.maxRssMB < 1536 ? 'met' : 'missed') : 'info',
      });
    }
    const ld = get(`summarise.arrow.${n}`);
    rows.push({ what: `bundle load without samples (objects; SHA-256 of every input), ${n} objects`, value: `${f(ld?.loadSeconds, 1)} s`, target: '', status: ld ? 'info' : 'failed', note: 'not part of the summaries time above' });
  }
  if (doSummaries && sizes.length > 1) {
    const ex = (a: number, b: number) => Math.log(b / a) / Math.log(big / small);
    for (const fmt of ['arrow', 'parquet'] as const) {
      const s0 = get(`summarise.${fmt}.${small}`), s1 = get(`summarise.${fmt}.${big}`);
      const c0 = get(`scan.${fmt}.${small}`), c1 = get(`scan.${fmt}.${big}`);
      rows.push({
        what: `growth exponent ${small} -> ${big}, ${fmt}: time (summaries; raw scan), peak memory`,
        value: s0 && s1 && c0 && c1 ? `time ${f(ex(s0.seconds, s1.seconds))}; scan ${f(ex(c0.seconds, c1.seconds))}; memory ${f(ex(s0.maxRssMB, s1.maxRssMB))}` : 'n/a',
        target: 'time 1 (linear); memory < 1',
        status: s0 && s1 ? 'info' : 'failed',
      });
    }
  }
  const dc = get('deconvolved');
  if (!only || only === 'relations') rows.push({ what: 'deconvolved relation fit, 10^5 objects', value: dc ? `${f(dc.seconds, 2)} s (${dc.nWalkers} walkers x ${dc.nSteps} steps)` : 'n/a', target: '< 5 s', status: !dc ? 'failed' : dc.seconds < 5 ? 'met' : 'missed' });
  const hi = get('hierarchical');
  const hd = get('hierarchical.double');
  if (!only || only === 'relations') {
    rows.push({
      what: 'hierarchical relation fit, 2x10^4 objects x 256 draws',
      value: hi ? `${f(hi.seconds, 1)} s (${hi.nWalkers} walkers x ${hi.nSteps} steps, all 256 draws, ${hi.precision ?? 'single'} precision while sampling)` : `n/a (${(raw.hierarchical as { error?: string })?.error ?? ''})`,
      target: '< 60 s',
      status: !hi ? 'failed' : hi.seconds < 60 ? 'met' : 'missed',
      note: hi ? `fitted b = ${f(hi.b, 4)}, s = ${f(hi.s, 4)} (truth 0.75, 0.25); max split R-hat ${f(hi.maxRhat, 2)}, min ESS ${f(hi.minEss, 0)} at this fixed length (the release pipeline doubles a chain, up to 4 times its first length, until R-hat <= 1.05); peak ${f(hi.maxRssMB, 0)} MB` : undefined,
    });
    rows.push({
      what: 'hierarchical relation fit in double precision throughout / single while sampling',
      value: hi && hd ? `${f(hd.seconds / hi.seconds, 2)}x (${f(hd.seconds, 1)} s / ${f(hi.seconds, 1)} s)` : 'n/a',
      target: '',
      status: 'info',
      note: hd ? `double: b = ${f(hd.b, 4)}, s = ${f(hd.s, 4)}; the same data and seed, so the two differ by sampling noise only` : undefined,
    });
  }
  if ((!only && doPipeline) || only === 'build') {
    const big = sizes[sizes.length - 1];
    const GB = 2 ** 30;
    for (const [n, mode] of builds) {
      const key = `build.${mode}.${n}`;
      const b = get(key);
      const err = (raw[key] as { error?: string } | undefined)?.error;
      const peak = b ? (b.maxRssTreeMB ?? b.maxRssMB) : NaN;
      const site = b ? b.siteBytes - b.downloadBytes : NaN;
      rows.push({
        what: `whole release build (pipeline, figures, Astro site), ${n} objects, ${mode === 'static' ? 'a complete page per object' : 'viewer pages'}`,
        value: b ? `${f(b.seconds, 0)} s, peak ${f(peak / 1024, 2)} GB (largest process)` : `n/a${err ? ` (${err})` : ''}`,
        target: '',
        status: b ? 'info' : 'failed',
        note: b
          ? `stages (s): ${Object.entries(b.stages as Record<string, number>).map(([k, v]) => `${k} ${v.toFixed(0)}`).join(', ')}; site ${f(b.siteBytes / GB, 2)} GB in ${b.files} files, of which downloads ${f(b.downloadBytes / GB, 2)} GB; ${f(site / b.objects / 1024, 1)} KB per object without the downloads; object pages (every hundredth) ${f(b.pageRawMean / 1024, 1)} KB raw on average, max ${f(b.pageRawMax / 1024, 1)} KB (gzip ${f(b.pageGzMean / 1024, 1)} KB, max ${f(b.pageGzMax / 1024, 1)} KB)${mode === 'viewer' ? `, plus ${f(b.dataPerObject / 1024, 1)} KB per object of shards and lookup (gzip)` : ', figures inline, no data files'}`
          : undefined,
      });
    }
    // targets of the object pages and the site, judged on the builds above
    for (const n of sizes) {
      const b = get(`build.static.${n}`);
      if (!b) continue;
      rows.push({
        what: `bytes per object page, raw (HTML plus its data), ${n} objects x ${b.params} parameters, a complete page per object`,
        value: `average ${f(b.pageRawMean / 1024, 1)} KB, max ${f(b.pageRawMax / 1024, 1)} KB`,
        target: '<= 60 KB',
        status: b.pageRawMean <= 60 * 1024 ? 'met' : 'missed',
        note: `every hundredth page; the figures (both SEDs, the posterior matrix) are inline and the page loads no per-object file; target judged on the average; gzip ${f(b.pageGzMean / 1024, 1)} KB on average`,
      });
    }
    const bs = get(`build.static.${sizes[0]}`);
    const fg = get('figures');
    rows.push({
      what: `object figures per object (the SED in flux and in magnitudes, the posterior matrix; one thread), ${fg?.params ?? PARAMS} parameters`,
      value: fg ? `${f(fg.msPerObject, 2)} ms, ${f(fg.bytesPerObject / 1024, 1)} KB` : 'n/a',
      target: '<= 5 ms',
      status: fg ? (fg.msPerObject <= 5 ? 'met' : 'missed') : 'failed',
      note: fg && bs ? `thread CPU time over ${fg.objects} objects of the ${sizes[0]}-object build's content, best of 5 in a process of its own; the build's figures stage (${f((bs.stages as Record<string, number>).figures ?? NaN, 0)} s for ${bs.objects} objects on ${workers} worker threads, with the site's Vega figures beside them) also reads each object's content and writes its figures` : undefined,
    });
    for (const mode of ['viewer', 'static'] as const) {
      const b = get(`build.${mode}.${big}`);
      if (!b) continue;
      const site = b.siteBytes - b.downloadBytes;
      rows.push({
        what: `site without the downloads, ${big} objects, ${mode === 'viewer' ? 'viewer pages (the default above 50 000 objects)' : 'a complete page per object'}`,
        value: `${f(site / GB, 2)} GB (${f(site / b.objects / 1024, 1)} KB per object)`,
        target: mode === 'viewer' ? '< 2 GB' : '',
        status: mode === 'viewer' ? (site < 2 * GB ? 'met' : 'missed') : 'info',
        note: mode === 'viewer' ? `the page at each object's address ${f(b.pageRawMean / 1024, 1)} KB, its shard and lookup share ${f(b.dataPerObject / 1024, 1)} KB (gzip)` : `complete pages with inline figures, ${f(b.pageRawMean / 1024, 1)} KB each on average: a static host stores every page as it is`,
      });
    }
    // growth between two builds of one mode, projected to 10^6 from the larger
    const growth = (b0: Result | null, b1: Result | null, n0: number, n1: number, mode: string, extra = '') => {
      if (!b0 || !b1 || n1 <= n0) return;
      const ex = (a: number, c: number) => Math.log(c / a) / Math.log(n1 / n0);
      const site = (b: Result) => b.siteBytes - b.downloadBytes;
      const peak = (b: Result) => b.maxRssTreeMB ?? b.maxRssMB;
      const e = { time: ex(b0.seconds, b1.seconds), site: ex(site(b0), site(b1)), memory: ex(peak(b0), peak(b1)) };
      const at = (v: number, x: number) => v * (1e6 / n1) ** x;
      rows.push({
        what: `growth ${n0} -> ${n1} objects (${mode}), projected to 10^6`,
        value: `exponents: time ${f(e.time)}, site ${f(e.site)}, memory ${f(e.memory)}; 10^6 projected: ${f(at(b1.seconds, e.time) / 60, 0)} min, site ${f(at(site(b1), e.site) / GB, 1)} GB without downloads, peak ${f(at(peak(b1), e.memory) / 1024, 1)} GB`,
        target: 'exponents 1 (linear) or less',
        status: 'info',
        note: `measured at ${n0} (${f(b0.seconds, 0)} s) and ${n1} (${f(b1.seconds, 0)} s) objects in this run; projection = the ${n1}-object value x (10^6 / ${n1})^exponent${extra}`,
      });
    };
    growth(get(`build.viewer.${big}`), get(`build.viewer.${projection}`), big, projection, 'viewer pages');
    // the complete-page builds between the two sizes, whether or not the projection build ran
    growth(get(`build.static.${sizes[0]}`), get(`build.static.${big}`), sizes[0], big, 'a complete page per object', '. Complete pages are the default only up to site.objectPageLimit (50 000)');
  }
  const k = get('kernel');
  if (k && doSummaries) {
    const steps = k.msPerObject as Record<string, number>;
    const corner = 'corner data (kernel with it - without)';
    rows.push({
      what: `per-object cost of the summary steps (${k.objects} objects, one thread)`,
      value: Object.entries(steps).filter(([name]) => name !== corner && !name.startsWith('corner data alone')).map(([name, ms]) => `${name}: ${ms.toFixed(3)} ms`).join('; '),
      target: '',
      status: 'info',
      note: `${k.params} parameters x ${k.draws} draws; ${k.timer} time; each parameter sorted once and the sort shared by the summary, the density moments and the mode test, as in the kernel; corner data JSON: ${(k.chartJsonBytesPerObject / 1024).toFixed(0)} KB per object`,
    });
    const c = steps[corner];
    rows.push({
      what: `corner data per object (1-D and 2-D densities, contours, JSON text; one thread), ${k.params} parameters x ${k.draws} draws`,
      value: `${f(c, 3)} ms`,
      target: '<= 1 ms',
      status: Number.isFinite(c) ? (c <= 1 ? 'met' : 'missed') : 'failed',
      note: `the kernel with corner data minus without; alone (draws outside the SIMD memory) ${f(steps['corner data alone (1-D and 2-D densities, contours, JSON text)'], 3)} ms`,
    });
  }
  if (!only || only === 'changes') {
    const ch = get('changes');
    rows.push({
      what: 'comparison with an earlier release, 10^5 objects x 8 parameters (streamed)',
      value: ch ? `${f(ch.seconds, 2)} s, ${f(ch.ratio)}x a decode of the same columns (${f(ch.scanSeconds, 2)} s)` : 'n/a',
      target: 'info',
      status: ch ? 'info' : 'failed',
      note: ch ? `synthetic catalogues: ${ch.counts.added} added, ${ch.counts.removed} removed, ${ch.counts.renamed} renamed by position; peak memory in the task's process` : undefined,
    });
  }
  if (!only || only === 'pages') {
    const pg = get('pages');
    const pgErr = (raw.pages as { error?: string } | undefined)?.error;
    rows.push({
      what: `object page build time / trivial Astro page, ${pg?.objects ?? pagesN} objects (Astro build only)`,
      value: pg ? `${f(pg.ratio)}x (${f(pg.real.msPerPage, 1)} ms / ${f(pg.trivial.msPerPage, 1)} ms per page)` : `n/a${pgErr ? ` (${pgErr})` : ''}`,
      target: '<= 2x',
      // a per-page cost that is not positive means the machine's noise exceeded the pages' cost: no verdict
      status: !pg || !(pg.trivial.msPerPage > 0 && pg.real.msPerPage > 0) ? 'failed' : pg.ratio <= 2 ? 'met' : 'missed',
      note: pg
        ? `best of ${pg.repeats} builds each, small and large alternating; per page = difference of two builds over the difference in pages, so each build's fixed start-up cancels: real ${f(pg.real.secondsN, 1)} s (${pg.real.objectPagesN} object pages, ${pg.real.htmlPagesN} HTML in all) - ${f(pg.real.secondsSmall, 1)} s (${pg.real.objectPagesSmall}-object demo, the smallest); trivial ${f(pg.trivial.secondsN, 1)} s (${pg.objects} pages) - ${f(pg.trivial.seconds1, 1)} s (1 page). Pipeline and figure prerender run first, not timed (${f(pg.real.prepSecondsN, 0)} s)`
        : undefined,
    });
    rows.push({
      what: `bytes per object page (HTML plus its data), ${pg?.objects ?? pagesN} objects of the demo`,
      value: pg ? `raw: average ${f(pg.avgRawBytes / 1024, 1)} KB; gzip: average ${f(pg.avgGzipBytes / 1024, 1)} KB, max ${f(pg.maxGzipBytes / 1024, 1)} KB` : 'n/a',
      target: '<= 60 KB raw; <= 40 KB gzip',
      status: !pg ? 'failed' : pg.avgRawBytes <= 60 * 1024 && pg.maxGzipBytes <= 40 * 1024 ? 'met' : 'missed',
      note: pg ? `objects/<slug>/index.html plus the per-object files it loads (${pg.dataFiles}: static mode, figures inline); raw judged on the average, gzip (level 9) on the max` : undefined,
    });
  }

  // --only: keep the other rows of the previous full report, marked as such
  const dir = join(ROOT, 'bench', 'results');
  let kept = '';
  let othersFrom: string | undefined;
  const anyFailed = rows.some((r) => r.status === 'failed');
  if (only) {
    try {
      const prev = JSON.parse(await readFile(join(dir, 'bench.json'), 'utf8')) as { started: string; othersFrom?: string; rows: Row[]; raw: Record<string, unknown>; sizes?: number[] };
      const mine = new Set(rows.map((r) => r.what.split(',')[0]));
      const others = prev.rows.filter((r) => !mine.has(r.what.split(',')[0])).map((r) => ({ ...r, measured: r.measured ?? prev.othersFrom ?? prev.started }));
      for (const r of rows) r.measured ??= started.toISOString();
      rows.unshift(...others);
      for (const [key, v] of Object.entries(prev.raw ?? {})) if (!(key in raw)) raw[key] = v;
      othersFrom = prev.othersFrom ?? prev.started;
      kept = ` Only \`${only}\` was run now; the other ${others.length} rows are kept from earlier runs, each marked with the date it was measured.`;
    } catch {
      /* no previous report: just this task's rows */
    }
  }
  // causes of missed summary targets, from this run's measurements
  const measured: [string, string][] = [];
  {
    const sa = get(`summarise.arrow.${big}`), fl = floorOf(big), dk = get(`duckdb.${big}`);
    const kr = get('kernel');
    const steps = (kr?.msPerObject ?? {}) as Record<string, number>;
    const kernelMs = steps['whole kernel, no corner data'];
    if (sa && fl) {
      const perObjFloor = (1000 * fl.seconds) / sa.objects;
      const cores = sa.cpuSeconds / sa.seconds;
      measured.push([
        'summaries / read floor',
        `The per-object kernel sets the time: on one thread it costs ${f(kernelMs, 3)} ms per object (the per-object row), ${f(kernelMs / perObjFloor, 1)} times the floor's ${f(perObjFloor, 3)} ms per object, so the summaries need that work spread over ${f(kernelMs / perObjFloor / 3, 1)} cores or more to stay within 3x of the floor; this run used ${f(cores, 2)} cores on average (${f(sa.cpuSeconds, 0)} CPU-seconds in ${f(sa.seconds, 0)} s, on ${cpus().length} cores with a load average of ${loadText(big)} from other work), and its main thread was busy ${f(100 * sa.mainBusy, 0)}% of the time (reading and grouping). The largest steps are the sort, the mode test's KDE and the summary from the sort (the per-object row).`,
      ]);
    }
    if (fl && dk)
      measured.push([
        'read floor / DuckDB',
        `The floor reads ${f(fl.bytes / 2 ** 30, 2)} GiB of uncompressed columns on one thread (${f(fl.bytes / 2 ** 30 / fl.seconds, 2)} GiB/s, from the page cache when the file is cached), while DuckDB reads the Snappy-compressed Parquet file (${f(dk.seconds, 2)} s on ${dk.threads} threads).`,
      ]);
    const c = steps['corner data (kernel with it - without)'];
    if (Number.isFinite(c))
      measured.push([
        'corner data per object',
        `28 panels of 32 x 32 cells per object: each bins 512 draws, smooths its cells (two SIMD passes), finds its two levels (buckets of cell densities) and traces two contours by marching squares (about 100 crossings each, in JavaScript), simplified and rounded, then the JSON text (about ${f((kr?.chartJsonBytesPerObject ?? 0) / 1024, 0)} KB) is written; ${f(c, 3)} ms per object on this machine at a load average of ${loadText(small)}. The tracing, simplification and text are scalar JavaScript; moving them into the SIMD module, or a coarser grid (24 cells made the 68%/95% contours of 4000 draws enclose 4% too much, against 3% allowed), are what is left.`,
      ]);
  }
  const machine = `${cpus().length} x ${cpus()[0]?.model ?? 'cpu'}, ${(totalmem() / 2 ** 30).toFixed(0)} GB, Node ${process.version}`;
  const md = [
    '# Posterity benchmark',
    '',
    `Run ${started.toISOString()} on ${machine}; ${workers} summary workers; every ratio measured in this run. Bundles: the demo generator, ${DRAWS} draws x ${PARAMS} parameters per object (samples: 8 float32 parameters, float64 weight and log prior, float32 log likelihood, string id), cached under bench/cache/.${kept}`,
    '',
    '| measurement | value | target | status | note |',
    '| --- | --- | --- | --- | --- |',
    ...rows.map((r) => `| ${r.what} | ${r.value} | ${r.target} | ${r.status} | ${[r.note, r.measured && r.measured !== started.toISOString() ? `measured ${r.measured.slice(0, 16).replace('T', ' ')} UTC` : ''].filter(Boolean).join('; ')} |`),
    '',
    ...gapSection(rows, measured),
    'Read floor: the Arrow IPC samples file opened by `IpcFile` (src/lib/io/arrow-ipc.ts, the reader the summaries use), its record batches located from the footer, each read in the blocks of 131072 rows the summaries read with one read per column buffer into fresh memory, Float32Array/Float64Array views laid over the buffers, every value of the columns the summaries read (8 parameters, weight, log prior) summed and neighbouring ids compared by their bytes in the offsets and data buffers; one thread, nothing decoded. Raw scan: `readTableBatches` (the general reader) over the same columns, summing every value (ids: their lengths). Summaries: `summariseAll` on a bundle loaded without samples, streaming the file, without corner data unless the row says so (then as the pipeline does: JSON text from the workers into the `ChartSpool`). DuckDB: `read_parquet` grouped by id, weighted mean and one-pass weighted standard deviation of the 8 parameters. CPU times are of every thread of the task; "main thread busy" is its event-loop utilisation.',
    '',
  ].join('\n');
  // paths in the report are relative to the repository, never this machine's absolute paths,
  // wherever they stand in a text (error messages quote them too): the cache as `bench/cache/`,
  // the repository's own files relative to it, and a cache of another checkout (kept rows) alike
  const root = resolve(dir, '..', '..') + sep;
  const portable = (t: string) => t.split(cache + sep).join('bench/cache/').split(root).join('').replace(/(?:\/[^\s"'|()/]+)+\/bench\/cache\//g, 'bench/cache/');
  const portableValue = (_k: string, v: unknown) => (typeof v === 'string' ? portable(v) : v);
  await mkdir(dir, { recursive: true });
  await writeFile(join(dir, 'bench.md'), portable(md));
  await writeFile(join(dir, 'bench.json'), JSON.stringify({ started: started.toISOString(), ...(othersFrom ? { only, othersFrom } : {}), machine, workers: Number(workers), sizes, rows, raw }, portableValue, 2) + '\n');
  process.stdout.write(md);
  return anyFailed ? 1 : 0;
}
