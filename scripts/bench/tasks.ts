/**
 * The benchmark's tasks, each run in its own process by `task.mjs` so that its peak resident
 * memory (`maxRSS`) is its own. Every task returns plain numbers (seconds, counts).
 */
import { mkdtemp, readdir, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join, sep } from 'node:path';
import { performance as nodePerformance } from 'node:perf_hooks';
import { loadBundle } from '../../src/lib/bundle/load.ts';
import { ProblemSink } from '../../src/lib/bundle/coerce.ts';
import { readTableBatches } from '../../src/lib/io/read.ts';
import { summariseAll } from '../../src/lib/pipeline/summarise.ts';
import { flatten, groupedBatches, IPC_BLOCK_ROWS, sampleLayout } from '../../src/lib/pipeline/summarise-stream.ts';
import { summariseBatch, kernelContext, MULTIMODAL_OPTS } from '../../src/lib/pipeline/summarise-kernel.ts';
import { cornerData, writeChartsJson } from '../../src/lib/pipeline/summarise-charts.ts';
import { JsonWriter } from '../../src/lib/pipeline/json-writer.ts';
import { ChartSpool } from '../../src/lib/pipeline/chart-spool.ts';
import { IpcFile } from '../../src/lib/io/arrow-ipc.ts';
import { normaliseWeights, kishEss } from '../../src/lib/core/stats/weights.ts';
import { sortDraws, summariseSorted, weightedCovariance, type SortedDraws } from '../../src/lib/core/stats/summary.ts';
import { sampleMoments } from '../../src/lib/core/stats/density.ts';
import { isMultimodal, priorEdgeMass } from '../../src/lib/core/stats/diagnostics.ts';
import { makeRng } from '../../src/lib/core/random.ts';
import { ensureBundle } from './data.ts';

const now = () => performance.now() / 1000;

async function gen(cache: string, n: string) {
  const t0 = now();
  const p = await ensureBundle(cache, Number(n), (s) => console.error(s));
  return { seconds: now() - t0, ...p };
}

/** The floor: decode the columns the summaries read and sum every one (string ids: their lengths). */
async function scan(dir: string) {
  const b = await loadBundle(dir, { samples: false });
  const L = await sampleLayout(b);
  const t0 = now();
  let rows = 0;
  let acc = 0;
  for await (const t of readTableBatches(L.path, { file: L.file, columns: L.columns })) {
    for (const c of t.columns) {
      const v = c.values;
      if (Array.isArray(v)) for (let i = 0; i < v.length; i++) acc += (v[i] as string).length;
      else for (let i = 0; i < v.length; i++) acc += Number(v[i]);
    }
    rows += t.numRows;
  }
  return { seconds: now() - t0, rows, checksum: acc, columns: L.columns.length };
}

/**
 * The read floor: the Arrow IPC file read in large blocks (the summaries' block of 131072 rows,
 * one read per column buffer) straight into fresh memory, the record batches located from the
 * footer and typed arrays laid over their buffers (`IpcFile`, the reader the summaries use),
 * then every value the summaries read summed once (four running sums, so the additions
 * overlap) and neighbouring ids compared by their bytes (no string decoded): what any summary
 * of this file must at least do, on one thread.
 */
async function floorTask(dir: string) {
  const b = await loadBundle(dir, { samples: false });
  const L = await sampleLayout(b);
  const t0 = now();
  const ipc = await IpcFile.open(L.path, L.columns);
  if (!ipc) throw new Error(`${L.path}: not an Arrow IPC file the zero-copy reader takes`);
  const fields = L.columns.map((c) => ipc.field(c));
  let rows = 0, runs = 0, acc = 0, bytes = 0;
  for (let bi = 0; bi < ipc.batchCount; bi++) {
    const R = ipc.batchRows(bi);
    for (let a = 0; a < R; a += IPC_BLOCK_ROWS) {
      const block = await ipc.read(bi, a, Math.min(R, a + IPC_BLOCK_ROWS), fields);
      const n = block.rows;
      for (const buf of block.buffers) bytes += buf.byteLength;
      for (const c of block.columns) {
        if (c.kind === 'utf8') {
          // a new run wherever an id's bytes differ from the previous row's
          const { offsets: off, data } = c;
          const base = off[0];
          runs++;
          for (let r = 1; r < n; r++) {
            const p = off[r - 1] - base, q = off[r] - base, len = off[r + 1] - base - q;
            let same = q - p === len;
            for (let i = 0; same && i < len; i++) same = data[p + i] === data[q + i];
            if (!same) runs++;
          }
        } else if (c.kind === 'float32' || c.kind === 'float64') {
          const v = c.values;
          let s0 = 0, s1 = 0, s2 = 0, s3 = 0;
          let i = 0;
          for (; i + 3 < n; i += 4) {
            s0 += v[i];
            s1 += v[i + 1];
            s2 += v[i + 2];
            s3 += v[i + 3];
          }
          for (; i < n; i++) s0 += v[i];
          acc += s0 + s1 + s2 + s3;
        }
      }
      rows += n;
    }
  }
  await ipc.close();
  // (log priors may be -Infinity: the checksum is then not finite)
  return { seconds: now() - t0, rows, runs, checksum: Number.isFinite(acc) ? acc : String(acc), bytes, columns: L.columns.length, blockRows: IPC_BLOCK_ROWS };
}

/** Decode, type and group into objects without any statistics (the streaming overhead over the floor). */
async function group(dir: string) {
  const b = await loadBundle(dir, { samples: false });
  const L = await sampleLayout(b);
  const t0 = now();
  let objects = 0;
  for await (const batch of groupedBatches(b, L, { sink: new ProblemSink(), seen: new Uint8Array(b.objects.n) })) objects += batch.index.length;
  return { seconds: now() - t0, objects };
}

async function summariseTask(dir: string, workers: string, charts = 'no') {
  const t0 = now();
  const b = await loadBundle(dir, { samples: false });
  const load = now() - t0;
  const spoolDir = charts === 'charts' ? await mkdtemp(join(tmpdir(), 'posterity-bench-spool-')) : null;
  const spool = spoolDir ? new ChartSpool(join(spoolDir, 'spool'), b.objects.n) : null;
  let chartBytes = 0;
  const t1 = now();
  const cpu0 = process.cpuUsage();
  const elu0 = nodePerformance.eventLoopUtilization();
  let mode = '';
  const r = await summariseAll(b, {
    seed: b.config.seed,
    workers: Number(workers),
    onStream: (s) => (mode = s.mode),
    ...(spool ? { onChartsJson: (i: number, json: Uint8Array) => { chartBytes += json.length; spool.set(i, json); } } : {}),
  });
  const seconds = now() - t1;
  // CPU of every thread of this process (main and workers), and how busy the main thread was
  const cpu = process.cpuUsage(cpu0);
  const mainBusy = nodePerformance.eventLoopUtilization(elu0).utilization;
  spool?.close();
  if (spoolDir) await rm(spoolDir, { recursive: true, force: true });
  let flagged = 0;
  for (const f of r.table.flags) if (f) flagged++;
  return { seconds, cpuSeconds: (cpu.user + cpu.system) / 1e6, mainBusy, loadSeconds: load, mode, objects: r.table.n, flagged, workers: Number(workers), charts: charts === 'charts', chartBytesPerObject: chartBytes / r.table.n };
}

/** Thread CPU seconds (this task runs the kernel on its main thread only). */
const cpuNow = () => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1e6;
};

/**
 * Where the per-object time goes: each step of the kernel timed alone over the first objects,
 * on one thread, as the kernel runs it (each parameter sorted once, the sort shared by the
 * summary, the density moments and the mode test), best of three rounds; then the whole kernel
 * without and with corner data, and the corner data alone (densities, contours and its JSON
 * text). Times are CPU time of the thread, which other work on a shared machine disturbs less
 * than the wall clock.
 */
async function kernel(dir: string, count: string) {
  const b = await loadBundle(dir, { samples: false });
  const L = await sampleLayout(b);
  const want = Number(count);
  const objs: { xs: Float64Array[]; w: Float64Array; raw: Float64Array; id: string }[] = [];
  for await (const batch of groupedBatches(b, L, { sink: new ProblemSink(), seen: new Uint8Array(b.objects.n), batchRows: 4096 })) {
    const f = flatten(batch);
    for (let o = 0; o < f.index.length && objs.length < want; o++) {
      const a = f.offsets[o], e = f.offsets[o + 1];
      const raw = f.weight.slice(a, e);
      objs.push({ xs: f.params.map((p) => p.slice(a, e)), raw, w: normaliseWeights({ weights: raw }, f.ids[o]), id: f.ids[o] });
    }
    if (objs.length >= want) break;
  }
  const q = b.config.quality;
  const priors = b.config.parameters.map((p) => (p.prior?.kind === 'uniform' ? { min: p.prior.min, max: p.prior.max } : null));
  const k = b.config.parameters.length;
  const ms: Record<string, number> = {};
  const time = (name: string, f: (i: number) => void, n = objs.length) => {
    for (let i = 0; i < Math.min(n, 20); i++) f(i); // warm up
    let best = Infinity;
    for (let rep = 0; rep < 3; rep++) {
      const t0 = cpuNow();
      for (let i = 0; i < n; i++) f(i);
      best = Math.min(best, ((cpuNow() - t0) * 1000) / n);
    }
    ms[name] = best;
  };
  // each object's parameters sorted once, as the kernel does, for the steps that share the sort
  const sorted: SortedDraws[][] = objs.map((o) => o.xs.map((x) => { const s = sortDraws(x, o.w); return { ...s, x: s.x.slice(0, s.n), w: s.w.slice(0, s.n) }; }));
  const moments = objs.map((o, i) => o.xs.map((x, j) => sampleMoments(x, o.w, sorted[i][j])));
  const work: SortedDraws = { x: new Float64Array(4096), w: new Float64Array(4096), n: 0, total: 0 };
  time('normalise weights + Kish ESS', (i) => kishEss(normaliseWeights({ weights: objs[i].raw }, objs[i].id)));
  time('sort x k', (i) => objs[i].xs.forEach((x) => sortDraws(x, objs[i].w, work)));
  time('mean, std, quantiles, HDI from the sort x k', (i) => sorted[i].forEach((s) => summariseSorted(s)));
  time('multimodality (binned KDE, shared sort) x k', (i) => objs[i].xs.forEach((x, j) => isMultimodal(x, objs[i].w, { ...MULTIMODAL_OPTS(q.multimodalMinMass), moments: moments[i][j] })));
  time('prior-edge mass x k', (i) => objs[i].xs.forEach((x, j) => priors[j] && priorEdgeMass(x, objs[i].w, priors[j]!, q.priorEdgeWidth)));
  time('weighted covariance', (i) => weightedCovariance(objs[i].xs, objs[i].w));
  const ctx = kernelContext(b.config, { seed: 1, m: 64, logWeights: L.logWeights, charts: false });
  const one = (o: (typeof objs)[number]) => ({ index: Int32Array.of(0), ids: [o.id], parts: [{ params: o.xs, weight: o.raw, logPrior: null, chain: null }], part: Int32Array.of(0), start: Int32Array.of(0), end: Int32Array.of(o.raw.length), firstRow: null });
  time('whole kernel, no corner data', (i) => summariseBatch(ctx, one(objs[i])));
  const withCharts = kernelContext(b.config, { seed: 1, m: 64, logWeights: L.logWeights, charts: true });
  let bytes = 0;
  time('whole kernel with corner data (JSON text)', (i) => (bytes = summariseBatch(withCharts, one(objs[i])).chartJson!.length));
  const jw = new JsonWriter();
  const names = b.config.parameters.map((p) => p.name);
  time('corner data alone (1-D and 2-D densities, contours, JSON text)', (i) => {
    jw.reset();
    writeChartsJson(jw, cornerData(names, objs[i].xs, objs[i].w, makeRng(i).nextUint32(), moments[i]), null);
  });
  // the corner data's share of the kernel, the kernel's way (draws in SIMD memory)
  ms['corner data (kernel with it - without)'] = ms['whole kernel with corner data (JSON text)'] - ms['whole kernel, no corner data'];
  return { objects: objs.length, params: k, draws: objs[0]?.w.length ?? 0, msPerObject: ms, chartJsonBytesPerObject: bytes, timer: 'thread CPU' };
}

/** Synthetic relation data: y = a + b (x - 10) + N(0, s), measured with correlated Gaussian errors. */
function synth(n: number, seed: number) {
  const rng = makeRng(seed);
  const a = 0.8, b = 0.75, s = 0.25;
  const tx = new Float64Array(n), ty = new Float64Array(n), sx = new Float64Array(n), sy = new Float64Array(n), rho = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    tx[i] = rng.normal(10, 0.6);
    ty[i] = a + b * (tx[i] - 10) + rng.normal(0, s);
    sx[i] = 0.05 + 0.15 * rng.next();
    sy[i] = 0.1 + 0.2 * rng.next();
    rho[i] = 0.4 * (rng.next() - 0.5);
  }
  return { rng, tx, ty, sx, sy, rho };
}

async function deconvolved(n: string) {
  const { fitDeconvolved } = await import('../../src/lib/core/relations/deconvolved.ts');
  const { stepsFor } = await import('../../src/lib/pipeline/population.ts');
  const N = Number(n);
  const { rng, tx, ty, sx, sy, rho } = synth(N, 7);
  const d = { x: new Float64Array(N), y: new Float64Array(N), cxx: new Float64Array(N), cyy: new Float64Array(N), cxy: new Float64Array(N) };
  for (let i = 0; i < N; i++) {
    const e1 = rng.normal(), e2 = rng.normal();
    d.x[i] = tx[i] + sx[i] * e1;
    d.y[i] = ty[i] + sy[i] * (rho[i] * e1 + Math.sqrt(1 - rho[i] ** 2) * e2);
    d.cxx[i] = sx[i] ** 2;
    d.cyy[i] = sy[i] ** 2;
    d.cxy[i] = rho[i] * sx[i] * sy[i];
  }
  const nSteps = stepsFor(N * 16, 3e7, 400, 2000);
  const t0 = now();
  const fit = fitDeconvolved(d, { pivot: 10, seed: 3, nWalkers: 16, nSteps });
  return { seconds: now() - t0, objects: N, nWalkers: 16, nSteps, b: fit.b.median, s: fit.s.median };
}

async function hierarchical(n: string, draws: string, precision = 'single') {
  const { fitHierarchical } = await import('../../src/lib/core/relations/hierarchical.ts');
  const { stepsFor } = await import('../../src/lib/pipeline/population.ts');
  const N = Number(n), D = Number(draws);
  const { rng, tx, ty, sx, sy } = synth(N, 9);
  const x = new Float64Array(N * D), y = new Float64Array(N * D), w = new Float64Array(N * D).fill(1), logPrior = new Float64Array(N * D);
  const offsets = new Int32Array(N + 1);
  // flat interim prior over a box wide enough for every draw
  const lp = -Math.log(20) - Math.log(20);
  for (let i = 0; i < N; i++) {
    const ox = tx[i] + sx[i] * rng.normal(), oy = ty[i] + sy[i] * rng.normal();
    for (let k = 0; k < D; k++) {
      x[i * D + k] = ox + sx[i] * rng.normal();
      y[i * D + k] = oy + sy[i] * rng.normal();
      logPrior[i * D + k] = lp;
    }
    offsets[i + 1] = (i + 1) * D;
  }
  const nSteps = stepsFor(N * D * 16, 3e8, 400, 1500);
  const t0 = now();
  const fit = fitHierarchical({ x, y, w, logPrior, offsets }, { pivot: 10, seed: 5, maxDraws: D, nWalkers: 16, nSteps, precision: precision as 'single' | 'double' });
  return { seconds: now() - t0, objects: N, draws: D, nWalkers: 16, nSteps, precision: fit.precision, b: fit.b.median, s: fit.s.median, maxRhat: Math.max(...fit.diagnostics.rhat!), minEss: Math.min(...fit.diagnostics.ess!) };
}

/** DuckDB over the same Parquet file: weighted mean and standard deviation of every parameter per object. */
async function duckdb(dir: string) {
  const { DuckDBInstance } = await import('@duckdb/node-api');
  const b = await loadBundle(dir, { samples: false });
  const L = await sampleLayout(b);
  const q = (s: string) => `"${s.replace(/"/g, '""')}"`;
  const w = q(L.weight);
  const cols = L.params
    .map((p, j) => {
      const x = `CAST(${q(p)} AS DOUBLE)`;
      return `sum(${w} * ${x}) / sum(${w}) AS m${j}, sqrt(greatest(sum(${w} * ${x} * ${x}) / sum(${w}) - pow(sum(${w} * ${x}) / sum(${w}), 2), 0)) AS s${j}`;
    })
    .join(', ');
  const db = await DuckDBInstance.create(':memory:');
  const con = await db.connect();
  const t0 = now();
  await con.run(`CREATE TEMP TABLE r AS SELECT ${q(L.id)} AS id, ${cols} FROM read_parquet('${L.path.replace(/'/g, "''")}') GROUP BY ${q(L.id)}`);
  const seconds = now() - t0;
  const count = (await con.runAndReadAll('SELECT count(*) AS n FROM r')).getRowObjects()[0].n;
  const threads = (await con.runAndReadAll("SELECT current_setting('threads') AS t")).getRowObjects()[0].t;
  // can this DuckDB read the Arrow IPC file too, with what it has (no extension downloads)?
  let arrowIpc = 'readable';
  const arrowPath = L.path.replace(/\.parquet$/, '.arrow').replace(`${sep}summ-parquet${sep}`, `${sep}summ-arrow${sep}`);
  const offline = await (await DuckDBInstance.create(':memory:', { autoinstall_known_extensions: 'false', autoload_known_extensions: 'false' })).connect();
  try {
    await offline.run(`SELECT count(*) FROM '${arrowPath.replace(/'/g, "''")}'`);
  } catch (e) {
    arrowIpc = `not readable: ${(e as Error).message.split('\n')[0]}`;
  }
  return { seconds, objects: Number(count), threads: Number(threads), arrowIpc };
}

/** The whole pipeline (samples loaded by the loader, as `runPipeline` does), then figures for a few objects. */
async function pipeline(dir: string, figures: string) {
  const { runPipeline } = await import('../../src/lib/pipeline/run.ts');
  const out = await mkdtemp(join(tmpdir(), 'posterity-bench-pipeline-'));
  try {
    const t0 = now();
    const stages: Record<string, number> = {};
    let stage = '';
    let tStage = now();
    await runPipeline(dir, {
      contentDir: join(out, 'content'),
      downloadsDir: join(out, 'downloads'),
      progress: (s) => {
        if (s !== stage) {
          if (stage) stages[stage] = (stages[stage] ?? 0) + now() - tStage;
          stage = s;
          tStage = now();
        }
      },
    });
    if (stage) stages[stage] = (stages[stage] ?? 0) + now() - tStage;
    const seconds = now() - t0;
    let chartSeconds: number | null = null, figuresRendered = 0, chartError: string | null = null;
    try {
      const { renderObjectFigures } = await import('../../src/lib/charts/prerender.ts');
      const slugs = (await readdir(join(out, 'content', 'objects'))).filter((f) => f.endsWith('.json') && f !== 'index.json').slice(0, Number(figures)).map((f) => f.slice(0, -5));
      const t1 = now();
      const r = await renderObjectFigures(join(out, 'content'), slugs, true);
      chartSeconds = (now() - t1) / slugs.length;
      figuresRendered = r.rendered;
    } catch (e) {
      chartError = (e as Error).message.split('\n')[0];
    }
    return { seconds, stages, chartSecondsPerObject: chartSeconds, figuresRendered, chartError };
  } finally {
    await rm(out, { recursive: true, force: true });
  }
}

/**
 * A view of a bench bundle whose release.json sets the object-page mode: `static` (a page with
 * its figures for every object), `viewer` (shards and a small page per object) or `default`
 * (the bundle's own setting). Table files are hard links, so a view costs nothing.
 */
async function modeView(dir: string, mode: string, n: number): Promise<string> {
  if (mode === 'default') return dir;
  const { link, mkdir, readFile, writeFile } = await import('node:fs/promises');
  const to = `${dir}-${mode}`;
  await rm(to, { recursive: true, force: true });
  await mkdir(to, { recursive: true });
  const cfg = JSON.parse(await readFile(join(dir, 'release.json'), 'utf8'));
  for (const t of Object.values(cfg.tables) as { path: string }[]) await link(join(dir, t.path), join(to, t.path));
  for (const f of await readdir(dir)) if (f.endsWith('.json') && f !== 'release.json') await link(join(dir, f), join(to, f));
  cfg.site = { ...(cfg.site ?? {}), objectPageLimit: mode === 'static' ? Math.max(n, 1) : Math.max(1, Math.min(50000, n - 1)) };
  await writeFile(join(to, 'release.json'), JSON.stringify(cfg, null, 2) + '\n');
  return to;
}

/**
 * The whole release build (pipeline, figure prerender, Astro site) of a bench bundle, as
 * `posterity build` runs it, in an object-page mode (see `modeView`): time per stage, the site's
 * size with and without the downloads, and the bytes of object pages: in static mode every
 * hundredth page (its figures are inline; it loads no per-object file), in viewer mode the
 * small page at each address plus the object's share of its shard and of the slug lookup. In
 * static mode also the cost of drawing an object's figures (both SEDs and the posterior matrix)
 * on one thread, over 300 objects of the build's content. Peak memory is measured around this
 * task's process and its children (the Astro build) by the runner.
 */
async function build(dir: string, mode = 'default') {
  const { buildRelease } = await import('../../src/lib/release/build.ts');
  const { gzipSync } = await import('node:zlib');
  const { readFile, stat } = await import('node:fs/promises');
  const n = JSON.parse(await readFile(join(dir, '..', 'done.json'), 'utf8').catch(() => '{"n":0}')).n as number;
  const bundle = await modeView(dir, mode, n);
  const out = await mkdtemp(join(tmpdir(), 'posterity-bench-build-'));
  try {
    // a stage's time runs from the end of the one before to its own last call (done === total)
    const stages: Record<string, number> = {};
    const t0 = now();
    let lastEnd = t0;
    const content = join(out, 'content');
    const s = await buildRelease(bundle, {
      out: join(out, 'dist'),
      keepContent: content,
      progress: (name, done, total) => {
        if (done !== total) return;
        const t = now();
        stages[name] = (stages[name] ?? 0) + t - lastEnd;
        lastEnd = t;
      },
    });
    const seconds = now() - t0;
    const dist = join(out, 'dist');
    const site = JSON.parse(await readFile(join(content, 'site.json'), 'utf8'));
    const viewer = site.objectPages?.mode === 'viewer';
    const index = JSON.parse(await readFile(join(content, 'objects', 'index.json'), 'utf8')) as { slug: string }[];
    // object pages: every hundredth
    const raw: number[] = [], gz: number[] = [];
    for (let i = 0; i < index.length; i += 100) {
      const b = await readFile(join(dist, 'objects', index[i].slug, 'index.html'));
      raw.push(b.length);
      gz.push(gzipSync(b, { level: 9 }).length);
    }
    const mean = (v: number[]) => v.reduce((x, y) => x + y, 0) / Math.max(1, v.length);
    let dataPerObject = 0;
    if (viewer) {
      const view = join(dist, 'objects', 'view');
      let bytes = 0;
      for (const f of await readdir(view)) if (/^(shard|lookup)/.test(f)) bytes += (await stat(join(view, f))).size;
      dataPerObject = bytes / s.objects;
    }
    // 300 objects' content kept for the figures task, which draws them in a fresh process
    // (static mode: the content holds every object's content)
    let figureSample: string | null = null;
    if (!viewer) {
      const { writeFile } = await import('node:fs/promises');
      const objs = [];
      for (let i = 0; i < Math.min(300, index.length); i++) objs.push(JSON.parse(await readFile(join(content, 'objects', `${index[i].slug}.json`), 'utf8')));
      figureSample = join(dir, '..', 'figure-sample.json');
      await writeFile(figureSample, JSON.stringify(objs));
    }
    return {
      seconds,
      stages,
      objects: s.objects,
      params: site.parameters.length,
      mode: viewer ? 'viewer' : 'static',
      pages: s.pages,
      files: s.files,
      siteBytes: s.bytes,
      downloadBytes: s.downloadBytes,
      pageRawMean: mean(raw),
      pageRawMax: Math.max(...raw),
      pageGzMean: mean(gz),
      pageGzMax: Math.max(...gz),
      dataPerObject,
      figureSample,
    };
  } finally {
    await rm(out, { recursive: true, force: true });
    if (bundle !== dir) await rm(bundle, { recursive: true, force: true });
  }
}

/** The object figures (both SEDs and the posterior matrix) of objects kept by a build, drawn on one thread: thread CPU ms per object, best of 5 after a warm-up. */
async function figures(file: string) {
  const { readFile } = await import('node:fs/promises');
  const { objectFigures } = await import('../../src/lib/charts/figures.ts');
  const objs = JSON.parse(await readFile(file, 'utf8'));
  for (const o of objs) objectFigures(o);
  let best = Infinity;
  let bytes = 0;
  for (let rep = 0; rep < 5; rep++) {
    const c0 = cpuNow();
    bytes = 0;
    for (const o of objs) {
      const f = objectFigures(o);
      bytes += (f.sed?.length ?? 0) + (f.sedMag?.length ?? 0) + (f.posterior?.length ?? 0);
    }
    best = Math.min(best, ((cpuNow() - c0) * 1000) / objs.length);
  }
  return { objects: objs.length, params: objs[0]?.params.length ?? 0, msPerObject: best, bytesPerObject: bytes / objs.length };
}

export async function runTask(name: string, args: string[]): Promise<Record<string, unknown>> {
  switch (name) {
    case 'gen': return gen(args[0], args[1]);
    case 'scan': return scan(args[0]);
    case 'floor': return floorTask(args[0]);
    case 'group': return group(args[0]);
    case 'summarise': return summariseTask(args[0], args[1], args[2]);
    case 'kernel': return kernel(args[0], args[1]);
    case 'deconvolved': return deconvolved(args[0]);
    case 'hierarchical': return hierarchical(args[0], args[1], args[2]);
    case 'duckdb': return duckdb(args[0]);
    case 'pipeline': return pipeline(args[0], args[1]);
    case 'build': return build(args[0], args[1]);
    case 'figures': return figures(args[0]);
    case 'pages': return (await import('./pages.ts')).pages(args[0], args[1]);
    case 'changes': return (await import('./changes.ts')).changes(args[0]);
    default: throw new Error(`unknown bench task ${name}`);
  }
}
