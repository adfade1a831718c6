/**
 * The demo bundle generator: a small bundle must be a valid release, hold the counts it
 * reports, carry posteriors that behave as stated (positive weights, a spread of Kish ESS,
 * calibrated intervals except the planted log_age flaw), and be byte-identical for one seed.
 */
import { mkdtemp, readFile, readdir, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Release, type ReleaseConfig } from '../../src/lib/bundle/schema.ts';
import { readTable } from '../../src/lib/io/read.ts';
import { column, numberAt, stringAt, type Table } from '../../src/lib/io/table.ts';
import { generateDemoBundle, type DemoTruth } from '../../scripts/demo/generate.ts';

const N = 200;
let root: string;
let dirA: string;
let dirB: string;
let truth: DemoTruth;
let counts: Record<string, number>;
let release: ReleaseConfig;
let objects: Table;
let samples: Table;
let photometry: Table;

function col(t: Table, name: string) {
  const c = column(t, name);
  if (!c) throw new Error(`missing column ${name}; have ${t.columns.map((x) => x.name).join(', ')}`);
  return c;
}

/** Weighted quantile: the smallest draw whose cumulative normalised weight reaches q. */
function wquantile(xs: Float64Array, ws: Float64Array, order: Uint32Array, q: number): number {
  let total = 0;
  for (let i = 0; i < ws.length; i++) total += ws[i];
  let acc = 0;
  for (const i of order) {
    acc += ws[i];
    if (acc >= q * total) return xs[i];
  }
  return xs[order[order.length - 1]];
}

interface Group {
  id: string;
  start: number;
  end: number;
}

function groups(t: Table): Group[] {
  const ids = col(t, 'id');
  const out: Group[] = [];
  let start = 0;
  for (let i = 1; i <= t.numRows; i++) {
    if (i === t.numRows || stringAt(ids, i) !== stringAt(ids, start)) {
      out.push({ id: stringAt(ids, start), start, end: i });
      start = i;
    }
  }
  return out;
}

beforeAll(async () => {
  root = await mkdtemp(join(tmpdir(), 'posterity-demo-'));
  dirA = join(root, 'a');
  dirB = join(root, 'b');
  const a = await generateDemoBundle(dirA, { nObjects: N });
  await generateDemoBundle(dirB, { nObjects: N });
  truth = a.truth;
  counts = a.counts;
  release = Release.parse(JSON.parse(await readFile(join(dirA, 'release.json'), 'utf8')));
  objects = await readTable(join(dirA, 'objects.csv'));
  samples = await readTable(join(dirA, 'samples.arrow'));
  photometry = await readTable(join(dirA, 'photometry.csv'));
});

afterAll(async () => {
  if (root) await rm(root, { recursive: true, force: true });
});

describe('demo bundle', () => {
  it('writes a release.json that the schema accepts, with the stated scenario', () => {
    expect(release.parameters.map((p) => p.name)).toEqual(['log_mstar', 'log_sfr', 'av', 'log_age']);
    expect(release.parameters.map((p) => p.role)).toEqual(['log_mass', 'log_sfr', 'dust_av', 'log_age']);
    expect(release.parameters.every((p) => p.prior?.kind === 'uniform')).toBe(true);
    expect(release.relations.map((r) => r.name)).toEqual(['main_sequence', 'dust_mass']);
    expect(release.cosmology).toEqual({ H0: 70, Om0: 0.3 });
    expect(release.model.imf).toBe('Chabrier');
    expect(release.survey.areaDeg2).toBe(truth.areaDeg2);
    expect(release.survey.magLimit).toBe(26);
    expect(release.changelog).toHaveLength(2);
    expect(release.licence).toBe('CC-BY-4.0');
    // the description states the drawn numbers
    expect(release.description).toContain(String(truth.areaDeg2));
    expect(release.description).toContain(truth.hyper.mainSequence.b.toFixed(2));
    expect(release.description).toContain('log_age');
  });

  it('renames columns through the release column maps', () => {
    const maps = release.tables;
    for (const theirs of Object.values(maps.objects.columns)) expect(column(objects, theirs)).toBeDefined();
    expect(column(samples, maps.samples!.columns.weight)).toBeDefined();
    expect(column(photometry, maps.photometry!.columns.flux)).toBeDefined();
    const age = release.parameters.find((p) => p.name === 'log_age')!;
    expect(age.column).toBeDefined();
    expect(column(samples, age.column!)).toBeDefined();
    for (const p of release.parameters) expect(column(objects, `${p.name}_true`)).toBeDefined();
  });

  it('holds the counts it reports', async () => {
    expect(objects.numRows).toBe(N);
    expect(counts.objects).toBe(N);
    expect(samples.numRows).toBe(counts.samples);
    expect(photometry.numRows).toBe(counts.photometry);
    const bands = await readTable(join(dirA, 'bands.csv'));
    expect(bands.numRows).toBe(12);
    const spectra = await readTable(join(dirA, 'spectra.csv'));
    expect(spectra.numRows).toBe(counts.spectra);
    expect(counts.spectraObjects).toBe(Math.round(0.1 * N));
    expect(counts.spectra).toBe(300 * counts.spectraObjects);
    const models = await readTable(join(dirA, 'models.arrow'));
    expect(models.numRows).toBe(counts.models);
    expect(counts.models).toBe(200 * N);
    const g = groups(samples);
    expect(g.map((x) => x.id)).toEqual(Array.from({ length: N }, (_, i) => stringAt(col(objects, 'id'), i)));
    for (const x of g) {
      expect(x.end - x.start).toBeGreaterThanOrEqual(500);
      expect(x.end - x.start).toBeLessThanOrEqual(2000);
    }
    // the parent draw before the magnitude limit is recorded
    const sum = (m: number[][]) => m.flat().reduce((a, b) => a + b, 0);
    expect(sum(truth.massFunction.histogram.parents)).toBe(truth.massFunction.nParents);
    expect(sum(truth.massFunction.histogram.selected)).toBe(N);
    expect(truth.massFunction.nParents).toBeGreaterThan(N);
  });

  it('has one id that needs URL escaping', () => {
    const ids = (col(objects, 'id').values as string[]).slice();
    expect(ids.some((id) => /[/+ ]/.test(id))).toBe(true);
    expect(new Set(ids).size).toBe(N);
  });

  it('gives positive weights, a finite non-separable interim prior and a spread of ESS', () => {
    const w = col(samples, 'w_imp');
    const lp = col(samples, 'log_prior');
    const m = col(samples, 'log_mstar');
    const s = col(samples, 'log_sfr');
    const { ssfrMean, ssfrSigma, logNorm } = truth.interimPrior;
    for (let i = 0; i < samples.numRows; i += 97) {
      expect(numberAt(w, i)).toBeGreaterThan(0);
      expect(Number.isFinite(numberAt(w, i))).toBe(true);
      // uniform in log M times a Gaussian in log sSFR: depends on log SFR - log M
      const d = (numberAt(s, i) - numberAt(m, i) - ssfrMean) / ssfrSigma;
      expect(numberAt(lp, i)).toBeCloseTo(logNorm - 0.5 * d * d, 9);
    }
    const gs = groups(samples);
    const ess = gs.map((g) => {
      let sw = 0;
      let sw2 = 0;
      for (let i = g.start; i < g.end; i++) {
        const x = numberAt(w, i);
        sw += x;
        sw2 += x * x;
      }
      return (sw * sw) / sw2;
    });
    expect(ess.filter((e) => e < 50).length).toBeGreaterThan(0);
    expect(ess.filter((e) => e < 50).length).toBe(truth.ess.below50);
    expect(Math.max(...ess)).toBeGreaterThan(300);
    // not a flat weight set: every object has unequal weights
    expect(ess.every((e, k) => e < gs[k].end - gs[k].start)).toBe(true);
  });

  it('is calibrated except for the planted log_age flaw', () => {
    const w = col(samples, 'w_imp');
    const oid = col(objects, 'id');
    const row = new Map<string, number>();
    for (let i = 0; i < objects.numRows; i++) row.set(stringAt(oid, i), i);
    const coverage: Record<string, number> = {};
    const inRange: Record<string, number> = {};
    const gs = groups(samples);
    for (const p of release.parameters) {
      const draws = col(samples, p.column ?? p.name);
      const tcol = col(objects, `${p.name}_true`);
      let hit = 0;
      let inside = 0;
      for (const g of gs) {
        const n = g.end - g.start;
        const xs = new Float64Array(n);
        const ws = new Float64Array(n);
        for (let i = 0; i < n; i++) {
          xs[i] = numberAt(draws, g.start + i);
          ws[i] = numberAt(w, g.start + i);
        }
        const order = Uint32Array.from({ length: n }, (_, i) => i).sort((a, b) => xs[a] - xs[b]);
        const t = numberAt(tcol, row.get(g.id)!);
        const lo = wquantile(xs, ws, order, 0.15865);
        const hi = wquantile(xs, ws, order, 0.84135);
        if (t >= lo && t <= hi) hit++;
        if (t >= xs[order[0]] && t <= xs[order[n - 1]]) inside++;
      }
      coverage[p.name] = hit / gs.length;
      inRange[p.name] = inside / gs.length;
    }
    // binomial sd at N = 200 is about 0.033
    for (const name of ['log_mstar', 'log_sfr', 'av']) {
      expect(coverage[name]).toBeGreaterThan(0.58);
      expect(coverage[name]).toBeLessThan(0.78);
      expect(inRange[name]).toBeGreaterThan(0.95);
    }
    // 2 Phi(0.9945 / 1.5) - 1 = 0.49 (Gaussian CDF) for widths understated by 1.5
    expect(truth.flaw).toMatchObject({ parameter: 'log_age', factor: 1.5 });
    expect(truth.flaw.expectedCoverage68).toBeCloseTo(0.4926, 3);
    expect(coverage.log_age).toBeGreaterThan(0.38);
    expect(coverage.log_age).toBeLessThan(0.6);
    expect(coverage.log_mstar - coverage.log_age).toBeGreaterThan(0.1);
    expect(inRange.log_age).toBeGreaterThan(0.85);
  });

  it('builds chi-square into the photometry and reports limits and forced fluxes', () => {
    const poor = new Set(truth.planted.poorFit);
    const oid = col(objects, 'id');
    const chi2 = col(objects, 'chi2');
    const nb = col(objects, 'n_bands');
    let excess = 0;
    let good = 0;
    for (let i = 0; i < objects.numRows; i++) {
      if (poor.has(stringAt(oid, i))) {
        expect(numberAt(chi2, i)).toBeGreaterThan(numberAt(nb, i) - 4 + 20);
      } else {
        excess += numberAt(chi2, i) - (numberAt(nb, i) - 4);
        good++;
      }
    }
    expect(Math.abs(excess / good)).toBeLessThan(1); // E[chi2] = dof for good fits
    const band = col(photometry, 'band');
    const ul = col(photometry, 'upper_limit');
    const lim = col(photometry, 'limit_nsigma');
    const flux = col(photometry, 'f_uJy');
    const err = col(photometry, 'e_uJy');
    const model = col(photometry, 'model_flux');
    let limits = 0;
    let negative = 0;
    for (let i = 0; i < photometry.numRows; i++) {
      const isLimit = stringAt(ul, i) === 'true';
      if (isLimit) {
        limits++;
        expect(numberAt(lim, i)).toBe(3);
        expect(['juniper', 'kestrel', 'larch']).not.toContain(stringAt(band, i));
      }
      if (numberAt(flux, i) < 0) negative++;
      expect(numberAt(err, i)).toBeGreaterThan(0);
      expect(numberAt(model, i)).toBeGreaterThan(0);
    }
    expect(limits).toBeGreaterThan(0);
    expect(negative).toBeGreaterThan(0);
    // coverage varies across the field
    const nbs = new Set(Array.from({ length: objects.numRows }, (_, i) => numberAt(nb, i)));
    expect(nbs.size).toBeGreaterThan(1);
  });

  it('gives byte-identical files for the same seed', async () => {
    const files = (await readdir(dirA)).sort();
    expect(files).toEqual(['bands.csv', 'models.arrow', 'objects.csv', 'photometry.csv', 'release.json', 'samples.arrow', 'spectra.csv', 'truth.json']);
    expect((await readdir(dirB)).sort()).toEqual(files);
    for (const f of files) {
      const [x, y] = await Promise.all([readFile(join(dirA, f)), readFile(join(dirB, f))]);
      expect(x.equals(y), f).toBe(true);
    }
  });

  it('gives a different universe for a different seed, and 8 parameters on request', async () => {
    const dir = join(root, 'c');
    const c = await generateDemoBundle(dir, { seed: 7, nObjects: 60, params: 8, drawsRange: [100, 200] });
    const rel = Release.parse(JSON.parse(await readFile(join(dir, 'release.json'), 'utf8')));
    expect(rel.parameters).toHaveLength(8);
    expect(c.truth.hyper).not.toEqual(truth.hyper);
    const s = await readTable(join(dir, 'samples.arrow'));
    expect(s.numRows).toBe(c.counts.samples);
    for (const p of rel.parameters) expect(column(s, p.column ?? p.name)).toBeDefined();
  });
});
