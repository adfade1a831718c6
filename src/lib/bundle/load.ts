/**
 * Load a bundle: release.json, then each table through its column map, typed and
 * checked. Problems are collected (not thrown one by one) so `posterity check`
 * reports everything in one run: a table that cannot be read, or a release.json that
 * fails its schema, does not stop the checks of the other tables.
 *
 * Objects come out sorted by id (by UTF-16 code units, stable), whatever the row order
 * of the input, and every per-object table is grouped in that order; within an object
 * rows keep their file order. Problems always name the row of the file.
 */
import { createHash } from 'node:crypto';
import { createReadStream, existsSync, statSync } from 'node:fs';
import { join } from 'node:path';
import type { Column } from '../io/table.ts';
import { formatOf, readTableBatches } from '../io/read.ts';
import { PosterityError, type Problem } from '../core/problems.ts';
import type { ParameterConfig, ReleaseConfig, TableName, TableRefConfig } from './schema.ts';
import { CONFIG_FILE, parseConfigParts, readConfigText } from './config.ts';
import { parseUnit, UNIT_EXPECTED, unitLabel } from '../io/units.ts';
import { TABLE_COLUMNS, type ColumnSpec } from './tables.ts';
import { ProblemSink, normalisePassThrough, toBool, toFloat64, toIds, toInt32, toStrings } from './coerce.ts';

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
  /**
   * Columns passed through to the catalogue, in one kind whatever the input format
   * (text from CSV typed by its values; integers as int64, floats as float64).
   */
  extra: Column[];
  /** Position of each id in the (sorted) arrays above. */
  index: Map<string, number>;
  /** 0-based data row of each object in the objects file (objects are sorted by id). */
  fileRow?: Int32Array;
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
export function specsFor(table: TableName, config: Pick<ReleaseConfig, 'parameters'>): ColumnSpec[] {
  const base = [...TABLE_COLUMNS[table]];
  if (table === 'samples') {
    for (const p of config.parameters)
      base.push({ name: sampleColumnOf(p), type: 'number', required: true, description: `${p.description} (parameter ${p.name})` });
  }
  return base;
}

interface Loaded {
  cols: Map<string, Column[]>;
  numRows: number;
  headers: string[];
}

/**
 * Read a table and keep the columns `wanted` (by our name), mapped to our names. With
 * `warnUnknown`, every other column of the file is reported as a warning.
 */
async function loadColumns(
  dir: string,
  table: TableName,
  ref: TableRefConfig,
  wanted: (ours: string) => boolean,
  warnUnknown: boolean,
  sink: ProblemSink,
): Promise<Loaded | null> {
  const path = join(dir, ref.path);
  if (!existsSync(path)) {
    sink.add({ severity: 'error', file: ref.path, field: `tables.${table}.path`, message: 'table file not found', expected: `a file ${ref.path} in the bundle folder`, got: 'no such file' });
    return null;
  }
  if (statSync(path).isDirectory()) {
    sink.add({ severity: 'error', file: ref.path, field: `tables.${table}.path`, message: 'the table path is a folder', expected: 'a table file', got: 'a folder' });
    return null;
  }
  const theirsToOurs = new Map<string, string>();
  for (const [ours, theirs] of Object.entries(ref.columns)) theirsToOurs.set(theirs, ours);
  const mappedOurs = new Set(Object.keys(ref.columns));
  const cols = new Map<string, Column[]>();
  let numRows = 0;
  let headers: string[] | null = null;
  try {
    for await (const batch of readTableBatches(path, { file: ref.path, hdu: ref.hdu })) {
      if (headers === null) {
        headers = batch.columns.map((c) => c.name);
        const seen = new Set<string>();
        for (const h of headers) {
          if (seen.has(h)) sink.add({ severity: 'error', file: ref.path, column: h, message: 'two columns have this name', expected: 'unique column names', got: `columns ${headers.join(', ')}` });
          seen.add(h);
        }
        for (const h of seen) {
          const ours = theirsToOurs.get(h) ?? (mappedOurs.has(h) ? null : h);
          if (ours === null) {
            if (warnUnknown || table === 'objects')
              sink.add({ severity: 'warning', file: ref.path, column: h, message: `column not used: release.json maps our "${h}" to the column "${ref.columns[h]}"`, expected: `tables.${table}.columns.${h} to name the column to read`, got: `a column "${h}" as well` });
          } else if (!wanted(ours) && warnUnknown)
            sink.add({ severity: 'warning', file: ref.path, column: h, message: `unknown column, not used`, expected: `one of the ${table} columns`, got: JSON.stringify(h) });
        }
      }
      const taken = new Set<string>();
      for (const c of batch.columns) {
        const ours = theirsToOurs.get(c.name) ?? (mappedOurs.has(c.name) ? null : c.name);
        if (ours === null || !wanted(ours) || taken.has(ours)) continue;
        taken.add(ours);
        if (!cols.has(ours)) cols.set(ours, []);
        cols.get(ours)!.push(c);
      }
      numRows += batch.numRows;
    }
  } catch (e) {
    const format = (formatOf(ref.path) ?? 'table').replace('csv', 'CSV').replace('arrow', 'Arrow IPC').replace('parquet', 'Parquet').replace('fits', 'FITS');
    if (e instanceof PosterityError) {
      const size = statSync(path).size;
      for (const p of e.problems)
        sink.add({
          ...p,
          file: p.file ?? ref.path,
          ...(p.expected === undefined && p.severity === 'error' ? { expected: `a complete, readable ${format} file` } : {}),
          ...(p.got === undefined && p.severity === 'error' ? { got: `a file of ${size} bytes that cannot be read to its end` } : {}),
        });
    } else {
      sink.add({ severity: 'error', file: ref.path, message: 'cannot read the table (truncated or corrupt file?)', expected: `a complete, readable ${format} file`, got: (e as Error).message });
    }
    return null;
  }
  return { cols, numRows, headers: headers ?? [] };
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
  let valid: Uint8Array | undefined;
  if (parts.some((p) => p.valid)) {
    valid = new Uint8Array(n).fill(1);
    let o = 0;
    for (const p of parts) {
      if (p.valid) valid.set(p.valid, o);
      o += p.values.length;
    }
  }
  const { valid: _valid, ...rest } = first;
  if (first.kind === 'string') return { ...rest, values: parts.flatMap((p) => p.values as string[]), ...(valid ? { valid } : {}) };
  const Ctor = (first.values as Float64Array).constructor as Float64ArrayConstructor;
  const values = new Ctor(n);
  let o = 0;
  for (const p of parts) {
    values.set(p.values as Float64Array, o);
    o += p.values.length;
  }
  return { ...rest, values, ...(valid ? { valid } : {}) };
}

/** Take the typed columns of a table, reporting missing required ones. */
function typed(loaded: Loaded, specs: ColumnSpec[], table: TableName, ref: TableRefConfig, sink: ProblemSink): Map<string, Coerced> {
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
          ...(theirs ? { field: `tables.${table}.columns.${spec.name}` } : {}),
          message: theirs ? `required column is missing (release.json maps our "${spec.name}" to "${theirs}")` : 'required column is missing',
          expected: `a column "${theirs ?? spec.name}": ${spec.description}`,
          got: loaded.headers.length ? `columns ${loaded.headers.join(', ')}` : 'no columns',
        });
      }
      continue;
    }
    out.set(spec.name, coerceColumn(parts, spec, ref.path, sink));
  }
  return out;
}

/** Group rows by object: ids of unknown objects are reported. Stable within each object. */
function groupByObject(ids: string[], index: Map<string, number> | null, nObjects: number, file: string, column: string, sink: ProblemSink): Grouping {
  const n = ids.length;
  const obj = new Int32Array(n);
  const counts = new Int32Array(nObjects + 1);
  for (let i = 0; i < n; i++) {
    const k = index ? index.get(ids[i]) : undefined;
    if (k === undefined) {
      if (index && ids[i] !== '')
        sink.add({ severity: 'error', file, row: i + 1, column, message: 'id not in the objects table', expected: 'the id of a row of the objects table', got: JSON.stringify(ids[i]) });
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

interface Rule {
  /** Returns the problem message for a bad value, or null when the value is fine. */
  check: (x: number, row: number) => string | null;
  expected: string;
  severity?: 'error' | 'warning';
}

function rangeCheck(v: Float64Array, rule: Rule, file: string, column: string, sink: ProblemSink): void {
  const failed = sink.failedRows(file, column);
  if (failed === 'all') return;
  for (let i = 0; i < v.length; i++) {
    if (failed?.has(i + 1)) continue;
    const m = rule.check(v[i], i);
    if (m !== null) sink.add({ severity: rule.severity ?? 'error', file, row: i + 1, column, message: m, expected: rule.expected, got: String(v[i]) });
  }
}

/** A finite value, with a message per kind of bad value. */
const finiteMsg = (what: string) => (x: number) => (Number.isNaN(x) ? `${what} is missing or NaN` : !Number.isFinite(x) ? `${what} is infinite` : null);

const positiveWavelength: Rule = {
  check: (x) => (Number.isNaN(x) ? 'wavelength is missing or NaN' : !Number.isFinite(x) ? 'wavelength is infinite' : x <= 0 ? 'wavelength is not positive' : null),
  expected: 'a finite wavelength > 0',
};

async function sha256(path: string): Promise<string> {
  const h = createHash('sha256');
  for await (const chunk of createReadStream(path)) h.update(chunk as Buffer);
  return h.digest('hex');
}

const theirName = (ref: TableRefConfig, ours: string) => ref.columns[ours] ?? ours;

/** Column-map entries naming a column we do not know (for a per-object table). */
function checkColumnMap(table: TableName, ref: TableRefConfig, specs: ColumnSpec[], sink: ProblemSink): void {
  const known = new Set(specs.map((s) => s.name));
  const byTheirs = new Map<string, string>();
  for (const [ours, theirs] of Object.entries(ref.columns)) {
    if (table !== 'objects' && !known.has(ours))
      sink.add({ severity: 'warning', file: CONFIG_FILE, field: `tables.${table}.columns.${ours}`, message: 'the column map names a column we do not know; it is ignored', expected: `one of ${[...known].join(', ')}`, got: JSON.stringify(ours) });
    const other = byTheirs.get(theirs);
    if (other !== undefined)
      sink.add({ severity: 'error', file: CONFIG_FILE, field: `tables.${table}.columns.${ours}`, message: `two of our columns are mapped to the same column (also "${other}")`, expected: 'a different column for each', got: JSON.stringify(theirs) });
    else byTheirs.set(theirs, ours);
  }
}

/**
 * A passed-through column's unit in canonical form (src/lib/io/units.ts). One that cannot be
 * mapped is dropped with a warning, and kept as text in the column description.
 */
function passThroughUnit(c: Column, file: string, column: string, sink: ProblemSink): Column {
  if (!c.unit) return c;
  const r = parseUnit(c.unit);
  if (r.ok) return { ...c, unit: unitLabel(r.unit) || undefined };
  sink.add({ severity: 'warning', file, column, message: `unit cannot be mapped to a VOUnits and FITS unit (${r.message}); the downloads give it in the description only`, expected: UNIT_EXPECTED, got: JSON.stringify(c.unit) });
  const { unit, ...rest } = c;
  return { ...rest, description: `${c.description ?? 'passed through from the input objects table'} (unit as supplied: ${unit})` };
}

/** Reorders an array by `perm` (out[k] = a[perm[k]]). */
function permute<T extends Float64Array | Int32Array | Uint8Array | BigInt64Array | Float32Array | Int16Array>(a: T, perm: Int32Array): T;
function permute(a: string[], perm: Int32Array): string[];
function permute(a: ArrayLike<unknown> & { length: number }, perm: Int32Array): unknown {
  if (Array.isArray(a)) return Array.from(perm, (i) => a[i]);
  const Ctor = (a as Float64Array).constructor as Float64ArrayConstructor;
  const out = new Ctor(perm.length);
  for (let k = 0; k < perm.length; k++) out[k] = (a as Float64Array)[perm[k]];
  return out;
}

function permuteColumn(c: Column, perm: Int32Array): Column {
  return { ...c, values: permute(c.values as Float64Array, perm), ...(c.valid ? { valid: permute(c.valid, perm) } : {}) };
}

/** Load and check everything; returns the bundle or throws with every problem found. */
/**
 * Options of `loadBundle`. `samples`: true (default) loads the samples table whole; false leaves
 * it for the streaming readers; 'up-to-page-limit' loads it only when the catalogue has at most
 * `site.objectPageLimit` objects (above it no page offers per-object draws, so nothing needs
 * the table in memory and every product that reads it streams it instead).
 */
export interface LoadOptions {
  samples?: boolean | 'up-to-page-limit';
}

export async function loadBundle(dir: string, opts: LoadOptions = {}): Promise<Bundle> {
  const sink = new ProblemSink();
  const { text, problem } = await readConfigText(dir);
  if (text === undefined) throw new PosterityError(problem!);
  const parts = parseConfigParts(text);
  for (const p of parts.problems) sink.add(p);
  if (!parts.tables) throw new PosterityError(sink.finish());
  const t = parts.tables;
  const parameters = parts.parameters ?? [];
  const shape = { parameters };

  // objects
  const objRef = t.objects;
  const paramNames = parameters.map((p) => p.name);
  const objSpecs: ColumnSpec[] = [...TABLE_COLUMNS.objects];
  for (const p of paramNames) {
    objSpecs.push({ name: `${p}_true`, type: 'number', required: false, description: `true ${p} (mock)` });
    for (const q of ['p16', 'p50', 'p84']) objSpecs.push({ name: `${p}_${q}`, type: 'number', required: false, description: `${p} ${q}` });
  }
  checkColumnMap('objects', objRef, objSpecs, sink);
  const objLoaded = await loadColumns(dir, 'objects', objRef, () => true, false, sink);
  const untypedObjects = formatOf(objRef.path) === 'csv';
  let objects: ObjectsData | null = null;
  if (objLoaded) objects = objectsFrom(objLoaded, objSpecs, objRef, paramNames, untypedObjects, sink);
  const index = objects?.index ?? null;
  const n = objects?.n ?? 0;
  const idAt = (k: number) => objects!.id[k];
  const objRow = (k: number) => (objects!.fileRow ? objects!.fileRow[k] : k) + 1;

  // samples
  let samples: SamplesData | null = null;
  const wantSamples = opts.samples === 'up-to-page-limit' ? n <= (parts.config?.site.objectPageLimit ?? Infinity) : opts.samples !== false;
  if (t.samples && wantSamples) {
    const ref = t.samples;
    const specs = specsFor('samples', shape);
    checkColumnMap('samples', ref, specs, sink);
    const wanted = new Set(specs.map((s) => s.name));
    const loaded = await loadColumns(dir, 'samples', ref, (c) => wanted.has(c), true, sink);
    if (loaded) {
      const sc = typed(loaded, specs, 'samples', ref, sink);
      const sid = (sc.get('id') as string[]) ?? [];
      const grouping = groupByObject(sid, index, n, ref.path, theirName(ref, 'id'), sink);
      const weight = (sc.get('weight') as Float64Array | undefined) ?? null;
      const logWeight = (sc.get('log_weight') as Float64Array | undefined) ?? null;
      if (!weight && !logWeight)
        sink.add({ severity: 'error', file: ref.path, column: theirName(ref, 'weight'), message: 'the samples table needs a weight or a log_weight column', expected: `a column "${theirName(ref, 'weight')}" or "${theirName(ref, 'log_weight')}"`, got: `columns ${loaded.headers.join(', ')}` });
      if (weight && logWeight)
        sink.add({ severity: 'warning', file: ref.path, column: theirName(ref, 'log_weight'), message: 'both weight and log_weight are given; log_weight is not used', expected: 'one of the two', got: 'both' });
      if (weight)
        rangeCheck(weight, {
          check: (x) => (Number.isNaN(x) ? 'weight is missing or NaN' : !Number.isFinite(x) ? 'weight is infinite' : x < 0 ? 'weight is negative' : null),
          expected: 'a finite weight >= 0',
        }, ref.path, theirName(ref, 'weight'), sink);
      else if (logWeight)
        rangeCheck(logWeight, {
          check: (x) => (Number.isNaN(x) ? 'log_weight is missing or NaN' : x === Infinity ? 'log_weight is +infinity' : null),
          expected: 'a finite number, or -inf for a zero weight',
        }, ref.path, theirName(ref, 'log_weight'), sink);
      const params = parameters.map((p) => (sc.get(sampleColumnOf(p)) as Float64Array | undefined) ?? new Float64Array(loaded.numRows));
      parameters.forEach((p, j) => {
        if (sc.has(sampleColumnOf(p))) rangeCheck(params[j], { check: finiteMsg(`value of ${p.name}`), expected: 'a finite number' }, ref.path, theirName(ref, sampleColumnOf(p)), sink);
      });
      const logPrior = (sc.get('log_prior') as Float64Array | undefined) ?? null;
      if (logPrior)
        rangeCheck(logPrior, { check: (x) => (Number.isNaN(x) ? 'log_prior is missing or NaN' : x === Infinity ? 'log_prior is +infinity' : null), expected: 'a finite log density (or -inf)' }, ref.path, theirName(ref, 'log_prior'), sink);
      samples = {
        ...grouping,
        params,
        weight,
        logWeight: weight ? null : logWeight,
        logLike: (sc.get('log_like') as Float64Array | undefined) ?? null,
        logPrior,
        chain: (sc.get('chain') as Int32Array | undefined) ?? null,
        nRows: loaded.numRows,
      };
      // objects without draws; all-zero weights
      const w = weight ?? (logWeight ? null : undefined);
      for (let k = 0; k < n && objects; k++) {
        const a = grouping.offsets[k], b = grouping.offsets[k + 1];
        if (a === b) {
          if (index!.get(idAt(k)) !== k) continue; // a duplicate id, reported already
          if (!parameters.every((p) => objects!.summaries[p.name]))
            sink.add({
              severity: 'error',
              file: objRef.path,
              row: objRow(k),
              column: theirName(objRef, 'id'),
              object: idAt(k),
              message: 'object has no posterior draws',
              expected: `rows with this id in ${ref.path} (or _p16/_p50/_p84 summary columns for every parameter)`,
              got: 'no rows',
            });
          continue;
        }
        if (w === undefined || sink.isFailed(ref.path, theirName(ref, weight ? 'weight' : 'log_weight'))) continue;
        let any = false;
        for (let r = a; r < b && !any; r++) {
          const row = grouping.order[r];
          if (w ? w[row] > 0 : logWeight![row] > -Infinity && !Number.isNaN(logWeight![row])) any = true;
        }
        if (!any)
          sink.add({
            severity: 'error',
            file: ref.path,
            row: grouping.order[a] + 1,
            object: idAt(k),
            column: theirName(ref, weight ? 'weight' : 'log_weight'),
            message: 'every draw of this object has zero weight',
            expected: 'at least one draw with a weight > 0',
            got: `${b - a} draws of weight ${weight ? '0' : '0 (log_weight -inf)'}`,
          });
      }
    }
  } else if (!t.samples && objects) {
    for (const p of parameters)
      if (!objects.summaries[p.name])
        sink.add({
          severity: 'error',
          file: objRef.path,
          column: `${p.name}_p50`,
          message: 'without a samples table the objects table needs _p16, _p50 and _p84 columns for every parameter',
          expected: `columns ${p.name}_p16, ${p.name}_p50, ${p.name}_p84`,
          got: `columns ${objLoaded!.headers.join(', ')}`,
        });
  }

  // photometry
  let photometry: PhotometryData | null = null;
  if (t.photometry) {
    const ref = t.photometry;
    const specs = specsFor('photometry', shape);
    checkColumnMap('photometry', ref, specs, sink);
    const wanted = new Set(specs.map((s) => s.name));
    const loaded = await loadColumns(dir, 'photometry', ref, (c) => wanted.has(c), true, sink);
    if (loaded) {
      const pc = typed(loaded, specs, 'photometry', ref, sink);
      const grouping = groupByObject((pc.get('id') as string[]) ?? [], index, n, ref.path, theirName(ref, 'id'), sink);
      const fluxErr = (pc.get('flux_err') as Float64Array) ?? new Float64Array(loaded.numRows);
      rangeCheck(fluxErr, {
        check: (x) => (Number.isNaN(x) ? 'flux error is missing or NaN' : !Number.isFinite(x) ? 'flux error is infinite' : x < 0 ? 'flux error is negative' : null),
        expected: 'a finite flux error >= 0',
      }, ref.path, theirName(ref, 'flux_err'), sink);
      const flux = (pc.get('flux') as Float64Array) ?? new Float64Array(loaded.numRows);
      rangeCheck(flux, {
        check: (x) => (Number.isNaN(x) ? 'flux is missing (negative forced fluxes are fine; leave out rows with no measurement)' : null),
        expected: 'a measured flux',
        severity: 'warning',
      }, ref.path, theirName(ref, 'flux'), sink);
      rangeCheck(flux, { check: (x) => (x === Infinity || x === -Infinity ? 'flux is infinite' : null), expected: 'a finite flux' }, ref.path, theirName(ref, 'flux'), sink);
      const limitNsigma = (pc.get('limit_nsigma') as Float64Array | undefined) ?? null;
      const upperLimit = (pc.get('upper_limit') as Uint8Array | undefined) ?? null;
      if (limitNsigma && upperLimit)
        rangeCheck(limitNsigma, { check: (x, i) => (upperLimit[i] && !(x > 0 && Number.isFinite(x)) ? 'an upper limit needs a positive limit_nsigma' : null), expected: 'a finite number > 0 where upper_limit is true', }, ref.path, theirName(ref, 'limit_nsigma'), sink);
      photometry = {
        ...grouping,
        band: (pc.get('band') as string[]) ?? [],
        flux,
        fluxErr,
        modelFlux: (pc.get('model_flux') as Float64Array | undefined) ?? null,
        upperLimit,
        limitNsigma,
      };
    }
  }

  // bands
  let bands: BandsData | null = null;
  if (t.bands) {
    const ref = t.bands;
    const specs = specsFor('bands', shape);
    checkColumnMap('bands', ref, specs, sink);
    const wanted = new Set(specs.map((s) => s.name));
    const loaded = await loadColumns(dir, 'bands', ref, (c) => wanted.has(c), true, sink);
    if (loaded) {
      const bc = typed(loaded, specs, 'bands', ref, sink);
      const wl = (bc.get('wavelength') as Float64Array) ?? new Float64Array(loaded.numRows).fill(1);
      rangeCheck(wl, positiveWavelength, ref.path, theirName(ref, 'wavelength'), sink);
      const width = (bc.get('width') as Float64Array | undefined) ?? null;
      if (width) rangeCheck(width, { check: (x) => (x < 0 || x === Infinity ? 'band width is negative or infinite' : null), expected: 'a finite width >= 0 (or empty)' }, ref.path, theirName(ref, 'width'), sink);
      bands = {
        band: (bc.get('band') as string[]) ?? [],
        wavelength: wl,
        label: (bc.get('label') as string[] | undefined) ?? null,
        width,
      };
      const firstRow = new Map<string, number>();
      bands.band.forEach((b, i) => {
        const f = firstRow.get(b);
        if (f !== undefined) sink.add({ severity: 'error', file: ref.path, row: i + 1, column: theirName(ref, 'band'), message: 'duplicate band name', expected: `a name not used before (first at row ${f + 1})`, got: JSON.stringify(b) });
        else firstRow.set(b, i);
      });
      if (photometry && bc.has('band')) {
        const names = bands.band;
        photometry.band.forEach((b, i) => {
          if (!firstRow.has(b))
            sink.add({ severity: 'error', file: t.photometry!.path, row: i + 1, column: theirName(t.photometry!, 'band'), message: 'band not in the bands table', expected: `one of ${names.slice(0, 20).map((x) => JSON.stringify(x)).join(', ')}${names.length > 20 ? ', ...' : ''}`, got: JSON.stringify(b) });
        });
      }
    }
  } else if (photometry) {
    sink.add({ severity: 'error', file: CONFIG_FILE, field: 'tables.bands', message: 'a photometry table needs a bands table (for the pivot wavelengths)', expected: 'tables.bands', got: 'no bands table' });
  }

  // spectra
  let spectra: SpectraData | null = null;
  if (t.spectra) {
    const ref = t.spectra;
    const specs = specsFor('spectra', shape);
    checkColumnMap('spectra', ref, specs, sink);
    const wanted = new Set(specs.map((s) => s.name));
    const loaded = await loadColumns(dir, 'spectra', ref, (c) => wanted.has(c), true, sink);
    if (loaded) {
      const c = typed(loaded, specs, 'spectra', ref, sink);
      const wl = (c.get('wavelength') as Float64Array) ?? new Float64Array(loaded.numRows).fill(1);
      rangeCheck(wl, positiveWavelength, ref.path, theirName(ref, 'wavelength'), sink);
      const mask = (c.get('mask') as Uint8Array | undefined) ?? null;
      const err = (c.get('flux_err') as Float64Array) ?? new Float64Array(loaded.numRows);
      // a masked pixel is not used, so its error may be anything
      rangeCheck(err, {
        check: (x, i) => (mask && mask[i] ? null : Number.isNaN(x) ? 'flux error is missing or NaN (mask the pixel instead)' : !Number.isFinite(x) ? 'flux error is infinite (mask the pixel instead)' : x < 0 ? 'flux error is negative' : null),
        expected: 'a finite flux error >= 0 (or a masked pixel)',
      }, ref.path, theirName(ref, 'flux_err'), sink);
      spectra = {
        ...groupByObject((c.get('id') as string[]) ?? [], index, n, ref.path, theirName(ref, 'id'), sink),
        wavelength: wl,
        flux: (c.get('flux') as Float64Array) ?? new Float64Array(loaded.numRows),
        fluxErr: err,
        mask,
        modelFlux: (c.get('model_flux') as Float64Array | undefined) ?? null,
        instrument: (c.get('instrument') as string[] | undefined) ?? null,
      };
    }
  }

  // models
  let models: ModelsData | null = null;
  if (t.models) {
    const ref = t.models;
    const specs = specsFor('models', shape);
    checkColumnMap('models', ref, specs, sink);
    const wanted = new Set(specs.map((s) => s.name));
    const loaded = await loadColumns(dir, 'models', ref, (c) => wanted.has(c), true, sink);
    if (loaded) {
      const c = typed(loaded, specs, 'models', ref, sink);
      const wl = (c.get('wavelength') as Float64Array) ?? new Float64Array(loaded.numRows).fill(1);
      rangeCheck(wl, positiveWavelength, ref.path, theirName(ref, 'wavelength'), sink);
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
  const config = parts.config;
  if (!config || !objects || problems.some((p) => p.severity === 'error')) throw new PosterityError(problems);

  const files: InputFile[] = [];
  const cfgPath = join(dir, CONFIG_FILE);
  files.push({ table: 'release.json', path: CONFIG_FILE, bytes: statSync(cfgPath).size, sha256: await sha256(cfgPath) });
  for (const [name, ref] of Object.entries(t) as [TableName, TableRefConfig | undefined][]) {
    if (!ref) continue;
    const p = join(dir, ref.path);
    files.push({ table: name, path: ref.path, bytes: statSync(p).size, sha256: await sha256(p) });
  }

  return { dir, config, configText: text, objects, samples, photometry, bands, spectra, models, files, warnings: problems };
}

/** Typed, checked and id-sorted objects. */
function objectsFrom(loaded: Loaded, objSpecs: ColumnSpec[], objRef: TableRefConfig, paramNames: string[], untyped: boolean, sink: ProblemSink): ObjectsData {
  const oc = typed(loaded, objSpecs, 'objects', objRef, sink);
  const n = loaded.numRows;
  if (n === 0) sink.add({ severity: 'error', file: objRef.path, message: 'the objects table has no rows', expected: 'one row per galaxy', got: '0 rows' });
  const idRaw = (oc.get('id') as string[] | undefined) ?? Array.from({ length: n }, (_, i) => `#${i + 1}`);
  const idCol = theirName(objRef, 'id');
  const first = new Map<string, number>();
  idRaw.forEach((s, i) => {
    const f = first.get(s);
    if (f !== undefined) {
      if (s !== '') sink.add({ severity: 'error', file: objRef.path, row: i + 1, column: idCol, message: 'duplicate object id', expected: `an id not used before (first at row ${f + 1})`, got: JSON.stringify(s) });
    } else first.set(s, i);
  });
  const f64 = (k: string) => (oc.get(k) as Float64Array | undefined) ?? null;
  const raRaw = f64('ra') ?? new Float64Array(n);
  const decRaw = f64('dec') ?? new Float64Array(n);
  const zRaw = f64('redshift') ?? new Float64Array(n);
  rangeCheck(raRaw, { check: (x) => (Number.isNaN(x) ? 'right ascension is missing or NaN' : !(x >= 0 && x < 360) ? 'right ascension out of range' : null), expected: 'degrees in [0, 360)' }, objRef.path, theirName(objRef, 'ra'), sink);
  rangeCheck(decRaw, { check: (x) => (Number.isNaN(x) ? 'declination is missing or NaN' : !(x >= -90 && x <= 90) ? 'declination out of range' : null), expected: 'degrees in [-90, 90]' }, objRef.path, theirName(objRef, 'dec'), sink);
  rangeCheck(zRaw, { check: (x) => (Number.isNaN(x) ? 'redshift is missing or NaN' : !Number.isFinite(x) ? 'redshift is infinite' : x < 0 ? 'redshift is negative' : null), expected: 'a finite redshift >= 0' }, objRef.path, theirName(objRef, 'redshift'), sink);
  const chi2Raw = f64('chi2');
  if (chi2Raw) rangeCheck(chi2Raw, { check: (x) => (x < 0 || x === Infinity ? 'chi-square is negative or infinite' : null), expected: 'a finite chi-square >= 0 (or empty)' }, objRef.path, theirName(objRef, 'chi2'), sink);

  // sort by id, by UTF-16 code units; ties (duplicate ids, already errors) keep file order
  const perm = Int32Array.from({ length: n }, (_, i) => i);
  perm.sort((a, b) => (idRaw[a] < idRaw[b] ? -1 : idRaw[a] > idRaw[b] ? 1 : a - b));
  const id = permute(idRaw, perm);
  const index = new Map<string, number>();
  id.forEach((s, k) => {
    if (!index.has(s)) index.set(s, k);
  });
  const p64 = (v: Float64Array | null) => (v ? permute(v, perm) : null);
  const truth: ObjectsData['truth'] = {};
  const summaries: ObjectsData['summaries'] = {};
  for (const p of paramNames) {
    const tv = p64(f64(`${p}_true`));
    if (tv) truth[p] = tv;
    const p16 = p64(f64(`${p}_p16`)), p50 = p64(f64(`${p}_p50`)), p84 = p64(f64(`${p}_p84`));
    if (p16 && p50 && p84) summaries[p] = { p16, p50, p84 };
  }
  const known = new Set(objSpecs.map((s) => s.name));
  const extra: Column[] = [];
  for (const [ours, parts] of loaded.cols) {
    if (known.has(ours)) continue;
    const c = normalisePassThrough({ ...concatColumn(parts), name: ours }, untyped);
    extra.push(permuteColumn(passThroughUnit(c, objRef.path, theirName(objRef, ours), sink), perm));
  }
  const nBands = oc.get('n_bands') as Int32Array | undefined;
  return {
    n,
    id,
    ra: permute(raRaw, perm),
    dec: permute(decRaw, perm),
    redshift: permute(zRaw, perm),
    chi2: p64(chi2Raw),
    nBands: nBands ? permute(nBands, perm) : null,
    mag: p64(f64('mag')),
    truth,
    summaries,
    extra,
    index,
    fileRow: perm,
  };
}
