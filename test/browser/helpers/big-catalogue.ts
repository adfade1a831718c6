/**
 * A large synthetic release for the explorer's browser tests: the small fake content of
 * `test/helpers/mini-content.ts` with its catalogue replaced by `n` rows (deterministic), in
 * viewer mode so no page per object is built. The field straddles RA 0/360 and two planted
 * objects sit on either side of RA 0 for the cone search. Only shard 0 holds object content
 * (copies of the mini objects renamed), enough for the walk from the table to an object page.
 */
import { readFileSync, writeFileSync, mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { writeMiniContent } from '../../helpers/mini-content.ts';
import { writeArrow } from '../../../src/lib/io/arrow.ts';
import { gzipSync } from 'node:zlib';
import { encodeObject, SHARD_FORMAT } from '../../../src/lib/pipeline/object-codec.ts';
import { slugOf } from '../../../src/lib/core/slug.ts';
import type { ObjectContent, ObjectIndexEntry, SiteContent } from '../../../src/lib/pipeline/content.ts';

export interface BigCatalogue {
  n: number;
  id: string[];
  ra: Float64Array;
  dec: Float64Array;
  redshift: Float64Array;
  flags: Int32Array;
  population: string[];
  logMass: Float64Array;
  /** Indices of the planted objects west and east of RA 0. */
  wrap: [number, number];
  shardSize: number;
}

function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export async function writeBigContent(dir: string, n: number): Promise<BigCatalogue> {
  await writeMiniContent(dir);
  const r = rng(20240601);
  const id = Array.from({ length: n }, (_, i) => `SYN-${String(i + 1).padStart(7, '0')}`);
  const ra = new Float64Array(n);
  const dec = new Float64Array(n);
  const redshift = new Float64Array(n);
  const flags = new Int32Array(n);
  const population: string[] = new Array(n);
  const params = ['log_mass', 'log_sfr', 'av', 'log_age'];
  const stats = ['mean', 'std', 'p025', 'p16', 'p50', 'p84', 'p975'];
  const cols: Record<string, Float64Array> = {};
  for (const p of params) for (const s of stats) cols[`${p}_${s}`] = new Float64Array(n);
  const ess = new Float64Array(n);
  const chi2 = new Float64Array(n);
  const pval = new Float64Array(n);
  const nSamples = new Int32Array(n);
  const msOffset = new Float64Array(n);
  const msTension = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    ra[i] = (359.4 + 1.2 * r()) % 360;
    dec[i] = -0.6 + 1.2 * r();
    redshift[i] = 0.1 + 2.9 * r();
    flags[i] = r() < 0.8 ? 0 : 1 << Math.floor(r() * 5);
    population[i] = r() < 0.7 ? 'star-forming' : 'quiescent';
    const centre = [8 + 4 * r(), -2 + 4 * r(), 2 * r(), 8 + 2 * r()];
    params.forEach((p, k) => {
      const sd = 0.05 + 0.3 * r();
      const m = centre[k];
      cols[`${p}_mean`][i] = m + 0.01;
      cols[`${p}_std`][i] = sd;
      cols[`${p}_p025`][i] = m - 1.96 * sd;
      cols[`${p}_p16`][i] = m - sd;
      cols[`${p}_p50`][i] = m;
      cols[`${p}_p84`][i] = m + sd;
      cols[`${p}_p975`][i] = m + 1.96 * sd;
    });
    ess[i] = 20 + 500 * r();
    chi2[i] = 2 + 20 * r();
    pval[i] = r() < 0.01 ? 1e-60 * r() : r();
    nSamples[i] = 512;
    msOffset[i] = -1 + 2 * r();
    msTension[i] = msOffset[i] / 0.3;
  }
  const wrap: [number, number] = [Math.floor(n / 3), Math.floor(n / 3) + 1];
  ra[wrap[0]] = 359.9999;
  dec[wrap[0]] = 0.1;
  ra[wrap[1]] = 0.00008;
  dec[wrap[1]] = 0.1;
  id[wrap[0]] = 'WRAP-WEST';
  id[wrap[1]] = 'WRAP-EAST';
  const logMass = cols.log_mass_p50;
  await writeArrow(join(dir, 'downloads', 'catalogue.arrow'), {
    numRows: n,
    columns: [
      { name: 'id', kind: 'string', values: id },
      { name: 'ra', kind: 'float64', unit: 'deg', values: ra },
      { name: 'dec', kind: 'float64', unit: 'deg', values: dec },
      { name: 'redshift', kind: 'float64', values: redshift },
      { name: 'n_samples', kind: 'int32', values: nSamples },
      { name: 'ess', kind: 'float64', values: ess },
      { name: 'chi2', kind: 'float64', values: chi2 },
      { name: 'chi2_pvalue', kind: 'float64', values: pval },
      { name: 'flags', kind: 'int32', values: flags },
      { name: 'population', kind: 'string', values: population },
      ...params.flatMap((p) => stats.map((s) => ({ name: `${p}_${s}`, kind: 'float64' as const, unit: p === 'av' ? 'mag' : 'dex', values: cols[`${p}_${s}`] }))),
      { name: 'main-sequence_offset', kind: 'float64', values: msOffset },
      { name: 'main-sequence_tension', kind: 'float64', values: msTension },
    ],
  });
  // viewer mode: the index of every object, shard 0 with real (renamed) content
  const shardSize = 50;
  const site = JSON.parse(readFileSync(join(dir, 'site.json'), 'utf8')) as SiteContent;
  site.objectPages = { mode: 'viewer', shardSize, limit: 100 };
  site.counts.objects = n;
  writeFileSync(join(dir, 'site.json'), JSON.stringify(site));
  const index: ObjectIndexEntry[] = id.map((s, i) => ({ id: s, slug: slugOf(s), index: i, ra: ra[i], dec: dec[i], redshift: redshift[i], flags: flags[i], population: population[i] }));
  writeFileSync(join(dir, 'objects', 'index.json'), JSON.stringify(index));
  const tpl = JSON.parse(readFileSync(join(dir, 'objects', 'GAL-0001.json'), 'utf8')) as ObjectContent;
  const shard: ObjectContent[] = [];
  for (let i = 0; i < shardSize && i < n; i++) {
    const o: ObjectContent = { ...tpl, id: id[i], slug: slugOf(id[i]), index: i, ra: ra[i], dec: dec[i], redshift: redshift[i], flags: 0, flagReasons: [] };
    o.prev = i > 0 ? { id: id[i - 1], slug: slugOf(id[i - 1]) } : null;
    o.next = i < n - 1 ? { id: id[i + 1], slug: slugOf(id[i + 1]) } : null;
    o.neighbours = [];
    shard.push(o);
  }
  mkdirSync(join(dir, 'objects', 'shards'), { recursive: true });
  writeFileSync(join(dir, 'objects', 'shards', '000000.json.gz'), gzipSync(JSON.stringify({ v: SHARD_FORMAT, objects: shard.map(encodeObject) })));
  return { n, id, ra, dec, redshift, flags, population, logMass, wrap, shardSize };
}
