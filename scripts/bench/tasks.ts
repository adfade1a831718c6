/**
 * The benchmark's tasks, each run in its own process by `task.mjs` so that its peak resident
 * memory (`maxRSS`) is its own. Every task returns plain numbers (seconds, counts).
 */
import { mkdtemp, readdir, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { loadBundle } from '../../src/lib/bundle/load.ts';
import { ProblemSink } from '../../src/lib/bundle/coerce.ts';
import { readTableBatches } from '../../src/lib/io/read.ts';
import { summariseAll } from '../../src/lib/pipeline/summarise.ts';
import { groupedBatches, sampleLayout } from '../../src/lib/pipeline/summarise-stream.ts';
import { summariseBatch, kernelContext, chartsFor, MULTIMODAL_OPTS } from '../../src/lib/pipeline/summarise-kernel.ts';
import { normaliseWeights, kishEss } from '../../src/lib/core/stats/weights.ts';
import { summarise, weightedCovariance } from '../../src/lib/core/stats/summary.ts';
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

/** Decode, type and group into objects without any statistics (the streaming overhead over the floor). */
async function group(dir: string) {
  const b = await loadBundle(dir, { samples: false });
  const L = await sampleLayout(b);
  const t0 = now();
  let objects = 0;
  for await (const batch of groupedBatches(b, L, { sink: new ProblemSink(), seen: new Uint8Array(b.objects.n) })) objects += batch.index.length;
  return { seconds: now() - t0, objects };
}

async function summariseTask(dir: string, workers: string) {
  const t0 = now();
  const b = await loadBundle(dir, { samples: false });
  const load = now() - t0;
  const t1 = now();
  let mode = '';
  const r = await summariseAll(b, { seed: b.config.seed, workers: Number(workers), onStream: (s) => (mode = s.mode) });
  const seconds = now() - t1;
  let flagged = 0;
  for (const f of r.table.flags) if (f) flagged++;
  return { seconds, loadSeconds: load, mode, objects: r.table.n, flagged, workers: Number(workers) };
}

/** Where the per-object time goes: each step of the kernel timed alone over the first objects. */
async function kernel(dir: string, count: string) {
  const b = await loadBundle(dir, { samples: false });
  const L = await sampleLayout(b);
  const want = Number(count);
  const objs: { xs: Float64Array[]; w: Float64Array; id: string }[] = [];
  for await (const batch of groupedBatches(b, L, { sink: new ProblemSink(), seen: new Uint8Array(b.objects.n), batchRows: 4096 })) {
    for (let o = 0; o < batch.index.length && objs.length < want; o++) {
      const a = batch.offsets[o], e = batch.offsets[o + 1];
      objs.push({ xs: batch.params.map((p) => p.slice(a, e)), w: batch.weight.slice(a, e), id: batch.ids[o] });
    }
    if (objs.length >= want) break;
  }
  const q = b.config.quality;
  const priors = b.config.parameters.map((p) => (p.prior?.kind === 'uniform' ? { min: p.prior.min, max: p.prior.max } : null));
  const ms: Record<string, number> = {};
  const time = (name: string, f: (o: (typeof objs)[number], w: Float64Array) => void, n = objs.length) => {
    const t0 = now();
    for (let i = 0; i < n; i++) f(objs[i], ws[i]);
    ms[name] = ((now() - t0) * 1000) / n;
  };
  const ws = objs.map((o) => normaliseWeights({ weights: o.w }, o.id));
  time('normalise weights + Kish ESS', (o) => kishEss(normaliseWeights({ weights: o.w }, o.id)));
  time('summarise (mean, std, quantiles, HDI) x k', (o, w) => o.xs.forEach((x) => summarise(x, w)));
  time('multimodality (weighted KDE) x k', (o, w) => o.xs.forEach((x) => isMultimodal(x, w, MULTIMODAL_OPTS(q.multimodalMinMass))));
  time('prior-edge mass x k', (o, w) => o.xs.forEach((x, j) => priors[j] && priorEdgeMass(x, w, priors[j]!, q.priorEdgeWidth)));
  time('weighted covariance', (o, w) => weightedCovariance(o.xs, w));
  const ctx = kernelContext(b.config, { seed: 1, m: 64, logWeights: L.logWeights, charts: false });
  time('whole kernel, no corner data', (o) => summariseBatch(ctx, { index: Int32Array.of(0), ids: [o.id], offsets: Int32Array.of(0, o.w.length), params: o.xs, weight: o.w, logPrior: null, chain: null }));
  const nc = Math.min(objs.length, 100);
  let bytes = 0;
  time('corner data (1-D and 2-D densities, contours)', (o, w) => (bytes += JSON.stringify(chartsFor(ctx.names, o.xs, w, makeRng(1).nextUint32())).length), nc);
  return { objects: objs.length, msPerObject: ms, chartJsonBytesPerObject: bytes / nc };
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
  return { seconds, objects: Number(count), threads: Number(threads) };
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
 * The whole release build (pipeline, figure prerender, Astro site) of a bench bundle, as
 * `posterity build` runs it; time per stage, the site's size and, in viewer mode, the bytes per
 * object of the shards (gzipped). Peak memory is measured around this task's process and its
 * children (the Astro build) by the runner.
 */
async function build(dir: string) {
  const { buildRelease } = await import('../../src/lib/release/build.ts');
  const { gzipSync } = await import('node:zlib');
  const { readFile } = await import('node:fs/promises');
  const out = await mkdtemp(join(tmpdir(), 'posterity-bench-build-'));
  try {
    const stages: Record<string, number> = {};
    let stage = '';
    let tStage = now();
    const t0 = now();
    const s = await buildRelease(dir, {
      out: join(out, 'dist'),
      progress: (name) => {
        if (name !== stage) {
          if (stage) stages[stage] = (stages[stage] ?? 0) + now() - tStage;
          stage = name;
          tStage = now();
        }
      },
    });
    if (stage) stages[stage] = (stages[stage] ?? 0) + now() - tStage;
    const seconds = now() - t0;
    const site = JSON.parse(await readFile(join(out, 'dist', 'objects', 'view', 'lookup.json'), 'utf8').catch(() => 'null'));
    let shardGz = 0, shardRaw = 0, shards = 0;
    const view = join(out, 'dist', 'objects', 'view');
    const names = site ? (await readdir(view)).filter((f) => f.startsWith('shard-')) : [];
    // every tenth shard, gzipped at level 9 (all of them would take as long as the build)
    for (let i = 0; i < names.length; i += 10) {
      const b = await readFile(join(view, names[i]));
      shardRaw += b.length;
      shardGz += gzipSync(b, { level: 9 }).length;
      shards++;
    }
    const perShard = shards ? names.length / shards : 0;
    // static mode: every hundredth object page, gzipped at level 9 (its figures are inline)
    let pageGz = 0, pageRaw = 0, pagesSeen = 0, pageMax = 0;
    if (!site) {
      const objDir = join(out, 'dist', 'objects');
      const slugs = (await readdir(objDir, { withFileTypes: true })).filter((e) => e.isDirectory()).map((e) => e.name).sort();
      for (let i = 0; i < slugs.length; i += 100) {
        const b = await readFile(join(objDir, slugs[i], 'index.html')).catch(() => null);
        if (!b) continue;
        const g = gzipSync(b, { level: 9 }).length;
        pageRaw += b.length;
        pageGz += g;
        pageMax = Math.max(pageMax, g);
        pagesSeen++;
      }
    }
    return {
      seconds,
      stages,
      objects: s.objects,
      mode: site ? 'viewer' : 'static',
      pages: s.pages,
      files: s.files,
      siteBytes: s.bytes,
      downloadBytes: s.downloadBytes,
      objectBytesGz: site ? (shardGz * perShard) / s.objects : pagesSeen ? pageGz / pagesSeen : null,
      objectBytesRaw: site ? (shardRaw * perShard) / s.objects : pagesSeen ? pageRaw / pagesSeen : null,
      objectBytesMaxGz: site ? null : pageMax,
    };
  } finally {
    await rm(out, { recursive: true, force: true });
  }
}

export async function runTask(name: string, args: string[]): Promise<Record<string, unknown>> {
  switch (name) {
    case 'gen': return gen(args[0], args[1]);
    case 'scan': return scan(args[0]);
    case 'group': return group(args[0]);
    case 'summarise': return summariseTask(args[0], args[1]);
    case 'kernel': return kernel(args[0], args[1]);
    case 'deconvolved': return deconvolved(args[0]);
    case 'hierarchical': return hierarchical(args[0], args[1], args[2]);
    case 'duckdb': return duckdb(args[0]);
    case 'pipeline': return pipeline(args[0], args[1]);
    case 'build': return build(args[0]);
    case 'pages': return (await import('./pages.ts')).pages(args[0], args[1]);
    case 'changes': return (await import('./changes.ts')).changes(args[0]);
    default: throw new Error(`unknown bench task ${name}`);
  }
}
