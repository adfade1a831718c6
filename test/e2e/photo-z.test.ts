/**
 * A release whose fits sampled the redshift too (a photometric redshift with role "redshift"):
 * redshift-bin membership is assigned per posterior draw, and that reaches relations.json and
 * the relation page. The bundle is the small demo with a z_phot column added to its samples:
 * each draw is the catalogue redshift plus Gaussian noise of 0.08 (1 + z), so galaxies near a bin
 * edge have draws on both sides of it (an invented scatter, for the test only).
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { Float32, makeVector, Table, tableFromIPC, tableToIPC } from 'apache-arrow';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { buildRelease, PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { makeRng } from '../../src/lib/core/random.ts';
import type { RelationContent } from '../../src/lib/pipeline/content.ts';

const ROOT = join(PROJECT_ROOT, 'test-output', 'photo-z');
const BUNDLE = join(ROOT, 'bundle');
const OUT = join(ROOT, 'dist');

beforeAll(async () => {
  rmSync(ROOT, { recursive: true, force: true });
  mkdirSync(ROOT, { recursive: true });
  await generateDemoBundle(BUNDLE, { nObjects: 500, params: 4, seed: 12 });
  // catalogue redshift per id
  const lines = readFileSync(join(BUNDLE, 'objects.csv'), 'utf8').trim().split('\n');
  const head = lines[0].split(',');
  const iId = head.indexOf('id'), iZ = head.indexOf('Z_FIT');
  const zOf = new Map(lines.slice(1).map((l) => { const c = l.split(','); return [c[iId], Number(c[iZ])] as const; }));
  // z_phot draws next to the other parameters
  const t = tableFromIPC(readFileSync(join(BUNDLE, 'samples.arrow')));
  const ids = t.getChild('id')!;
  const rng = makeRng(77);
  const zp = new Float32Array(t.numRows);
  for (let j = 0; j < t.numRows; j++) {
    const z = zOf.get(ids.get(j) as string)!;
    zp[j] = Math.max(0.01, z + 0.08 * (1 + z) * rng.normal());
  }
  const cols: Record<string, ReturnType<typeof makeVector>> = {};
  for (const f of t.schema.fields) cols[f.name] = t.getChild(f.name)! as unknown as ReturnType<typeof makeVector>;
  cols.z_phot = makeVector({ data: zp, type: new Float32() });
  writeFileSync(join(BUNDLE, 'samples.arrow'), tableToIPC(new Table(cols), 'file'));
  const release = JSON.parse(readFileSync(join(BUNDLE, 'release.json'), 'utf8'));
  release.parameters.push({ name: 'z_phot', label: 'z_phot', unit: '', description: 'photometric redshift of the fit', ucd: 'src.redshift.phot', role: 'redshift', prior: { kind: 'uniform', min: 0, max: 6 } });
  writeFileSync(join(BUNDLE, 'release.json'), JSON.stringify(release, null, 1));
  await buildRelease(BUNDLE, { out: OUT });
}, 900_000);

describe('a release with the redshift among the sampled parameters', () => {
  it('assigns bin membership per draw in relations.json: fractional members near the edges, n_eff below n', () => {
    const all = JSON.parse(readFileSync(join(OUT, 'downloads', 'relations.json'), 'utf8')) as { relations: RelationContent[] };
    const ms = all.relations.find((r) => r.name === 'main_sequence')!;
    expect(ms.binMembership).toEqual(expect.objectContaining({ kind: 'per-draw', parameter: 'z_phot' }));
    let fractional = 0;
    for (const b of ms.bins) {
      expect(b.nEff, `bin ${b.zLo}-${b.zHi}`).toBeDefined();
      // galaxies that straddle an edge enter with f < 1, so the effective number is below the count
      if (b.n > 0) expect(b.nEff!).toBeLessThanOrEqual(b.n);
      if (b.nEff! < b.n - 1) fractional++;
      expect(b.fits.map((f) => f.method)).toEqual(expect.arrayContaining(['deconvolved', 'hierarchical', 'naive']));
    }
    expect(fractional).toBeGreaterThan(0);
  });

  it('says so on the relation page', () => {
    const html = readFileSync(join(OUT, 'relations', 'main_sequence', 'index.html'), 'utf8');
    expect(html).toContain('effective number of members');
    expect(html).toContain('from the posterior draws of z_phot');
    expect(html).toMatch(/membership is assigned per posterior draw of z_phot/);
  });
});
