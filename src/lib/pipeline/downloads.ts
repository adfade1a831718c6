/**
 * The published downloads: the catalogue in CSV, FITS, Arrow and VOTable, the relation
 * fits, the release metadata with provenance, every draw, the photometry and spectra,
 * per-object draws and photometry, and SHA256SUMS over all of it.
 */
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { mkdir, readdir, stat, writeFile } from 'node:fs/promises';
import { join, relative } from 'node:path';
import { gzipSync } from 'node:zlib';
import type { Bundle } from '../bundle/load.ts';
import type { Column, Table } from '../io/table.ts';
import { writeCsv, cellText } from '../io/csv.ts';
import { writeArrow } from '../io/arrow.ts';
import type { DownloadEntry } from './content.ts';
import { slugOf } from '../core/slug.ts';
import { fitsBytes } from '../io/fits/write.ts';
import { withFormatUnits } from '../io/units.ts';

export const FORMAT_NOTES: Record<string, { format: string; notes: string }> = {
  'catalogue.csv': { format: 'CSV (RFC 4180)', notes: 'one header row; empty fields are missing values; units and descriptions are on the Columns page' },
  'catalogue.fits': { format: 'FITS binary table (FITS Standard 4.0)', notes: 'first extension CATALOGUE; TUNITn units (none for log10 quantities, whose unit is in TCOMMn), TCOMMn descriptions, TUCDn UCDs; NaN and TNULL for missing values' },
  'catalogue.arrow': { format: 'Apache Arrow IPC file', notes: 'units (dex(solMass) is log10 of a mass in solar masses), descriptions and UCDs in field metadata (unit, description, ucd)' },
  'catalogue.vot': { format: 'IVOA VOTable 1.4', notes: "COOSYS ICRS; FIELD unit (VOUnits; 'dex' for log10 quantities, the physical unit in the DESCRIPTION), ucd (UCD1+), DESCRIPTION; BINARY2 serialisation for large tables" },
  'relations.json': { format: 'JSON', notes: 'every relation fit per redshift bin with its method, inputs and convergence diagnostics' },
  'massfunction.json': { format: 'JSON', notes: 'stellar mass function per redshift bin (1/Vmax) with Poisson and bootstrap uncertainties and Schechter fits' },
  'calibration.json': { format: 'JSON', notes: 'mock calibration: coverage, PIT, bias, NMAD and outlier fraction per parameter' },
  'release.json': { format: 'JSON', notes: 'release metadata and provenance: tool version, SHA-256 of every input file, the configuration as used' },
  'samples.parquet': { format: 'Apache Parquet', notes: 'every posterior draw: id, weight (normalised per object), parameters (single precision), log_prior where supplied; uncompressed' },
  'samples.csv.gz': { format: 'CSV, gzip', notes: 'every posterior draw (the Parquet file holds the same)' },
  'photometry.csv': { format: 'CSV', notes: 'photometry as supplied: fluxes in the unit of units.flux in release.json' },
  'spectra.csv.gz': { format: 'CSV, gzip', notes: 'observed spectra as supplied (units.flux and units.wavelength in release.json), with masks and model fluxes' },
  SHA256SUMS: { format: 'text', notes: 'SHA-256 of every file under downloads/, as written by sha256sum' },
  'changes.json': { format: 'JSON', notes: 'what changed since the earlier release: objects added, removed and renamed, shifts of the medians, flags raised and cleared, relation fits per bin' },
  'catalogue-mrt.txt': { format: 'machine-readable table (byte-by-byte described ASCII)', notes: 'the catalogue as one file for a journal: title, authors, byte-by-byte description (format, units, labels, explanations), notes and fixed-width rows; values rounded to the precision their errors support' },
  'cds/ReadMe': { format: 'byte-by-byte ReadMe (data-centre standard)', notes: 'describes cds/catalogue.dat for an archive deposit: file summary, byte-by-byte description, notes' },
  'cds/catalogue.dat': { format: 'fixed-width ASCII', notes: 'the catalogue rows that cds/ReadMe describes' },
  'relations.tex': { format: 'LaTeX', notes: 'the relation fits per redshift bin and method (a, b, s with asymmetric 68% errors), one table per relation, base LaTeX only' },
  'CITATION.cff': { format: 'Citation File Format 1.2.0 (YAML)', notes: 'how to cite this release: authors, title, version, date, licence, identifiers' },
  'datacite.json': { format: 'JSON (DataCite Metadata Schema 4)', notes: 'metadata for a DOI deposit: creators, titles, publisher, year, resource type, version, rights, related earlier version' },
};

export async function sha256File(path: string): Promise<string> {
  // streamed: a download can be larger than one buffer may be (readFile refuses files over 2 GiB)
  const h = createHash('sha256');
  for await (const chunk of createReadStream(path, { highWaterMark: 1 << 20 })) h.update(chunk as Buffer);
  return h.digest('hex');
}

/** Per-object files live in downloads/objects/<slug>/ */
export function objectDownloadPaths(bundle: Bundle, i: number): { draws: string | null; photometry: string | null } {
  const slug = slugOf(bundle.objects.id[i]);
  const hasDraws = !!bundle.samples && bundle.samples.offsets[i + 1] > bundle.samples.offsets[i];
  const hasPhot = !!bundle.photometry && bundle.photometry.offsets[i + 1] > bundle.photometry.offsets[i];
  return {
    draws: hasDraws ? `downloads/objects/${slug}/draws.fits` : null,
    photometry: hasPhot ? `downloads/objects/${slug}/photometry.csv` : null,
  };
}

const g = (v: number) => (Number.isFinite(v) ? String(Number(v.toPrecision(7))) : '');

/**
 * Write one object's draws and photometry: the draws as a FITS binary table (columnar, the
 * format every astronomy reader takes) in single precision, whose 7 significant digits are
 * finer than any posterior draw's meaning (the published summaries are computed from the full
 * precision draws); the few photometry rows as CSV.
 */
export async function writeObjectDownloads(outDir: string, bundle: Bundle, i: number): Promise<void> {
  const paths = objectDownloadPaths(bundle, i);
  const { samples, photometry, config } = bundle;
  if (!paths.draws && !paths.photometry) return;
  const dir = join(outDir, 'objects', slugOf(bundle.objects.id[i]));
  await mkdir(dir, { recursive: true });
  if (paths.draws && samples) {
    const a = samples.offsets[i], b = samples.offsets[i + 1];
    const n = b - a;
    const src = samples.weight ?? samples.logWeight!;
    // normalised weights (log weights shifted by their largest before exponentiating)
    let max = -Infinity;
    if (!samples.weight) for (let r = a; r < b; r++) max = Math.max(max, src[samples.order[r]]);
    const raw = new Float64Array(n);
    let sum = 0;
    for (let r = a; r < b; r++) sum += raw[r - a] = samples.weight ? src[samples.order[r]] : Math.exp(src[samples.order[r]] - max);
    const weight = new Float32Array(n);
    for (let k = 0; k < n; k++) weight[k] = raw[k] / sum;
    const column = (values: ArrayLike<number>) => {
      const out = new Float32Array(n);
      for (let r = a; r < b; r++) out[r - a] = values[samples.order[r]];
      return out;
    };
    const columns: Column[] = [
      { name: 'weight', kind: 'float32', values: weight, ucd: 'stat.weight', description: 'importance weight, normalised to sum to 1 for this object' },
      ...config.parameters.map((p, j): Column => ({ name: p.name, kind: 'float32', values: column(samples.params[j]), unit: p.unit || undefined, ucd: p.ucd, description: p.description })),
    ];
    if (samples.logPrior) columns.push({ name: 'log_prior', kind: 'float32', values: column(samples.logPrior), description: 'natural log of the interim prior density of the draw' });
    const table = withFormatUnits({ numRows: n, columns }, 'fits', paths.draws);
    await writeFile(join(dir, 'draws.fits'), fitsBytes(table, { extname: 'DRAWS', date: config.releaseDate, keywords: { OBJECT: bundle.objects.id[i] }, comments: [`Posterior draws of ${bundle.objects.id[i]}, ${config.title} version ${config.version}`] }, paths.draws));
  }
  if (paths.photometry && photometry) {
    let text = 'band,flux,flux_err,model_flux,upper_limit,limit_nsigma\n';
    for (let r = photometry.offsets[i]; r < photometry.offsets[i + 1]; r++) {
      const row = photometry.order[r];
      const band = /[",\n]/.test(photometry.band[row]) ? `"${photometry.band[row].replace(/"/g, '""')}"` : photometry.band[row];
      text += [band, g(photometry.flux[row]), g(photometry.fluxErr[row]), photometry.modelFlux ? g(photometry.modelFlux[row]) : '', photometry.upperLimit ? (photometry.upperLimit[row] ? 'true' : 'false') : '', photometry.limitNsigma ? g(photometry.limitNsigma[row]) : ''].join(',') + '\n';
    }
    await writeFile(join(dir, 'photometry.csv'), text);
  }
}

/**
 * Parameter values of the draws downloads are single precision: 7 significant digits, finer
 * than any posterior draw's meaning (the published summaries come from the full-precision
 * input); weights and interim prior densities stay double.
 */
export const SAMPLE_PARAM_KIND = 'float32' as const;

/** samples.parquet is large and its floating-point draws hardly compress: written plain, without page statistics (writing is then four to eight times faster). */
export const SAMPLES_PARQUET = { compress: false, statistics: false } as const;

/** Every draw, in catalogue order, as a table (weights normalised per object). */
export function samplesTable(bundle: Bundle): Table | null {
  const { samples, objects, config } = bundle;
  if (!samples) return null;
  const n = samples.order.length;
  const id = new Array<string>(n);
  const weight = new Float64Array(n);
  const params = config.parameters.map(() => new Float32Array(n));
  const logPrior = samples.logPrior ? new Float64Array(n) : null;
  const src = samples.weight ?? samples.logWeight!;
  for (let i = 0; i < objects.n; i++) {
    const a = samples.offsets[i], b = samples.offsets[i + 1];
    let max = -Infinity;
    if (!samples.weight) for (let r = a; r < b; r++) max = Math.max(max, src[samples.order[r]]);
    let sum = 0;
    for (let r = a; r < b; r++) sum += samples.weight ? src[samples.order[r]] : Math.exp(src[samples.order[r]] - max);
    for (let r = a; r < b; r++) {
      const row = samples.order[r];
      id[r] = objects.id[i];
      weight[r] = (samples.weight ? src[row] : Math.exp(src[row] - max)) / sum;
      params.forEach((p, j) => (p[r] = samples.params[j][row]));
      if (logPrior) logPrior[r] = samples.logPrior![row];
    }
  }
  const columns: Column[] = [
    { name: 'id', kind: 'string', values: id, ucd: 'meta.id', description: 'object identifier' },
    { name: 'weight', kind: 'float64', values: weight, ucd: 'stat.weight', description: 'importance weight, normalised to sum to 1 per object' },
    ...config.parameters.map((p, j): Column => ({ name: p.name, kind: SAMPLE_PARAM_KIND, values: params[j], unit: p.unit || undefined, ucd: p.ucd, description: p.description })),
  ];
  if (logPrior) columns.push({ name: 'log_prior', kind: 'float64', values: logPrior, description: 'natural log of the interim prior density of the draw' });
  return { columns, numRows: n };
}

export async function writeJson(path: string, data: unknown): Promise<void> {
  await writeFile(path, JSON.stringify(data, null, 1) + '\n');
}

/** Write SHA256SUMS over every file under `dir` (sorted, sha256sum format) and list the top-level files. */
export async function writeChecksums(dir: string): Promise<DownloadEntry[]> {
  const files: string[] = [];
  const walk = async (d: string) => {
    const entries = (await readdir(d, { withFileTypes: true })).sort((a, b) => (a.name < b.name ? -1 : a.name > b.name ? 1 : 0));
    for (const e of entries) {
      const p = join(d, e.name);
      if (e.isDirectory()) await walk(p);
      else if (e.name !== 'SHA256SUMS') files.push(p);
    }
  };
  await walk(dir);
  files.sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
  const lines: string[] = [];
  const entries: DownloadEntry[] = [];
  for (const f of files) {
    const rel = relative(dir, f).split('\\').join('/');
    const sum = await sha256File(f);
    lines.push(`${sum}  ${rel}`);
    if (!rel.includes('/') || FORMAT_NOTES[rel]) {
      const info = FORMAT_NOTES[rel] ?? { format: rel.split('.').slice(1).join('.'), notes: '' };
      entries.push({ file: rel, bytes: (await stat(f)).size, sha256: sum, ...info });
    }
  }
  await writeFile(join(dir, 'SHA256SUMS'), lines.join('\n') + '\n');
  return entries;
}

export { writeCsv, writeArrow, cellText, gzipSync };
