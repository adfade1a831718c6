/**
 * The pipeline: bundle in, `content/` and `downloads/` out. Stages take plain data and
 * return plain data: load, summarise, population, evidence, then write.
 */
import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { loadBundle, type Bundle } from '../bundle/load.ts';
import { makeCosmology } from '../core/cosmology.ts';
import { FLAG_INFO } from '../core/flags.ts';
import { slugOf } from '../core/slug.ts';
import { formatProblem, PosterityError, type Problem } from '../core/problems.ts';
import { summariseAll } from './summarise.ts';
import { ChartSpool } from './chart-spool.ts';
import { runPopulation, roleIndex } from './population.ts';
import { buildCatalogue } from './catalogue.ts';
import { objectContent, objectIndexEntries, nearestNeighbours } from './objects.ts';
import { encodeObject, SHARD_FORMAT } from './object-codec.ts';
import { renderMarkdown } from './markdown.ts';
import { objectDownloadPaths, samplesTable, SAMPLES_PARQUET, writeChecksums, writeJson, writeObjectDownloads } from './downloads.ts';
import { writeCsv, cellText } from '../io/csv.ts';
import { writeArrow } from '../io/arrow.ts';
import { withFormatUnits } from '../io/units.ts';
import { buildEvidence } from './evidence.ts';
import { calibrationFromSamples, streamSampleProducts } from './samples-pass.ts';
import { readCachedSummary, summaryKey, writeCachedSummary } from './summary-cache.ts';
import { siteOverview } from './overview.ts';
import type { SiteContent, OutlierEntry } from './content.ts';
import type { MergedSummary } from './summarise-partition.ts';
import { compareWithPrevious, openPrevious, siteChanges, type PreviousOptions } from './changes.ts';
import { sha256File } from './downloads.ts';
import { datasetJsonLd, writeMachineReadable, writePaperFiles } from './paper.ts';

export const TOOL = { name: 'posterity', version: '0.1.0' };

export interface PipelineOptions {
  contentDir: string;
  downloadsDir: string;
  /** Progress callback: stage name, done, total. */
  progress?: (stage: string, done: number, total: number) => void;
  /** Truth of a mock, for display (relation truth per bin). */
  truth?: Parameters<typeof runPopulation>[0]['truth'];
  /** A mock's generating Schechter function at redshift z (for display beside the measured mass function). */
  massFunctionTruth?: (z: number) => { phiStar: number; logMStar: number; alpha: number };
  /** Summaries merged from partials (`posterity merge`), used instead of summarising again; `source` names them in errors. */
  summaries?: { merged: MergedSummary; source: string };
  /**
   * Folder where the summaries of this build are kept for the next one (`summary-cache.ts`);
   * used up to the object-page limit (above it the corner data would be copied for every object).
   */
  summaryCache?: string;
  /** An earlier release to compare with (`changes.ts`): writes downloads/changes.json and the /changes/ page's content. */
  previous?: PreviousOptions;
}

export interface PipelineResult {
  bundle: Bundle;
  objects: number;
  warnings: string[];
  /** Where the summaries came from: computed now, reused from the previous build, or given (merged partials). */
  summaries: 'computed' | 'reused' | 'given';
}

export async function runPipeline(bundleDir: string, opts: PipelineOptions): Promise<PipelineResult> {
  const progress = opts.progress ?? (() => {});
  progress('load', 0, 1);
  // above the object-page limit the samples are streamed, never held whole (see samples-pass.ts)
  const bundle = await loadBundle(bundleDir, { samples: 'up-to-page-limit' });
  const streamSamples = !bundle.samples && !!bundle.config.tables.samples;
  const { config, objects } = bundle;
  const n = objects.n;
  // refuse an earlier release that cannot be compared before anything expensive runs
  const previous = opts.previous ? openPrevious(opts.previous, config) : null;
  progress('load', 1, 1);
  const cosmo = makeCosmology(config.cosmology);
  const contentDir = opts.contentDir;
  const dl = opts.downloadsDir;
  await mkdir(join(contentDir, 'objects'), { recursive: true });
  await mkdir(join(contentDir, 'relations'), { recursive: true });
  await mkdir(dl, { recursive: true });

  // summaries; each object's corner data waits on disk until its page is written, so memory
  // does not grow with the catalogue
  const charts = new ChartSpool(join(contentDir, '.spool'), n);
  const cacheKey = opts.summaryCache && !opts.summaries && n <= config.site.objectPageLimit ? summaryKey(bundle, TOOL) : null;
  const cached = cacheKey ? await readCachedSummary(opts.summaryCache!, cacheKey) : null;
  if (cached) cached.charts?.forEach((c, i) => c && charts.set(i, c));
  const summariesFrom: PipelineResult['summaries'] = opts.summaries ? 'given' : cached ? 'reused' : 'computed';
  const { table: summary, pop } = opts.summaries ? await givenSummaries(bundle, opts.summaries, charts) : cached ? cached : await summariseAll(bundle, {
    seed: config.seed,
    onChartsJson: (i, json) => {
      charts.set(i, json);
      if (i % 200 === 0) progress('summarise', i, n);
    },
  });
  if (cacheKey && !cached) await writeCachedSummary(opts.summaryCache!, cacheKey, bundle, summary, pop, charts.source(Int32Array.from({ length: n }, (_, i) => i)));
  progress('summarise', n, n);

  const popResult = runPopulation({ config, objects, summary, pop, cosmo, truth: opts.truth });
  progress('population', 1, 1);
  // every draw again, streamed: the samples download and the mock calibration
  const isMock = Object.keys(objects.truth).length > 0;
  let streamed: Awaited<ReturnType<typeof streamSampleProducts>> | null = null;
  if (streamSamples) {
    progress('samples', 0, 1);
    streamed = await streamSampleProducts(bundle, { parquetPath: join(dl, 'samples.parquet'), calibration: isMock });
    progress('samples', 1, 1);
  }
  const calibration = streamed ? streamed.calibration : isMock ? calibrationFromSamples(bundle) : new Map();
  const evidence = buildEvidence({ bundle, summary, pop, cosmo, popResult, calibration });
  progress('evidence', 1, 1);

  // catalogue and downloads
  const { table: catalogue, docs } = buildCatalogue({ config, objects, summary, population: popResult.population, pSequence: popResult.pSequence, relations: popResult.offsets });
  await writeCsv(join(dl, 'catalogue.csv'), catalogue);
  await writeArrow(join(dl, 'catalogue.arrow'), { ...catalogue, meta: { title: config.title, version: config.version } });
  try {
    const { writeFits } = await import('../io/fits/index.ts');
    await writeFits(join(dl, 'catalogue.fits'), withFormatUnits(catalogue, 'fits', 'catalogue.fits'), {
      extname: 'CATALOGUE',
      date: config.releaseDate,
      keywords: { ORIGIN: `${TOOL.name} ${TOOL.version}`, RELEASE: config.version },
      comments: [config.title],
    });
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code !== 'ERR_MODULE_NOT_FOUND') throw e;
  }
  try {
    const { writeVOTable } = await import('../io/votable.ts');
    await writeVOTable(join(dl, 'catalogue.vot'), withFormatUnits(catalogue, 'votable', 'catalogue.vot'), {
      resourceName: config.title,
      tableName: 'catalogue',
      description: `${config.title}, version ${config.version}`,
      coosys: { id: 'icrs', system: 'ICRS' },
      raDecColumns: ['ra', 'dec'],
      serialization: 'auto',
    });
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code !== 'ERR_MODULE_NOT_FOUND') throw e;
  }
  const samples = samplesTable(bundle);
  if (samples) {
    try {
      const { writeParquet } = await import('../io/parquet.ts');
      await writeParquet(join(dl, 'samples.parquet'), samples, { rowGroupRows: 262144, ...SAMPLES_PARQUET });
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code !== 'ERR_MODULE_NOT_FOUND') throw e;
      await writeCsv(join(dl, 'samples.csv.gz'), samples);
    }
  }
  if (bundle.photometry) await writePhotometry(bundle, join(dl, 'photometry.csv'));
  if (bundle.spectra) await writeSpectra(bundle, join(dl, 'spectra.csv.gz'));
  await writeJson(join(dl, 'relations.json'), {
    release: { title: config.title, version: config.version },
    relations: popResult.relations.map((r) => ({
      name: r.name,
      title: r.title,
      x: r.x.name,
      y: r.y.name,
      population: r.population,
      pivot: r.pivot,
      model: 'y = a + b (x - pivot) + c (z - z_centre) + N(0, s^2), per redshift bin; a is the relation at the bin centre',
      interimPrior: r.priorUsed,
      selection:
        (config.relations.find((c) => c.name === r.name)!.aboveCompleteness ? 'population, redshift bin and above the mass-completeness limit' : 'population and redshift bin') +
        (r.binMembership ? `; redshift-bin membership per posterior draw (parameter ${r.binMembership.parameter}), each galaxy weighted by its probability of lying in the bin` : ''),
      ...(r.binMembership ? { binMembership: r.binMembership } : {}),
      bins: r.bins.map((b) => ({ zLo: b.zLo, zHi: b.zHi, n: b.n, ...(b.nEff !== undefined ? { nEff: b.nEff } : {}), completenessLogM: b.completenessLogM, fits: b.fits, running: b.running })),
    })),
  });
  if (previous) {
    progress('changes', 0, 1);
    const { changes, objects: earlier } = await compareWithPrevious(previous, { config, catalogue, relations: popResult.relations, objectLookup: n <= config.site.objectPageLimit }, sha256File);
    await writeJson(join(dl, 'changes.json'), changes);
    await writeJson(join(contentDir, 'changes.json'), siteChanges(changes));
    if (earlier) await writeFile(join(contentDir, 'changes-objects.json'), JSON.stringify(earlier));
    progress('changes', 1, 1);
  }
  // the files a paper and an archive ask for (paper.ts)
  await writeMachineReadable(dl, config, docs, catalogue);
  await writePaperFiles(dl, config, popResult.relations, { objects: n, ...(previous ? { previous: { version: previous.version, doi: previous.doi, url: previous.url } } : {}) });
  if (evidence.massfunction && opts.massFunctionTruth)
    for (const b of evidence.massfunction.bins) b.truth = opts.massFunctionTruth((b.zLo + b.zHi) / 2);
  if (evidence.massfunction) await writeJson(join(dl, 'massfunction.json'), evidence.massfunction);
  if (evidence.quality.isMock) await writeJson(join(dl, 'calibration.json'), { calibration: evidence.quality.calibration });
  await writeJson(join(dl, 'release.json'), {
    title: config.title,
    version: config.version,
    releaseDate: config.releaseDate,
    doi: config.doi,
    citation: config.citation,
    licence: config.licence,
    provenance: {
      tool: TOOL,
      inputs: bundle.files.map((f) => ({ table: f.table, path: f.path, bytes: f.bytes, sha256: f.sha256 })),
    },
    configuration: config,
    columns: docs,
    flags: FLAG_INFO.map((f) => ({ bit: f.bit, name: f.name, label: f.label, explanation: f.explain() })),
  });

  // object pages
  const neighbours = nearestNeighbours(objects.ra, objects.dec, 5, 30 / 3600);
  const index = objectIndexEntries(bundle, summary, popResult.population);
  // above the page limit, objects are written in shards for one static viewer page
  const viewer = n > config.site.objectPageLimit;
  const shardSize = config.site.shardSize;
  const ctx = {
    bundle,
    summary,
    popResult,
    neighbours,
    pStarForming: popResult.pSequence,
    downloads: (i: number) => (viewer ? { draws: null, photometry: null } : objectDownloadPaths(bundle, i)),
  };
  let shard: string[] = [];
  if (viewer) await mkdir(join(contentDir, 'objects', 'shards'), { recursive: true });
  for (let i = 0; i < n; i++) {
    const oc = objectContent(ctx, i, charts.take(i));
    if (viewer) {
      shard.push(JSON.stringify(encodeObject(oc)));
      if (shard.length === shardSize || i === n - 1) {
        // one gzip stream a shard: the objects' repeated labels and numbers compress together
        await writeFile(join(contentDir, 'objects', 'shards', `${shardName(Math.floor(i / shardSize))}.json.gz`), gzipSync(`{"v":${SHARD_FORMAT},"objects":[${shard.join(',')}]}`, { level: 6 }));
        shard = [];
      }
    } else {
      await writeFile(join(contentDir, 'objects', `${oc.slug}.json`), JSON.stringify(oc));
      await writeObjectDownloads(dl, bundle, i);
    }
    if (i % 200 === 0) progress('objects', i, n);
  }
  progress('objects', n, n);
  charts.close();
  await writeJson(join(contentDir, 'objects', 'index.json'), index);
  for (const r of popResult.relations) await writeJson(join(contentDir, 'relations', `${r.name}.json`), r);

  const outliers: OutlierEntry[] = [];
  for (const o of popResult.offsets) {
    for (let i = 0; i < n; i++)
      if (Math.abs(o.tension[i]) > config.quality.outlierTension)
        outliers.push({
          id: objects.id[i],
          slug: slugOf(objects.id[i]),
          relation: o.name,
          tension: Number(o.tension[i].toFixed(3)),
          offset: Number(o.offset[i].toFixed(4)),
          redshift: objects.redshift[i],
          flags: summary.flags[i],
          reason: `${o.tension[i] > 0 ? 'above' : 'below'} the ${config.relations.find((r) => r.name === o.name)!.title} by ${Math.abs(o.tension[i]).toFixed(1)} times the combined intrinsic scatter and posterior spread`,
        });
  }
  outliers.sort((a, b) => Math.abs(b.tension) - Math.abs(a.tension) || (a.id < b.id ? -1 : a.id > b.id ? 1 : 0));
  await writeJson(join(contentDir, 'outliers.json'), outliers);
  await writeJson(join(contentDir, 'quality.json'), evidence.quality);
  if (evidence.massfunction) await writeJson(join(contentDir, 'massfunction.json'), evidence.massfunction);

  const downloads = await writeChecksums(dl);
  await writeJson(join(contentDir, 'dataset.json'), datasetJsonLd(config, downloads, n));
  const iM = roleIndex(config, 'log_mass');
  const site: SiteContent = {
    title: config.title,
    version: config.version,
    releaseDate: config.releaseDate,
    descriptionHtml: renderMarkdown(config.description),
    citation: config.citation,
    licence: config.licence,
    doi: config.doi,
    changelog: config.changelog,
    survey: config.survey,
    cosmology: { H0: cosmo.H0, Om0: cosmo.Om0, Ode0: cosmo.Ode0 },
    model: config.model,
    parameters: config.parameters.map((p) => ({ name: p.name, label: p.label, unit: p.unit, description: p.description, ucd: p.ucd, role: p.role, prior: p.prior as never })),
    counts: {
      objects: n,
      withSamples: n - summary.summariesOnly.reduce((s, v) => s + v, 0),
      summariesOnly: summary.summariesOnly.reduce((s, v) => s + v, 0),
      draws: bundle.samples?.order.length ?? streamed?.rows ?? 0,
      photometryRows: bundle.photometry?.order.length ?? 0,
      bands: bundle.bands?.band.length ?? 0,
      withSpectra: bundle.spectra ? countWith(bundle.spectra.offsets) : 0,
      starForming: popResult.population.filter((p) => p === 'star-forming').length,
      quiescent: popResult.population.filter((p) => p === 'quiescent').length,
      flagged: summary.flags.reduce((s, f) => s + (f !== 0 ? 1 : 0), 0),
      isMock: Object.keys(objects.truth).length > 0,
    },
    relations: config.relations.map((r) => ({ name: r.name, title: r.title, x: r.x, y: r.y, population: r.population })),
    headline: popResult.relations.flatMap((r) =>
      r.bins
        .filter((b) => b.fits.length)
        .map((b) => {
          const f = b.fits.find((x) => x.method === 'hierarchical') ?? b.fits[0];
          return { relation: r.name, title: r.title, zLo: b.zLo, zHi: b.zHi, method: f.method, slope: f.b, intercept: f.a, scatter: f.s, n: f.n };
        }),
    ),
    columns: docs,
    flags: FLAG_INFO.map((f) => ({ bit: f.bit, name: f.name, label: f.label, explanation: f.explain(), count: summary.flags.reduce((s, v) => s + ((v & f.bit) !== 0 ? 1 : 0), 0) })),
    downloads,
    ...siteOverview(objects, summary, popResult.population, iM),
    tool: TOOL,
    objectPages: viewer ? { mode: 'viewer', shardSize, limit: config.site.objectPageLimit } : { mode: 'static', shardSize, limit: config.site.objectPageLimit },
    quality: { minEss: config.quality.minEss, minChi2Pvalue: config.quality.minChi2Pvalue, priorEdgeWidth: config.quality.priorEdgeWidth, priorEdgeMass: config.quality.priorEdgeMass, multimodalMinMass: config.quality.multimodalMinMass, outlierTension: config.quality.outlierTension },
    warnings: [...bundle.warnings.map(formatProblem), ...popResult.warnings],
  };
  await writeJson(join(contentDir, 'site.json'), site);
  return { bundle, objects: n, warnings: site.warnings, summaries: summariesFrom };
}

/** Merged summaries checked against the bundle (same inputs, tool version, objects and parameters); their corner data goes into `charts`. */
async function givenSummaries(bundle: Bundle, given: NonNullable<PipelineOptions['summaries']>, charts: ChartSpool): Promise<Pick<MergedSummary, 'table' | 'pop'>> {
  const { summaryMeta } = await import('./summarise-partition.ts');
  const want = summaryMeta(bundle);
  const { meta, table } = given.merged;
  const file = given.source;
  const problems: Problem[] = [];
  if (meta.tool.name !== TOOL.name || meta.tool.version !== TOOL.version)
    problems.push({ severity: 'error', file, field: 'tool', message: 'summaries written by another version of the tool; summarise again', expected: `${TOOL.name} ${TOOL.version}`, got: `${meta.tool.name} ${meta.tool.version}` });
  if (JSON.stringify(meta.bundle) !== JSON.stringify(want.bundle)) {
    const differs = meta.bundle.configSha256 !== want.bundle.configSha256 ? 'release.json' : (want.bundle.inputs.find((x, i) => JSON.stringify(x) !== JSON.stringify(meta.bundle.inputs[i]))?.path ?? 'the list of input files');
    problems.push({ severity: 'error', file, field: 'bundle', message: `summaries of a different bundle (${differs} differs from when they were made); summarise again`, expected: `the checksums of ${bundle.dir}`, got: 'other checksums' });
  }
  if (table.n !== bundle.objects.n || JSON.stringify(meta.params) !== JSON.stringify(want.params))
    problems.push({ severity: 'error', file, field: 'params', message: 'summaries of other objects or parameters', expected: `${bundle.objects.n} objects, parameters ${want.params.join(', ')}`, got: `${table.n} objects, parameters ${meta.params.join(', ')}` });
  if (problems.length) throw new PosterityError(problems);
  given.merged.charts?.forEach((c, i) => c && charts.set(i, c));
  return given.merged;
}

/** Shard file name of a shard number: zero-padded so names sort in catalogue order. */
export function shardName(k: number): string {
  return String(k).padStart(6, '0');
}

function countWith(offsets: Int32Array): number {
  let c = 0;
  for (let i = 0; i + 1 < offsets.length; i++) if (offsets[i + 1] > offsets[i]) c++;
  return c;
}

async function writePhotometry(bundle: Bundle, path: string): Promise<void> {
  const { photometry: p, objects } = bundle;
  if (!p) return;
  const n = p.order.length;
  const id = new Array<string>(n);
  const band = new Array<string>(n);
  const cols = { flux: new Float64Array(n), flux_err: new Float64Array(n), model_flux: new Float64Array(n).fill(NaN), limit_nsigma: new Float64Array(n).fill(NaN) };
  const ul = new Uint8Array(n);
  for (let i = 0; i < objects.n; i++)
    for (let r = p.offsets[i]; r < p.offsets[i + 1]; r++) {
      const row = p.order[r];
      id[r] = objects.id[i];
      band[r] = p.band[row];
      cols.flux[r] = p.flux[row];
      cols.flux_err[r] = p.fluxErr[row];
      if (p.modelFlux) cols.model_flux[r] = p.modelFlux[row];
      if (p.limitNsigma) cols.limit_nsigma[r] = p.limitNsigma[row];
      if (p.upperLimit) ul[r] = p.upperLimit[row];
    }
  const unit = bundle.config.units.flux;
  await writeCsv(path, {
    numRows: n,
    columns: [
      { name: 'id', kind: 'string', values: id },
      { name: 'band', kind: 'string', values: band },
      { name: 'flux', kind: 'float64', values: cols.flux, unit },
      { name: 'flux_err', kind: 'float64', values: cols.flux_err, unit },
      { name: 'model_flux', kind: 'float64', values: cols.model_flux, unit },
      { name: 'upper_limit', kind: 'bool', values: ul },
      { name: 'limit_nsigma', kind: 'float64', values: cols.limit_nsigma },
    ],
  });
}

async function writeSpectra(bundle: Bundle, path: string): Promise<void> {
  const { spectra: s, objects } = bundle;
  if (!s) return;
  let text = 'id,instrument,wavelength,flux,flux_err,mask,model_flux\n';
  const idCol = { name: 'id', kind: 'string' as const, values: objects.id };
  for (let i = 0; i < objects.n; i++)
    for (let r = s.offsets[i]; r < s.offsets[i + 1]; r++) {
      const row = s.order[r];
      text += [cellText(idCol, i), s.instrument?.[row] ?? '', s.wavelength[row], s.flux[row], s.fluxErr[row], s.mask ? (s.mask[row] ? 'true' : 'false') : 'false', s.modelFlux ? s.modelFlux[row] : ''].join(',') + '\n';
    }
  await writeFile(path, gzipSync(Buffer.from(text)));
}
