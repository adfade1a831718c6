/**
 * The input format does not change the release: a demo bundle (CSV plus Arrow) and the same
 * bundle converted to FITS (objects, photometry, bands, spectra, models) plus Parquet
 * (samples) by test/helpers/convert-bundle.ts give the same derived content and downloads,
 * byte for byte. The only differences allowed are the records of the input itself:
 * the provenance of downloads/release.json (input paths, sizes, checksums) and the table
 * paths in its copy of the configuration, and what follows from that file's bytes (its
 * line in SHA256SUMS and its size and checksum in content/site.json's download list).
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { runPipeline } from '../../src/lib/pipeline/run.ts';
import { readTable } from '../../src/lib/io/read.ts';
import { convertBundle } from '../helpers/convert-bundle.ts';

let tmp: string;

function files(dir: string): string[] {
  const out: string[] = [];
  const walk = (d: string) => {
    for (const e of readdirSync(d, { withFileTypes: true })) {
      const p = join(d, e.name);
      if (e.isDirectory()) walk(p);
      else out.push(relative(dir, p));
    }
  };
  walk(dir);
  return out.sort();
}

/** downloads/release.json without the records of the input files. */
function releaseWithoutInputs(text: string): unknown {
  const r = JSON.parse(text);
  delete r.provenance;
  for (const t of Object.values(r.configuration.tables as Record<string, { path: string }>)) delete (t as { path?: string }).path;
  return r;
}

/** site.json with the size and checksum of downloads/release.json left out. */
function siteWithoutReleaseChecksum(text: string): unknown {
  const s = JSON.parse(text);
  for (const d of s.downloads as { file: string; bytes?: number; sha256?: string }[])
    if (d.file === 'release.json' || d.file === 'SHA256SUMS') {
      delete d.bytes;
      delete d.sha256;
    }
  return s;
}

const csvArrow = () => join(tmp, 'csv-arrow');
const fitsParquet = () => join(tmp, 'fits-parquet');

beforeAll(async () => {
  tmp = mkdtempSync(join(tmpdir(), 'posterity-formats-'));
  await generateDemoBundle(join(tmp, 'bundle-a'), { nObjects: 60 });
  await convertBundle(join(tmp, 'bundle-a'), join(tmp, 'bundle-b'));
  for (const [bundle, out] of [[join(tmp, 'bundle-a'), csvArrow()], [join(tmp, 'bundle-b'), fitsParquet()]])
    await runPipeline(bundle, { contentDir: join(out, 'content'), downloadsDir: join(out, 'downloads') });
}, 300_000);
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

describe('A demo bundle saved as FITS plus Parquet builds the same content as the CSV plus Arrow one', () => {
  it('the converted bundle really is FITS and Parquet, with typed columns', async () => {
    const cfg = JSON.parse(readFileSync(join(tmp, 'bundle-b', 'release.json'), 'utf8'));
    expect(Object.fromEntries(Object.entries(cfg.tables).map(([k, v]) => [k, (v as { path: string }).path]))).toEqual({
      objects: 'objects.fits',
      samples: 'samples.parquet',
      photometry: 'photometry.fits',
      bands: 'bands.fits',
      spectra: 'spectra.fits',
      models: 'models.fits',
    });
    const objects = await readTable(join(tmp, 'bundle-b', 'objects.fits'));
    const kind = (n: string) => objects.columns.find((c) => c.name === n)!.kind;
    expect([kind('id'), kind('RA_DEG'), kind('n_bands'), kind('has_spectrum'), kind('population_true')]).toEqual(['string', 'float64', 'int32', 'bool', 'string']);
    const samples = await readTable(join(tmp, 'bundle-b', 'samples.parquet'));
    expect(samples.columns.find((c) => c.name === 'log_mstar')!.kind).toBe('float32');
  });

  it('every content file and every download is the same, byte for byte', () => {
    const a = files(csvArrow());
    expect(files(fitsParquet())).toEqual(a);
    expect(a.length).toBeGreaterThan(100);
    const differ: string[] = [];
    for (const f of a) {
      if (f === 'downloads/release.json' || f === 'downloads/SHA256SUMS' || f === 'content/site.json') continue;
      if (!readFileSync(join(csvArrow(), f)).equals(readFileSync(join(fitsParquet(), f)))) differ.push(f);
    }
    expect(differ).toEqual([]);
  });

  it('downloads/release.json differs only in the records of the input files', () => {
    const [ra, rb] = [csvArrow(), fitsParquet()].map((d) => readFileSync(join(d, 'downloads', 'release.json'), 'utf8'));
    expect(releaseWithoutInputs(rb)).toEqual(releaseWithoutInputs(ra));
    const inputs = (t: string) => JSON.parse(t).provenance.inputs.map((i: { table: string; path: string }) => `${i.table}:${i.path}`);
    expect(inputs(rb)).toEqual(['release.json:release.json', 'objects:objects.fits', 'samples:samples.parquet', 'photometry:photometry.fits', 'bands:bands.fits', 'spectra:spectra.fits', 'models:models.fits']);
    expect(inputs(ra)).toEqual(['release.json:release.json', 'objects:objects.csv', 'samples:samples.arrow', 'photometry:photometry.csv', 'bands:bands.csv', 'spectra:spectra.csv', 'models:models.arrow']);
  });

  it('SHA256SUMS and site.json differ only where release.json is listed', () => {
    const sums = (d: string) => readFileSync(join(d, 'downloads', 'SHA256SUMS'), 'utf8').split('\n').filter((l) => !/ {2}release\.json$/.test(l));
    expect(sums(fitsParquet())).toEqual(sums(csvArrow()));
    const site = (d: string) => siteWithoutReleaseChecksum(readFileSync(join(d, 'content', 'site.json'), 'utf8'));
    expect(site(fitsParquet())).toEqual(site(csvArrow()));
  });
});
