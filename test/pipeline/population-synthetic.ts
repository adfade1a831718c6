/**
 * A seeded synthetic population for the population stage, built directly as its inputs
 * (config, objects, summaries and the m equal-weight posterior draws per object), without
 * samples files or the summarising step.
 *
 * Each galaxy has a true redshift z uniform on [zEdges[0], zEdges[last]], a true log mass
 * x ~ N(10, 0.5^2) and log SFR y = a_k + b_k (x - pivot) + N(0, s_k^2) with the relation of the
 * bin k holding its true z (a fraction `quiescentFraction` lies 1.5 dex below instead). The
 * posterior is the flat-prior posterior of a Gaussian measurement: jointly Gaussian in
 * (x, y, z) around the observed values with widths (sx, sy, sz), correlation rho between x and
 * y and rhoXZ between x and z, truncated to the redshift range (the uniform prior of z), drawn
 * by rejection. So it is calibrated: the fraction of an object's draws in bin k is the
 * probability that it lies in bin k. The summaries (mean, covariance, percentiles) are those of
 * the m draws; the catalogue redshift is the posterior median of z.
 */
import { Release, type ReleaseConfig } from '../../src/lib/bundle/schema.ts';
import type { ObjectsData } from '../../src/lib/bundle/load.ts';
import { allocSummaryTable, allocPopulationDraws } from '../../src/lib/pipeline/summarise.ts';
import type { PopulationInputs } from '../../src/lib/pipeline/population.ts';
import { makeCosmology } from '../../src/lib/core/cosmology.ts';
import { makeRng } from '../../src/lib/core/random.ts';

export interface SyntheticOptions {
  n: number;
  /** Draws per object. */
  m: number;
  seed: number;
  zEdges: number[];
  /** True relation per bin (at the bin centre when `smooth`). */
  truth: { a: number; b: number; s: number }[];
  /**
   * Evolve the relation smoothly with the true redshift instead of in steps at the bin edges:
   * a, b and s linear in z through their `truth` values at the bin centres (linear
   * extrapolation beyond the outer centres).
   */
  smooth?: boolean;
  pivot?: number;
  /** Declare the redshift draws as a parameter with role 'redshift' (otherwise it is role 'other'). */
  redshiftRole: boolean;
  /** Leave the redshift parameter out altogether. */
  noRedshiftParameter?: boolean;
  sx?: number;
  sy?: number;
  sz?: number;
  rho?: number;
  rhoXZ?: number;
  quiescentFraction?: number;
  methods?: ('deconvolved' | 'hierarchical' | 'running-median' | 'naive' | 'mixture')[];
  population?: 'star-forming' | 'quiescent' | 'all';
  redshiftTerm?: boolean;
  /** Give magnitudes and a magnitude limit, so the fits are above a completeness limit. */
  magLimit?: number;
  /** A second relation (same x, y) with the redshift term, to cover both paths. */
  secondRelation?: boolean;
}

export function syntheticPopulation(o: SyntheticOptions): PopulationInputs & { zTrue: Float64Array } {
  const { n, m, zEdges } = o;
  const pivot = o.pivot ?? 10;
  const sx = o.sx ?? 0.12, sy = o.sy ?? 0.2, sz = o.sz ?? 0.25, rho = o.rho ?? 0.3, rhoXZ = o.rhoXZ ?? 0.4;
  const zMin = zEdges[0], zMax = zEdges[zEdges.length - 1];
  const withZ = !o.noRedshiftParameter;
  const params = [
    { name: 'log_mstar', label: 'log M*', unit: 'log(solMass)', description: 'stellar mass', role: 'log_mass', prior: { kind: 'uniform', min: 6, max: 13 } },
    { name: 'log_sfr', label: 'log SFR', unit: 'log(solMass/yr)', description: 'star-formation rate', role: 'log_sfr', prior: { kind: 'uniform', min: -6, max: 5 } },
    ...(withZ ? [{ name: 'z_phot', label: 'z', unit: '', description: 'photometric redshift', role: o.redshiftRole ? 'redshift' : 'other', prior: { kind: 'uniform', min: zMin, max: zMax } }] : []),
  ];
  const rel = (name: string, redshiftTerm: boolean) => ({
    name,
    title: 'Main sequence',
    x: 'log_mstar',
    y: 'log_sfr',
    population: o.population ?? 'all',
    zBins: zEdges,
    pivot,
    methods: o.methods ?? ['deconvolved', 'naive', 'running-median'],
    aboveCompleteness: o.magLimit !== undefined,
    redshiftTerm,
  });
  const config: ReleaseConfig = Release.parse({
    title: 'Synthetic release',
    version: '0.0',
    releaseDate: '2024-01-01',
    description: 'synthetic',
    citation: { text: 'Synthetic', bibtex: '@misc{syn}' },
    licence: 'CC-BY-4.0',
    survey: { areaDeg2: 1, ...(o.magLimit !== undefined ? { magLimit: o.magLimit, magBand: 'i' } : {}) },
    cosmology: { H0: 70, Om0: 0.3 },
    units: { flux: 'uJy', wavelength: 'um' },
    model: { imf: 'Chabrier', sfh: 'delayed', dust: 'calzetti', sfrTimescaleMyr: 100 },
    tables: { objects: { path: 'objects.csv', columns: {} } },
    parameters: params,
    relations: [rel('main_sequence', o.redshiftTerm ?? false), ...(o.secondRelation ? [rel('main_sequence_evolving', true)] : [])],
    seed: o.seed,
  });
  const k = params.length;
  const rng = makeRng(o.seed);
  const summary = allocSummaryTable(n, k);
  const pop = allocPopulationDraws(n, k, m, false);
  const id: string[] = [];
  const redshift = new Float64Array(n);
  const mag = new Float64Array(n);
  const zTrue = new Float64Array(n);
  const nb = zEdges.length - 1;
  const cRho = Math.sqrt(1 - rho * rho);
  const cXZ = Math.sqrt(1 - rhoXZ * rhoXZ);
  for (let i = 0; i < n; i++) {
    id.push(`SYN-${String(i).padStart(5, '0')}`);
    const z = zMin + (zMax - zMin) * rng.next();
    zTrue[i] = z;
    let b = 0;
    while (b < nb - 1 && z >= zEdges[b + 1]) b++;
    let t = o.truth[b];
    if (o.smooth && nb > 1) {
      const centre = (j: number) => 0.5 * (zEdges[j] + zEdges[j + 1]);
      const j = Math.min(nb - 2, Math.max(0, z < centre(b) ? b - 1 : b));
      const u = (z - centre(j)) / (centre(j + 1) - centre(j));
      const lin = (p: 'a' | 'b' | 's') => o.truth[j][p] + u * (o.truth[j + 1][p] - o.truth[j][p]);
      t = { a: lin('a'), b: lin('b'), s: lin('s') };
    }
    const x = 10 + 0.5 * rng.normal();
    let y = t.a + t.b * (x - pivot) + t.s * rng.normal();
    if (o.quiescentFraction && rng.next() < o.quiescentFraction) y -= 1.5;
    // the observation: (x, y, z) plus correlated Gaussian noise; the posterior (flat priors) is
    // the same Gaussian around the observed values, with z truncated to its prior range
    const e1 = rng.normal(), e2 = rng.normal(), e3 = rng.normal();
    const xo = x + sx * e1, yo = y + sy * (rho * e1 + cRho * e2), zo = z + sz * (rhoXZ * e1 + cXZ * e3);
    mag[i] = 24 - 2.5 * (x - 10) + 2 * (z - zMin) + 0.3 * rng.normal();
    const xs = new Float64Array(m), ys = new Float64Array(m), zs = new Float64Array(m);
    for (let d = 0; d < m; d++) {
      let u1: number, u2: number, u3: number, zd: number;
      let tries = 0;
      do {
        u1 = rng.normal();
        u2 = rng.normal();
        u3 = rng.normal();
        zd = zo + sz * (rhoXZ * u1 + cXZ * u3);
      } while ((zd < zMin || zd > zMax) && ++tries < 1000);
      if (zd < zMin || zd > zMax) zd = Math.min(zMax, Math.max(zMin, zd));
      xs[d] = xo + sx * u1;
      ys[d] = yo + sy * (rho * u1 + cRho * u2);
      zs[d] = zd;
    }
    const cols = withZ ? [xs, ys, zs] : [xs, ys];
    for (let j = 0; j < k; j++) {
      pop.values[j].set(cols[j], i * m);
      const sorted = Float64Array.from(cols[j]).sort();
      const q = (p: number) => sorted[Math.min(m - 1, Math.max(0, Math.round(p * (m - 1))))];
      let mean = 0;
      for (const v of cols[j]) mean += v / m;
      summary.mean[j][i] = mean;
      summary.p16[j][i] = q(0.16);
      summary.p50[j][i] = q(0.5);
      summary.p84[j][i] = q(0.84);
    }
    for (let r = 0; r < k; r++) {
      for (let c = 0; c < k; c++) {
        let s = 0;
        for (let d = 0; d < m; d++) s += (cols[r][d] - summary.mean[r][i]) * (cols[c][d] - summary.mean[c][i]);
        summary.cov[i * k * k + r * k + c] = s / m;
      }
      summary.std[r][i] = Math.sqrt(summary.cov[i * k * k + r * k + r]);
    }
    redshift[i] = withZ ? summary.p50[2][i] : Math.min(zMax, Math.max(zMin, zo));
    summary.flags[i] = 0;
  }
  const objects: ObjectsData = {
    n,
    id,
    ra: new Float64Array(n),
    dec: new Float64Array(n),
    redshift,
    chi2: null,
    nBands: null,
    mag: o.magLimit !== undefined ? mag : null,
    truth: {},
    summaries: {},
    extra: [],
    index: new Map(id.map((s, i) => [s, i])),
  };
  return { config, objects, summary, pop, cosmo: makeCosmology({ H0: 70, Om0: 0.3 }), zTrue };
}
