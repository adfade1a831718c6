/**
 * The demo scenario: a mock data release of a fictional deep field, written as a complete
 * input bundle (release.json and its tables) plus `truth.json`, everything that was drawn.
 *
 * Deterministic: every galaxy has its own random streams derived from the seed and its
 * index, so the same seed gives byte-identical files, and tables are written in chunks
 * (samples and models as one Arrow record batch per chunk) to keep memory bounded.
 */
import { mkdir, writeFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { deriveSeed, makeRng, type Rng } from '../../src/lib/core/random.ts';
import { makeCosmology, makeDistanceInterpolator } from '../../src/lib/core/cosmology.ts';
import { normalCdf } from '../../src/lib/core/stats/special.ts';
import { writeCsv } from '../../src/lib/io/csv.ts';
import type { Column, Table } from '../../src/lib/io/table.ts';
import {
  FIELD, MAG_LIMIT, PARENT_DEPTH_DEX, Z_BINS, Z_MAX, Z_MIN, ageTable, drawHyper, dustAv, logMassAtLimit, msNormalisation,
  type Hyper, type World,
} from './scenario.ts';
import { buildGrid, drawParents, drawTruth, type Galaxy, type ParentHistogram } from './population.ts';
import { FLAW, SSFR_PRIOR, errorCorrelation, paramList } from './params.ts';
import { MULTIMODAL, SKEW, makePosteriorModel, type ObjectFit } from './posterior.ts';
import { BANDS, SELECTION_BAND, abToUjy, makeSed, modelGrid, round, type SedParams } from './sed.ts';
import { LIMIT_NSIGMA, SPECTRUM, observePhotometry, observeSpectrum } from './observe.ts';
import { ArrowChunkWriter, CsvChunkWriter } from './writers.ts';
import { COLUMN_MAPS, QUALITY, buildRelease } from './release.ts';

export interface DemoOptions {
  seed?: number;
  nObjects?: number;
  drawsRange?: [number, number];
  params?: 4 | 8;
  spectraFraction?: number;
  formats?: 'csv+arrow';
}

export interface RelationBinTruth {
  zLo: number;
  zHi: number;
  zCentre: number;
  /** Normalisation at the bin centre (main sequence: a(z_centre)). */
  a: number;
  /** Mean of a(z) over the bin's star-forming catalogue galaxies (what a fit in the bin sees). */
  aMeanStarForming: number | null;
  b: number;
  scatter: number;
  nStarForming: number;
  /** Star-forming mass limit at the bin's far edge, log(solMass). */
  logMassLimit: number;
}

/** Everything that was drawn, for tests and checks (not part of the release format). */
export interface DemoTruth {
  seed: number;
  options: Required<Omit<DemoOptions, 'seed'>>;
  field: { name: string; short: string; raDeg: number; decDeg: number; raWidthDeg: number; decWidthDeg: number };
  cosmology: { H0: number; Om0: number; Ode0: number };
  zRange: [number, number];
  areaDeg2: number;
  solidAngleSr: number;
  /** Comoving volume 0.1 < z < 3 over the field, Mpc^3. */
  volumeMpc3: number;
  magLimit: number;
  magBand: string;
  hyper: Hyper;
  formulas: Record<string, string>;
  massFunction: {
    logPhiStarAt: { z: number; logPhiStar: number }[];
    parentDepthDex: number;
    nParents: number;
    expectedParents: number;
    expectedSelected: number;
    histogram: ParentHistogram;
  };
  relations: {
    main_sequence: { pivot: number; a0: number; aT: number; b: number; scatter: number; quiescentOffset: number; bins: RelationBinTruth[]; grid: { z: number; ageGyr: number; a: number }[] };
    dust_mass: { pivot: number; c: number; d: number; scatter: number; bins: RelationBinTruth[] };
  };
  interimPrior: { ssfrMean: number; ssfrSigma: number; logNorm: number; bounds: Record<string, [number, number]> };
  errorModel: { sigma0: Record<string, number>; correlation: number[][]; skewAlpha: number; skewThreshold: number; formula: string };
  flaw: { parameter: string; factor: number; expectedCoverage68: number; calibratedCoverage68: number };
  planted: {
    multimodal: string[];
    poorFit: string[];
    skewed: number;
    lowEss: string[];
    /** Per parameter: objects whose posterior holds > priorEdgeMass within priorEdgeWidth of a bound. */
    priorEdge: Record<string, string[]>;
    quiescent: number;
    spectra: string[];
    specialIds: string[];
  };
  ess: { min: number; median: number; max: number; below50: number };
  counts: Record<string, number>;
}

const DEFAULTS = { seed: 20261201, nObjects: 2400, drawsRange: [500, 2000] as [number, number], params: 4 as 4 | 8, spectraFraction: 0.1, formats: 'csv+arrow' as const };

/** Rows per chunk of the samples table before a record batch is written. */
const SAMPLE_CHUNK_ROWS = 1 << 19;
const MODEL_POINTS = 200;
const MODEL_RANGE: [number, number] = [0.3, 10.0];
const SPECIAL_ID = `${FIELD.short}-J0412+3301/2`;

const rng = (seed: number, ...keys: (string | number)[]): Rng => makeRng(deriveSeed(seed, ...keys));
const fixed = (x: number, d: number) => Number(x.toFixed(d));

function floatColumn(name: string, values: Float64Array | Float32Array, meta: Partial<Column> = {}): Column {
  return { name, kind: values instanceof Float32Array ? 'float32' : 'float64', values, ...meta };
}

export async function generateDemoBundle(outDir: string, opts: DemoOptions = {}): Promise<{ dir: string; truth: DemoTruth; counts: Record<string, number> }> {
  const o = { ...DEFAULTS, ...opts };
  const seed = o.seed;
  const n = o.nObjects;
  if (!(Number.isInteger(n) && n >= 10)) throw new Error(`demo: nObjects must be an integer >= 10, got ${n}`);
  const [dLo, dHi] = o.drawsRange;
  if (!(Number.isInteger(dLo) && Number.isInteger(dHi) && dLo >= 10 && dHi >= dLo)) throw new Error(`demo: drawsRange must be two integers 10 <= lo <= hi, got ${o.drawsRange}`);
  const dir = resolve(outDir);
  await mkdir(dir, { recursive: true });

  // ---- the universe ------------------------------------------------------------------------
  const cosmoParams = { H0: 70, Om0: 0.3 };
  const cosmo = makeCosmology(cosmoParams);
  const dist = makeDistanceInterpolator(cosmo, Z_MAX + 0.2);
  const hyper = drawHyper(rng(seed, 'hyper'));
  const world: World = { hyper, cosmo, dist, ageGyr: ageTable(cosmo, Z_MAX + 0.2) };
  const grid = buildGrid(world);
  const deg2PerSr = (180 / Math.PI) ** 2;
  const areaDeg2 = Number(((n / grid.selectedPerSr) * deg2PerSr).toPrecision(4));
  const sr = areaDeg2 / deg2PerSr;
  const { selected, nParents, hist } = drawParents(world, grid, rng(seed, 'parents'), n, sr);

  // ---- geometry: a box in RA and Dec of exactly the stated area -------------------------------
  const decHalf = Math.sqrt(areaDeg2) / 2;
  const d2r = Math.PI / 180;
  const sinLo = Math.sin((FIELD.decDeg - decHalf) * d2r);
  const sinHi = Math.sin((FIELD.decDeg + decHalf) * d2r);
  const raWidth = sr / (sinHi - sinLo) / d2r;

  const params = paramList(o.params);
  const d = params.length;
  const galaxies: Galaxy[] = selected.map((p, i) => {
    const r = rng(seed, 'position', i);
    const s = sinLo + (sinHi - sinLo) * r.next();
    let dec = Math.asin(s) / d2r;
    let ra = FIELD.raDeg + raWidth * (r.next() - 0.5);
    const special = i === Math.min(7, n - 1);
    if (special) {
      ra = FIELD.raDeg + 0.0004;
      dec = FIELD.decDeg + 0.0003;
    }
    return {
      index: i,
      id: special ? SPECIAL_ID : `${FIELD.short}-${String(i + 1).padStart(6, '0')}`,
      z: p.z,
      quiescent: p.quiescent,
      mag: p.mag,
      ra,
      dec,
      u: (ra - FIELD.raDeg) / (raWidth / 2),
      v: (dec - FIELD.decDeg) / decHalf,
      truth: drawTruth(world, params, p, rng(seed, 'truth', i)),
    };
  });

  // spectroscopic targets: brighter galaxies preferred, exactly round(fraction n) of them
  const nSpec = Math.round(o.spectraFraction * n);
  const keys = galaxies.map((g) => ({ i: g.index, k: rng(seed, 'spec-pick', g.index).next() + 0.15 * (g.mag - 22) }));
  keys.sort((a, b) => a.k - b.k || a.i - b.i);
  const hasSpec = new Uint8Array(n);
  for (let j = 0; j < nSpec; j++) hasSpec[keys[j].i] = 1;

  // ---- fits, photometry, spectra and models, chunk by chunk ---------------------------------
  const model = makePosteriorModel(params, QUALITY.priorEdgeWidth);
  const sampleCols = params.map((p) => p.column ?? p.name);
  const samplesW = new ArrowChunkWriter(join(dir, 'samples.arrow'));
  const modelsW = new ArrowChunkWriter(join(dir, 'models.arrow'));
  const photW = new CsvChunkWriter(join(dir, 'photometry.csv'));
  const specW = new CsvChunkWriter(join(dir, 'spectra.csv'));
  const lamGrid = modelGrid(MODEL_POINTS, MODEL_RANGE[0], MODEL_RANGE[1]);
  const normBand = BANDS.find((b) => b.band === SELECTION_BAND)!;
  const iM = params.findIndex((p) => p.role === 'log_mass');
  const iS = params.findIndex((p) => p.role === 'log_sfr');
  const iA = params.findIndex((p) => p.role === 'dust_av');
  const iAge = params.findIndex((p) => p.role === 'log_age');
  const iZ = params.findIndex((p) => p.name === 'metallicity');
  const iDs = params.findIndex((p) => p.name === 'dust_slope');
  const iU = params.findIndex((p) => p.name === 'log_u');

  const chi2 = new Float64Array(n);
  const nBands = new Int32Array(n);
  const essAll = new Float64Array(n);
  const planted = { multimodal: [] as string[], poorFit: [] as string[], skewed: 0, lowEss: [] as string[], priorEdge: Object.fromEntries(params.map((p) => [p.name, [] as string[]])) as Record<string, string[]> };

  let pending: { g: Galaxy; fit: ObjectFit }[] = [];
  let pendingRows = 0;
  let nSamples = 0;
  const flushSamples = () => {
    if (pending.length === 0) return;
    const rows = pendingRows;
    const ids = new Array<string>(rows);
    const cols = params.map(() => new Float32Array(rows));
    const weight = new Float64Array(rows);
    const logLike = new Float32Array(rows);
    const logPrior = new Float64Array(rows);
    let r = 0;
    for (const { g, fit } of pending) {
      for (let i = 0; i < fit.n; i++, r++) {
        ids[r] = g.id;
        for (let k = 0; k < d; k++) cols[k][r] = fit.theta[i * d + k];
        weight[r] = fit.weight[i];
        logLike[r] = fit.logLike[i];
        logPrior[r] = fit.logPrior[i];
      }
    }
    const table: Table = {
      numRows: rows,
      columns: [
        { name: 'id', kind: 'string', values: ids, description: 'object identifier' },
        ...params.map((p, k) => floatColumn(sampleCols[k], cols[k], { unit: p.unit || undefined, ucd: p.ucd, description: p.description })),
        floatColumn(COLUMN_MAPS.samples.weight, weight, { description: 'importance weight (posterior / proposal), scaled to a maximum of 1 per object' }),
        floatColumn('log_like', logLike, { description: 'natural log of the likelihood of the draw' }),
        floatColumn('log_prior', logPrior, { description: 'natural log of the interim prior density of the draw (uniform box x Gaussian in log sSFR)' }),
      ].map(stripUndefined),
    };
    samplesW.write(table);
    nSamples += rows;
    pending = [];
    pendingRows = 0;
  };

  const CHUNK_OBJECTS = 500;
  let nPhot = 0;
  let nSpecRows = 0;
  let nModel = 0;
  for (let c0 = 0; c0 < n; c0 += CHUNK_OBJECTS) {
    const chunk = galaxies.slice(c0, c0 + CHUNK_OBJECTS);
    const ph = { id: [] as string[], band: [] as string[], flux: [] as number[], err: [] as number[], model: [] as number[], ul: [] as number[] };
    const sp = { id: [] as string[], lam: [] as number[], flux: [] as number[], err: [] as number[], mask: [] as number[], model: [] as number[] };
    const mIds = new Array<string>(chunk.length * MODEL_POINTS);
    const mLam = new Float64Array(chunk.length * MODEL_POINTS);
    const mFlux = new Float64Array(chunk.length * MODEL_POINTS);
    chunk.forEach((g, ci) => {
      const pick = rng(seed, 'pick', g.index);
      const nDraws = dLo + pick.int(dHi - dLo + 1);
      const multimodal = pick.next() < MULTIMODAL.fraction;
      const fit = model.fit({ z: g.z, mag: g.mag, truth: g.truth, nDraws, multimodal }, rng(seed, 'fit', g.index));
      essAll[g.index] = fit.ess;
      if (fit.multimodal) planted.multimodal.push(g.id);
      if (fit.skewed) planted.skewed++;
      if (fit.ess < QUALITY.minEss) planted.lowEss.push(g.id);
      params.forEach((p, k) => {
        if (fit.edgeMass[k] > QUALITY.priorEdgeMass) planted.priorEdge[p.name].push(g.id);
      });
      pending.push({ g, fit });
      pendingRows += fit.n;
      if (pendingRows >= SAMPLE_CHUNK_ROWS) flushSamples();

      // the best-fit model SED: the truth's spectrum, normalised to the selection magnitude
      const t = g.truth;
      const sedParams: SedParams = {
        z: g.z,
        logAge: t[iAge],
        av: t[iA],
        logSsfr: t[iS] - t[iM],
        ...(iZ >= 0 ? { metallicity: t[iZ] } : {}),
        ...(iDs >= 0 ? { dustSlope: t[iDs] } : {}),
        ...(iU >= 0 ? { logU: t[iU] } : {}),
      };
      const sed = makeSed(sedParams, normBand, abToUjy(g.mag));
      const phot = observePhotometry(sed, g.u, g.v, rng(seed, 'photometry', g.index));
      chi2[g.index] = phot.chi2;
      nBands[g.index] = phot.nBands;
      if (phot.poor) planted.poorFit.push(g.id);
      for (const row of phot.rows) {
        ph.id.push(g.id);
        ph.band.push(row.band);
        ph.flux.push(row.flux);
        ph.err.push(row.err);
        ph.model.push(row.model);
        ph.ul.push(row.upperLimit ? 1 : 0);
      }
      if (hasSpec[g.index]) {
        for (const row of observeSpectrum(sed, rng(seed, 'spectrum', g.index))) {
          sp.id.push(g.id);
          sp.lam.push(row.wavelength);
          sp.flux.push(row.flux);
          sp.err.push(row.err);
          sp.mask.push(row.mask ? 1 : 0);
          sp.model.push(row.model);
        }
      }
      for (let j = 0; j < MODEL_POINTS; j++) {
        const r = ci * MODEL_POINTS + j;
        mIds[r] = g.id;
        mLam[r] = lamGrid[j];
        mFlux[r] = round(sed.fluxAt(lamGrid[j]), 5);
      }
    });
    const nRows = ph.id.length;
    const limit = new Float64Array(nRows).fill(NaN);
    for (let r = 0; r < nRows; r++) if (ph.ul[r]) limit[r] = LIMIT_NSIGMA;
    photW.write({
      numRows: nRows,
      columns: [
        { name: 'id', kind: 'string', values: ph.id },
        { name: 'band', kind: 'string', values: ph.band },
        floatColumn(COLUMN_MAPS.photometry.flux, Float64Array.from(ph.flux)),
        floatColumn(COLUMN_MAPS.photometry.flux_err, Float64Array.from(ph.err)),
        floatColumn('model_flux', Float64Array.from(ph.model)),
        { name: 'upper_limit', kind: 'bool', values: Uint8Array.from(ph.ul) },
        floatColumn('limit_nsigma', limit),
      ],
    });
    nPhot += nRows;
    if (sp.id.length) {
      specW.write({
        numRows: sp.id.length,
        columns: [
          { name: 'id', kind: 'string', values: sp.id },
          floatColumn('wavelength', Float64Array.from(sp.lam)),
          floatColumn('flux', Float64Array.from(sp.flux)),
          floatColumn('flux_err', Float64Array.from(sp.err)),
          { name: 'mask', kind: 'bool', values: Uint8Array.from(sp.mask) },
          floatColumn('model_flux', Float64Array.from(sp.model)),
          { name: 'instrument', kind: 'string', values: new Array<string>(sp.id.length).fill(SPECTRUM.instrument) },
        ],
      });
      nSpecRows += sp.id.length;
    }
    modelsW.write({
      numRows: mIds.length,
      columns: [
        { name: 'id', kind: 'string', values: mIds, description: 'object identifier' },
        floatColumn('wavelength', mLam, { unit: 'um', description: 'observed-frame wavelength' }),
        floatColumn(COLUMN_MAPS.models.flux, mFlux, { unit: 'uJy', description: 'best-fit model flux density' }),
        { name: 'frame', kind: 'string', values: new Array<string>(mIds.length).fill('observed') },
      ].map(stripUndefined),
    });
    nModel += mIds.length;
  }
  flushSamples();
  samplesW.close();
  modelsW.close();
  photW.close();
  if (nSpecRows === 0) {
    // keep a valid header even without spectra
    specW.write({ numRows: 0, columns: ['id', 'wavelength', 'flux', 'flux_err', 'mask', 'model_flux', 'instrument'].map((name) => ({ name, kind: 'string' as const, values: [] as string[] })) });
  }
  specW.close();

  // ---- objects and bands ---------------------------------------------------------------------
  const truthCols = params.map((p, k) => floatColumn(`${p.name}_true`, Float64Array.from(galaxies, (g) => fixed(g.truth[k], 5)), { unit: p.unit || undefined, description: `true ${p.description} (mock)` }));
  const objects: Table = {
    numRows: n,
    columns: [
      { name: 'id', kind: 'string', values: galaxies.map((g) => g.id) },
      floatColumn(COLUMN_MAPS.objects.ra, Float64Array.from(galaxies, (g) => fixed(g.ra, 7))),
      floatColumn(COLUMN_MAPS.objects.dec, Float64Array.from(galaxies, (g) => fixed(g.dec, 7))),
      floatColumn(COLUMN_MAPS.objects.redshift, Float64Array.from(galaxies, (g) => fixed(g.z, 5))),
      floatColumn(COLUMN_MAPS.objects.mag, Float64Array.from(galaxies, (g) => fixed(g.mag, 4))),
      floatColumn('chi2', chi2),
      { name: 'n_bands', kind: 'int32', values: nBands },
      ...truthCols,
      { name: 'population_true', kind: 'string', values: galaxies.map((g) => (g.quiescent ? 'quiescent' : 'star-forming')) },
      { name: 'has_spectrum', kind: 'bool', values: hasSpec },
    ].map(stripUndefined),
  };
  await writeCsv(join(dir, 'objects.csv'), objects);
  await writeCsv(join(dir, 'bands.csv'), {
    numRows: BANDS.length,
    columns: [
      { name: 'band', kind: 'string', values: BANDS.map((b) => b.band) },
      floatColumn(COLUMN_MAPS.bands.wavelength, Float64Array.from(BANDS, (b) => b.wavelength)),
      { name: 'label', kind: 'string', values: BANDS.map((b) => b.label) },
      floatColumn('width', Float64Array.from(BANDS, (b) => b.width)),
    ],
  });

  // ---- truth -------------------------------------------------------------------------------
  const counts: Record<string, number> = {
    objects: n,
    samples: nSamples,
    photometry: nPhot,
    bands: BANDS.length,
    spectra: nSpecRows,
    spectraObjects: nSpec,
    models: nModel,
    parents: nParents,
  };
  const sortedEss = Float64Array.from(essAll).sort();
  const truth: DemoTruth = {
    seed,
    options: { nObjects: n, drawsRange: [dLo, dHi], params: o.params, spectraFraction: o.spectraFraction, formats: o.formats },
    field: { name: FIELD.name, short: FIELD.short, raDeg: FIELD.raDeg, decDeg: FIELD.decDeg, raWidthDeg: fixed(raWidth, 6), decWidthDeg: fixed(2 * decHalf, 6) },
    cosmology: { H0: cosmo.H0, Om0: cosmo.Om0, Ode0: cosmo.Ode0 },
    zRange: [Z_MIN, Z_MAX],
    areaDeg2,
    solidAngleSr: sr,
    volumeMpc3: Number((dist.comovingVolumeMpc3(Z_MAX, sr) - dist.comovingVolumeMpc3(Z_MIN, sr)).toPrecision(8)),
    magLimit: MAG_LIMIT,
    magBand: SELECTION_BAND,
    hyper,
    formulas: FORMULAS,
    massFunction: {
      logPhiStarAt: Z_BINS.map((z) => ({ z, logPhiStar: fixed(hyper.smf.logPhiStar0 + hyper.smf.dLogPhiStarDz * z, 4) })),
      parentDepthDex: PARENT_DEPTH_DEX,
      nParents,
      expectedParents: Number((grid.parentPerSr * sr).toPrecision(6)),
      expectedSelected: Number((grid.selectedPerSr * sr).toPrecision(6)),
      histogram: hist,
    },
    relations: relationTruth(world, galaxies),
    interimPrior: {
      ssfrMean: SSFR_PRIOR.mean,
      ssfrSigma: SSFR_PRIOR.sigma,
      logNorm: model.prior.logNorm,
      bounds: Object.fromEntries(params.map((p) => [p.name, [p.min, p.max] as [number, number]])),
    },
    errorModel: {
      sigma0: Object.fromEntries(params.map((p) => [p.name, p.sigma0])),
      correlation: errorCorrelation(d),
      skewAlpha: SKEW.alpha,
      skewThreshold: SKEW.threshold,
      formula: FORMULAS.errors,
    },
    flaw: {
      parameter: FLAW.parameter,
      factor: FLAW.factor,
      expectedCoverage68: fixed(2 * normalCdf(0.9944578832097535 / FLAW.factor) - 1, 4),
      calibratedCoverage68: 0.6827,
    },
    planted: {
      ...planted,
      quiescent: galaxies.filter((g) => g.quiescent).length,
      spectra: galaxies.filter((g) => hasSpec[g.index]).map((g) => g.id),
      specialIds: [galaxies[Math.min(7, n - 1)].id],
    },
    ess: {
      min: fixed(sortedEss[0], 2),
      median: fixed(sortedEss[Math.floor(n / 2)], 2),
      max: fixed(sortedEss[n - 1], 2),
      below50: planted.lowEss.length,
    },
    counts,
  };
  const release = buildRelease(truth, params);
  await writeFile(join(dir, 'release.json'), JSON.stringify(release, null, 2) + '\n');
  await writeFile(join(dir, 'truth.json'), JSON.stringify(truth, null, 1) + '\n');
  return { dir, truth, counts };
}

function stripUndefined(c: { name: string; kind: string; values: unknown }): Column {
  const out = { ...c } as Record<string, unknown>;
  for (const k of Object.keys(out)) if (out[k] === undefined) delete out[k];
  return out as unknown as Column;
}

export const FORMULAS = {
  massFunction: 'phi(log M) = ln(10) phi*(z) (M/M*)^(alpha+1) exp(-M/M*) per dex, log10 phi*(z) = logPhiStar0 + dLogPhiStarDz z [Mpc^-3 dex^-1]',
  quiescentFraction: 'f_q = F(z) + (1 - F(z)) / (1 + exp(-(log M - (logMq0 + dLogMqDz z)) / width)), F(z) = floor0 exp(-z / floorZScale)',
  massToLight: 'm_sel = DM(z) - 2.5 log10(1+z) + m10 + dMdz z - 2.5 (log M - 10) + quiescentOffset [quiescent] + N(0, scatter)',
  mainSequence: 'log SFR = a(z) + b (log M - 10) + N(0, scatter), a(z) = a0 - aT t(z), t = age of the universe [Gyr]; quiescent: + quiescentOffset + N(0, quiescentScatter)',
  dust: 'A_V = c + d (log M - 10) + N(0, scatter), truncated at 0 (star-forming); |N(0, quiescentSigma)| (quiescent)',
  age: 'age = f t_H(z); star-forming log10 f ~ N(sfLogFrac + sfLogFracSlope (log M - 10), sfLogFracScatter), f in [0.004, 0.9]; quiescent f ~ U(qFracMin, qFracMax); age >= minAgeYr',
  errors: 'sigma_k = sigma0_k (1 + 0.25 z) 10^(0.12 max(0, m_sel - 23)) 10^N(0, 0.08), capped at 25% of the prior range',
  interimPrior: 'pi = U(box) x N(log SFR - log M; ssfrMean, ssfrSigma), normalised over the box',
};

function relationTruth(w: World, galaxies: Galaxy[]): DemoTruth['relations'] {
  const h = w.hyper;
  const ms = h.mainSequence;
  const bins = (kind: 'ms' | 'dust'): RelationBinTruth[] =>
    Z_BINS.slice(0, -1).map((zLo, b) => {
      const zHi = Z_BINS[b + 1];
      const zc = (zLo + zHi) / 2;
      const sf = galaxies.filter((g) => !g.quiescent && g.z >= zLo && g.z < zHi);
      const meanA = sf.length ? sf.reduce((s, g) => s + msNormalisation(w, g.z), 0) / sf.length : null;
      return {
        zLo,
        zHi,
        zCentre: zc,
        a: kind === 'ms' ? fixed(msNormalisation(w, zc), 4) : fixed(dustAv(h, 10), 4),
        aMeanStarForming: kind === 'ms' ? (meanA === null ? null : fixed(meanA, 4)) : fixed(dustAv(h, 10), 4),
        b: kind === 'ms' ? ms.b : h.dust.d,
        scatter: kind === 'ms' ? ms.scatter : h.dust.scatter,
        nStarForming: sf.length,
        logMassLimit: fixed(logMassAtLimit(w, zHi, false), 3),
      };
    });
  return {
    main_sequence: {
      pivot: ms.pivot,
      a0: ms.a0,
      aT: ms.aT,
      b: ms.b,
      scatter: ms.scatter,
      quiescentOffset: ms.quiescentOffset,
      bins: bins('ms'),
      grid: Array.from({ length: 30 }, (_, i) => {
        const z = fixed(0.1 * (i + 1), 1);
        return { z, ageGyr: fixed(w.ageGyr(z), 4), a: fixed(msNormalisation(w, z), 4) };
      }),
    },
    dust_mass: { pivot: h.dust.pivot, c: h.dust.c, d: h.dust.d, scatter: h.dust.scatter, bins: bins('dust') },
  };
}


