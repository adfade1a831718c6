/**
 * Load a bundle: release.json, then each table through its column map, typed and
 * checked. Problems are collected (not thrown one by one) so `posterity check`
 * reports everything in one run.
 */
import { createHash } from 'node:crypto';
import { createReadStream, existsSync, statSync } from 'node:fs';
import { join } from 'node:path';
import type { Column, Table } from '../io/table.ts';
import { readTableBatches } from '../io/read.ts';
import { PosterityError, type Problem } from '../core/problems.ts';
import type { ParameterConfig, ReleaseConfig, TableName, TableRefConfig } from './schema.ts';
import { readConfig } from './config.ts';
import { TABLE_COLUMNS, type ColumnSpec } from './tables.ts';
import { ProblemSink, toBool, toFloat64, toIds, toInt32, toStrings } from './coerce.ts';

export interface ObjectsData {
  n: number;
  id: string[];
  ra: Float64Array;
  dec: Float64Array;
  redshift: Float64Array;
  chi2: Float64Array | null;
  nBands: Int32Array | null;
  mag: Float64Array | null;
  /** `<param>_true` columns (mock catalogues). */
  truth: Record<string, Float64Array>;
  /** `<param>_p16/_p50/_p84` columns (objects without samples). */
  summaries: Record<string, { p16: Float64Array; p50: Float64Array; p84: Float64Array }>;
  /** Columns passed through to the catalogue as they are. */
  extra: Column[];
  index: Map<string, number>;
}

/** Rows of a per-object table, grouped: object i owns rows order[offsets[i] .. offsets[i+1]). */
export interface Grouping {
  order: Int32Array;
  offsets: Int32Array;
}

export interface SamplesData extends Grouping {
  /** One Float64Array per parameter, in file row order. */
  params: Float64Array[];
  weight: Float64Array | null;
  logWeight: Float64Array | null;
  logLike: Float64Array | null;
  logPrior: Float64Array | null;
  chain: Int32Array | null;
  nRows: number;
}

export interface PhotometryData extends Grouping {
  band: string[];
  flux: Float64Array;
  fluxErr: Float64Array;
  modelFlux: Float64Array | null;
  upperLimit: Uint8Array | null;
  limitNsigma: Float64Array | null;
}

export interface BandsData {
  band: string[];
  wavelength: Float64Array;
  label: string[] | null;
  width: Float64Array | null;
}

export interface SpectraData extends Grouping {
  wavelength: Float64Array;
  flux: Float64Array;
  fluxErr: Float64Array;
  mask: Uint8Array | null;
  modelFlux: Float64Array | null;
  instrument: string[] | null;
}

export interface ModelsData extends Grouping {
  wavelength: Float64Array;
  flux: Float64Array;
  frame: string[] | null;
}

export interface InputFile {
  table: TableName | 'release.json';
  path: string;
  bytes: number;
  sha256: string;
}

export interface Bundle {
  dir: string;
  config: ReleaseConfig;
  configText: string;
  objects: ObjectsData;
  samples: SamplesData | null;
  photometry: PhotometryData | null;
  bands: BandsData | null;
  spectra: SpectraData | null;
  models: ModelsData | null;
  files: InputFile[];
  warnings: Problem[];
}

export function sampleColumnOf(p: ParameterConfig): string {
  return p.column ?? p.name;
}

/** Our columns a table must/may have, parameters included. */
export function specsFor(table: TableName, config: ReleaseConfig): ColumnSpec[] {
  const base = [...TABLE_COLUMNS[table]];
  if (table === 'samples') {
    for (const p of config.parameters)
      base.push({ name: sampleColumnOf(p), type: 'number', required: true, description: p.description });
  }
  return base;
}

interface Loaded {
  cols: Map<string, Column[]>;
  numRows: number;
  headers: string[];
}

/** Read a table and keep only the columns named, mapped to our names. */
async function loadColumns(
  dir: string,
  ref: TableRefConfig,
  wanted: (ours: string) => boolean,
  sink: ProblemSink,
): Promise<Loaded | null> {
  const path = join(dir, ref.path);
  if (!existsSync(path)) {
    sink.add({ severity: 'error', file: ref.path, message: 'file not found' });
    return null;
  }
  const theirsToOurs = new Map<string, string>();
  for (const [ours, theirs] of Object.entries(ref.columns)) theirsToOurs.set(theirs, ours);
  const cols = new Map<string, Column[]>();
  let numRows = 0;
  let headers: string[] = [];
  try {
    for await (const batch of readTableBatches(path, { file: ref.path, hdu: ref.hdu })) {
      if (numRows === 0) headers = batch.columns.map((c) => c.name);
      for (const c of batch.columns) {
        const ours = theirsToOurs.get(c.name) ?? (ref.columns[c.name] === undefined ? c.name : null);
        if (ours === null || !wanted(ours)) continue;
        if (!cols.has(ours)) cols.set(ours, []);
        cols.get(ours)!.push({ ...c, name: c.name });
      }
      numRows += batch.numRows;
    }
  } catch (e) {
    if (e instanceof PosterityError) {
      for (const p of e.problems) sink.add(p);
      return null;
    }
    throw e;
  }
  return { cols, numRows, headers };
}

type Coerced = Float64Array | Int32Array | Uint8Array | string[];

function coerceColumn(parts: Column[], spec: ColumnSpec, file: string, sink: ProblemSink): Coerced {
  const chunks: Coerced[] = [];
  let rowOffset = 0;
  for (const c of parts) {
    const ctx = { file, sink, rowOffset };
    let v: Coerced;
    switch (spec.type) {
      case 'number': v = toFloat64(c, ctx); break;
      case 'integer': v = toInt32(c, ctx); break;
      case 'boolean': v = toBool(c, ctx); break;
      case 'id': v = toIds(c, ctx); break;
      case 'string': v = toStrings(c); break;
    }
    chunks.push(v);
    rowOffset += c.values.length;
  }
  if (chunks.length === 1) return chunks[0];
  if (Array.isArray(chunks[0])) return (chunks as string[][]).flat();
  const total = chunks.reduce((s, c) => s + c.length, 0);
  const Ctor = (chunks[0] as Float64Array).constructor as Float64ArrayConstructor;
  const out = new Ctor(total);
  let o = 0;
  for (const c of chunks as Float64Array[]) {
    out.set(c, o);
    o += c.length;
  }
  return out;
}

function concatColumn(parts: Column[]): Column {
  if (parts.length === 1) return parts[0];
  const n = parts.reduce((s, p) => s + p.values.length, 0);
  const first = parts[0];
  if (first.kind === 'string') return { ...first, values: parts.flatMap((p) => p.values as string[]) };
  const Ctor = (first.values as Float64Array).constructor as Float64ArrayConstructor;
  const values = new Ctor(n);
  let o = 0;
  for (const p of parts) {
    values.set(p.values as Float64Array, o);
    o += p.values.length;
  }
  return { ...first, values };
}

/** Take the typed columns of a table, reporting missing required ones. */
function typed(
  loaded: Loaded,
  specs: ColumnSpec[],
  ref: TableRefConfig,
  sink: ProblemSink,
): Map<string, Coerced> {
  const out = new Map<string, Coerced>();
  for (const spec of specs) {
    const parts = loaded.cols.get(spec.name);
    if (!parts) {
      if (spec.required) {
        const theirs = ref.columns[spec.name];
        sink.add({
          severity: 'error',
          file: ref.path,
          column: theirs ?? spec.name,
          message: theirs ? `required column is missing (mapped from our "${spec.name}")` : 'required column is missing',
          expected: spec.description,
          got: `columns ${loaded.headers.join(', ')}`,
        });
      }
      continue;
    }
    out.set(spec.name, coerceColumn(parts, spec, ref.path, sink));
  }
  return out;
}

/** Group rows by object: ids of unknown objects are reported. Stable within each object. */
function groupByObject(ids: string[], index: Map<string, number>, nObjects: number, file: string, column: string, sink: ProblemSink): Grouping {
  const n = ids.length;
  const obj = new Int32Array(n);
  const counts = new Int32Array(nObjects + 1);
  for (let i = 0; i < n; i++) {
    const k = index.get(ids[i]);
    if (k === undefined) {
      sink.add({ severity: 'error', file, row: i + 1, column, message: 'id not in the objects table', got: JSON.stringify(ids[i]) }, `${file}|unknown-id`);
      obj[i] = -1;
      continue;
    }
    obj[i] = k;
    counts[k + 1]++;
  }
  const offsets = new Int32Array(nObjects + 1);
  for (let k = 0; k < nObjects; k++) offsets[k + 1] = offsets[k] + counts[k + 1];
  const fill = offsets.slice(0, nObjects);
  const order = new Int32Array(offsets[nObjects]);
  for (let i = 0; i < n; i++) if (obj[i] >= 0) order[fill[obj[i]]++] = i;
  return { order, offsets };
}

function rangeCheck(
  v: Float64Array,
  ok: (x: number) => boolean,
  file: string,
  column: string,
  message: string,
  sink: ProblemSink,
  severity: 'error' | 'warning' = 'error',
): void {
  for (let i = 0; i < v.length; i++)
    if (!ok(v[i])) sink.add({ severity, file, row: i + 1, column, message, got: String(v[i]) });
}

async function sha256(path: string): Promise<string> {
  const h = createHash('sha256');
  for await (const chunk of createReadStream(path)) h.update(chunk as Buffer);
  return h.digest('hex');
}

const theirName = (ref: TableRefConfig, ours: string) => ref.columns[ours] ?? ours;

/** Load and check everything; returns the bundle or throws with every error found. */
export async function loadBundle(dir: string, opts: { samples?: boolean } = {}): Promise<Bundle> {
  const { config, warnings, text } = await readConfig(dir);
  const sink = new ProblemSink();
  for (const w of warnings) sink.add(w);
  const t = config.tables;

  // objects
  const objRef = t.objects;
  const paramNames = config.parameters.map((p) => p.name);
  const objSpecs: ColumnSpec[] = [...TABLE_COLUMNS.objects];
  for (const p of paramNames) {
    objSpecs.push({ name: `${p}_true`, type: 'number', required: false, description: `true ${p} (mock)` });
    for (const q of ['p16', 'p50', 'p84']) objSpecs.push({ name: `${p}_${q}`, type: 'number', required: false, description: `${p} ${q}` });
  }
  const objLoaded = await loadColumns(dir, objRef, () => true, sink);
  if (!objLoaded) throw new PosterityError(sink.finish());
  const oc = typed(objLoaded, objSpecs, objRef, sink);
  const id = (oc.get('id') as string[]) ?? [];
  const n = objLoaded.numRows;
  const index = new Map<string, number>();
  id.forEach((s, i) => {
    if (index.has(s)) sink.add({ severity: 'error', file: objRef.path, row: i + 1, column: theirName(objRef, 'id'), message: 'duplicate object id', got: JSON.stringify(s) });
    else index.set(s, i);
  });
  const f64 = (k: string) => (oc.get(k) as Float64Array | undefined) ?? null;
  const ra = f64('ra') ?? new Float64Array(n);
  const dec = f64('dec') ?? new Float64Array(n);
  const redshift = f64('redshift') ?? new Float64Array(n);
  rangeCheck(ra, (x) => x >= 0 && x < 360, objRef.path, theirName(objRef, 'ra'), 'right ascension out of range [0, 360) degrees', sink);
  rangeCheck(dec, (x) => x >= -90 && x <= 90, objRef.path, theirName(objRef, 'dec'), 'declination out of range [-90, 90] degrees', sink);
  rangeCheck(redshift, (x) => Number.isFinite(x) && x >= 0, objRef.path, theirName(objRef, 'redshift'), 'redshift must be finite and not negative', sink);
  const truth: ObjectsData['truth'] = {};
  const summaries: ObjectsData['summaries'] = {};
  for (const p of paramNames) {
    const tv = f64(`${p}_true`);
    if (tv) truth[p] = tv;
    const p16 = f64(`${p}_p16`), p50 = f64(`${p}_p50`), p84 = f64(`${p}_p84`);
    if (p16 && p50 && p84) summaries[p] = { p16, p50, p84 };
  }
  const known = new Set(objSpecs.map((s) => s.name));
  const extra: Column[] = [];
  for (const [ours, parts] of objLoaded.cols) if (!known.has(ours)) extra.push({ ...concatColumn(parts), name: ours });
  const objects: ObjectsData = {
    n,
    id,
    ra,
    dec,
    redshift,
    chi2: f64('chi2'),
    nBands: (oc.get('n_bands') as Int32Array | undefined) ?? null,
    mag: f64('mag'),
    truth,
    summaries,
    extra,
    index,
  };

  // samples
  let samples: SamplesData | null = null;
  if (t.samples && opts.samples !== false) {
    const ref = t.samples;
    const specs = specsFor('samples', config);
    const wanted = new Set(specs.map((s) => s.name));
    const loaded = await loadColumns(dir, ref, (c) => wanted.has(c), sink);
    if (loaded) {
      for (const h of loaded.headers) {
        const ours = Object.entries(ref.columns).find(([, th]) => th === h)?.[0] ?? h;
        if (!wanted.has(ours))
          sink.add({ severity: 'warning', file: ref.path, column: h, message: 'column not used (not a declared parameter or a known samples column)' });
      }
      const sc = typed(loaded, specs, ref, sink);
      const sid = (sc.get('id') as string[]) ?? [];
      const grouping = groupByObject(sid, index, n, ref.path, theirName(ref, 'id'), sink);
      const weight = (sc.get('weight') as Float64Array | undefined) ?? null;
      const logWeight = (sc.get('log_weight') as Float64Array | undefined) ?? null;
      if (!weight && !logWeight)
        sink.add({ severity: 'error', file: ref.path, column: theirName(ref, 'weight'), message: 'the samples table needs a weight or a log_weight column', got: `columns ${loaded.headers.join(', ')}` });
      if (weight) rangeCheck(weight, (x) => Number.isFinite(x) && x >= 0, ref.path, theirName(ref, 'weight'), 'weight must be finite and not negative', sink);
      if (logWeight) rangeCheck(logWeight, (x) => !Number.isNaN(x) && x !== Infinity, ref.path, theirName(ref, 'log_weight'), 'log_weight must be finite or -inf', sink);
      const params = config.parameters.map((p) => (sc.get(sampleColumnOf(p)) as Float64Array | undefined) ?? new Float64Array(loaded.numRows));
      config.parameters.forEach((p, j) =>
        rangeCheck(params[j], Number.isFinite, ref.path, theirName(ref, sampleColumnOf(p)), 'parameter value must be finite', sink),
      );
      samples = {
        ...grouping,
        params,
        weight,
        logWeight,
        logLike: (sc.get('log_like') as Float64Array | undefined) ?? null,
        logPrior: (sc.get('log_prior') as Float64Array | undefined) ?? null,
        chain: (sc.get('chain') as Int32Array | undefined) ?? null,
        nRows: loaded.numRows,
      };
      // objects without draws; all-zero weights
      for (let k = 0; k < n; k++) {
        const a = grouping.offsets[k], b = grouping.offsets[k + 1];
        if (a === b) {
          if (!config.parameters.every((p) => summaries[p.name]))
            sink.add({ severity: 'error', file: objRef.path, row: k + 1, object: id[k], message: 'object has no posterior draws in the samples table and no _p16/_p50/_p84 summaries' });
          continue;
        }
        let any = false;
        for (let r = a; r < b && !any; r++) {
          const row = grouping.order[r];
          if (weight ? weight[row] > 0 : logWeight![row] > -Infinity) any = true;
        }
        if (!any && (weight || logWeight))
          sink.add({ severity: 'error', file: ref.path, row: grouping.order[a] + 1, object: id[k], column: theirName(ref, weight ? 'weight' : 'log_weight'), message: 'every draw of this object has zero weight' });
      }
    }
  } else if (!t.samples) {
    for (const p of config.parameters)
      if (!summaries[p.name])
        sink.add({ severity: 'error', file: objRef.path, column: `${p.name}_p50`, message: 'without a samples table the objects table needs _p16, _p50 and _p84 columns for every parameter' });
  }

  // photometry
  let photometry: PhotometryData | null = null;
  if (t.photometry) {
    const ref = t.photometry;
    const specs = specsFor('photometry', config);
    const loaded = await loadColumns(dir, ref, () => true, sink);
    if (loaded) {
      const pc = typed(loaded, specs, ref, sink);
      const grouping = groupByObject((pc.get('id') as string[]) ?? [], index, n, ref.path, theirName(ref, 'id'), sink);
      const fluxErr = (pc.get('flux_err') as Float64Array) ?? new Float64Array(loaded.numRows);
      rangeCheck(fluxErr, (x) => Number.isFinite(x) && x >= 0, ref.path, theirName(ref, 'flux_err'), 'flux error must be finite and not negative', sink);
      const flux = (pc.get('flux') as Float64Array) ?? new Float64Array(loaded.numRows);
      rangeCheck(flux, (x) => !Number.isNaN(x), ref.path, theirName(ref, 'flux'), 'flux is missing (negative forced fluxes are fine; leave out rows with no measurement)', sink, 'warning');
      photometry = {
        ...grouping,
        band: (pc.get('band') as string[]) ?? [],
        flux,
        fluxErr,
        modelFlux: (pc.get('model_flux') as Float64Array | undefined) ?? null,
        upperLimit: (pc.get('upper_limit') as Uint8Array | undefined) ?? null,
        limitNsigma: (pc.get('limit_nsigma') as Float64Array | undefined) ?? null,
      };
    }
  }

  // bands
  let bands: BandsData | null = null;
  if (t.bands) {
    const ref = t.bands;
    const loaded = await loadColumns(dir, ref, () => true, sink);
    if (loaded) {
      const bc = typed(loaded, specsFor('bands', config), ref, sink);
      const wl = (bc.get('wavelength') as Float64Array) ?? new Float64Array(loaded.numRows);
      rangeCheck(wl, (x) => x > 0 && Number.isFinite(x), ref.path, theirName(ref, 'wavelength'), 'wavelength must be positive', sink);
      bands = {
        band: (bc.get('band') as string[]) ?? [],
        wavelength: wl,
        label: (bc.get('label') as string[] | undefined) ?? null,
        width: (bc.get('width') as Float64Array | undefined) ?? null,
      };
      if (photometry) {
        const names = new Set(bands.band);
        photometry.band.forEach((b, i) => {
          if (!names.has(b)) sink.add({ severity: 'error', file: t.photometry!.path, row: i + 1, column: theirName(t.photometry!, 'band'), message: 'band not in the bands table', got: JSON.stringify(b) }, 'unknown-band');
        });
      }
    }
  } else if (photometry) {
    sink.add({ severity: 'error', file: 'release.json', field: 'tables.bands', message: 'a photometry table needs a bands table (for the pivot wavelengths)' });
  }

  // spectra
  let spectra: SpectraData | null = null;
  if (t.spectra) {
    const ref = t.spectra;
    const loaded = await loadColumns(dir, ref, () => true, sink);
    if (loaded) {
      const c = typed(loaded, specsFor('spectra', config), ref, sink);
      const wl = (c.get('wavelength') as Float64Array) ?? new Float64Array(loaded.numRows);
      rangeCheck(wl, (x) => x > 0 && Number.isFinite(x), ref.path, theirName(ref, 'wavelength'), 'wavelength must be positive', sink);
      const err = (c.get('flux_err') as Float64Array) ?? new Float64Array(loaded.numRows);
      rangeCheck(err, (x) => Number.isNaN(x) || x >= 0, ref.path, theirName(ref, 'flux_err'), 'flux error must not be negative', sink);
      spectra = {
        ...groupByObject((c.get('id') as string[]) ?? [], index, n, ref.path, theirName(ref, 'id'), sink),
        wavelength: wl,
        flux: (c.get('flux') as Float64Array) ?? new Float64Array(loaded.numRows),
        fluxErr: err,
        mask: (c.get('mask') as Uint8Array | undefined) ?? null,
        modelFlux: (c.get('model_flux') as Float64Array | undefined) ?? null,
        instrument: (c.get('instrument') as string[] | undefined) ?? null,
      };
    }
  }

  // models
  let models: ModelsData | null = null;
  if (t.models) {
    const ref = t.models;
    const loaded = await loadColumns(dir, ref, () => true, sink);
    if (loaded) {
      const c = typed(loaded, specsFor('models', config), ref, sink);
      const wl = (c.get('wavelength') as Float64Array) ?? new Float64Array(loaded.numRows);
      rangeCheck(wl, (x) => x > 0 && Number.isFinite(x), ref.path, theirName(ref, 'wavelength'), 'wavelength must be positive', sink);
      const frame = (c.get('frame') as string[] | undefined) ?? null;
      frame?.forEach((f, i) => {
        if (f !== '' && f !== 'observed' && f !== 'rest')
          sink.add({ severity: 'error', file: ref.path, row: i + 1, column: theirName(ref, 'frame'), message: 'unknown frame', expected: '"observed" or "rest"', got: JSON.stringify(f) });
      });
      models = {
        ...groupByObject((c.get('id') as string[]) ?? [], index, n, ref.path, theirName(ref, 'id'), sink),
        wavelength: wl,
        flux: (c.get('flux') as Float64Array) ?? new Float64Array(loaded.numRows),
        frame,
      };
    }
  }

  const problems = sink.finish();
  if (problems.some((p) => p.severity === 'error')) throw new PosterityError(problems);

  const files: InputFile[] = [];
  const cfgPath = join(dir, 'release.json');
  files.push({ table: 'release.json', path: 'release.json', bytes: statSync(cfgPath).size, sha256: await sha256(cfgPath) });
  for (const [name, ref] of Object.entries(t) as [TableName, TableRefConfig | undefined][]) {
    if (!ref) continue;
    const p = join(dir, ref.path);
    files.push({ table: name, path: ref.path, bytes: statSync(p).size, sha256: await sha256(p) });
  }

  return { dir, config, configText: text, objects, samples, photometry, bands, spectra, models, files, warnings: problems };
}
