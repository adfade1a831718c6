/**
 * A tiny fake `content/` folder (three objects, one relation, quality, mass function,
 * outliers and a catalogue.arrow download) matching `src/lib/pipeline/content.ts`, so the
 * charts and the site can be built and looked at without running the pipeline.
 *
 *   npx tsx test/helpers/mini-content.ts <dir> [--mock] [--figures]
 *
 * Everything is deterministic (seeded generator, fixed dates): the same call writes the same bytes.
 */
import { mkdir, rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { slugOf } from '../../src/lib/core/slug.ts';
import { FLAG_INFO, FLAGS } from '../../src/lib/core/flags.ts';
import type {
  BinFit,
  ColumnDoc,
  Contour2d,
  Marginal,
  MassFunctionContent,
  ObjectContent,
  ObjectIndexEntry,
  OutlierEntry,
  ParameterInfo,
  ParamRow,
  PhotPoint,
  QualityContent,
  RelationContent,
  SiteContent,
} from '../../src/lib/pipeline/content.ts';
import { writeArrow } from '../../src/lib/io/arrow.ts';
import { fitsBytes } from '../../src/lib/io/fits/write.ts';

export interface MiniOptions {
  /** Mock release: objects carry true values and quality has calibration. */
  mock?: boolean;
  /** Leave these top-level files out, to exercise "not available" pages. */
  omit?: ('quality' | 'massfunction' | 'outliers' | 'relations')[];
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

function gauss(r: () => number): number {
  const u = Math.max(r(), 1e-12);
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * r());
}

const round = (x: number, d = 4): number => Number(x.toFixed(d));

const PARAMS: ParameterInfo[] = [
  { name: 'log_mass', label: 'log M*', unit: 'log(solMass)', description: 'Logarithm of the stellar mass', ucd: 'phys.mass', role: 'mass', prior: { kind: 'uniform', min: 7, max: 12.5 } },
  { name: 'log_sfr', label: 'log SFR', unit: 'log(solMass/yr)', description: 'Logarithm of the star-formation rate averaged over 100 Myr', role: 'sfr', prior: { kind: 'uniform', min: -4, max: 3 } },
  { name: 'av', label: 'A_V', unit: 'mag', description: 'V-band dust attenuation', role: 'dust', prior: { kind: 'uniform', min: 0, max: 4 } },
  { name: 'log_age', label: 'log age', unit: 'log(yr)', description: 'Logarithm of the mass-weighted age', role: 'age', prior: { kind: 'uniform', min: 7.5, max: 10.1 } },
];

interface Fake {
  id: string;
  ra: number;
  dec: number;
  z: number;
  mu: number[];
  sd: number[];
  rho01: number;
  flags: number;
  population: string;
  summariesOnly: boolean;
  spectrum: boolean;
  limits: boolean;
}

const FAKES: Fake[] = [
  { id: 'GAL-0001', ra: 150.1123, dec: 2.2051, z: 0.512, mu: [10.42, 0.81, 0.62, 9.31], sd: [0.08, 0.14, 0.11, 0.18], rho01: 0.62, flags: 0, population: 'star-forming', summariesOnly: false, spectrum: true, limits: false },
  { id: 'GAL 0002/b+', ra: 150.1131, dec: 2.2049, z: 1.204, mu: [9.71, -0.92, 0.31, 9.62], sd: [0.15, 0.42, 0.2, 0.22], rho01: 0.35, flags: FLAGS.POOR_FIT | FLAGS.RELATION_OUTLIER, population: 'quiescent', summariesOnly: false, spectrum: false, limits: true },
  { id: '9007199254740993', ra: 149.9871, dec: 2.3102, z: 0.883, mu: [10.05, 0.55, 0.9, 9.1], sd: [0.1, 0.2, 0.15, 0.2], rho01: 0.5, flags: FLAGS.SUMMARIES_ONLY, population: 'star-forming', summariesOnly: true, spectrum: false, limits: false },
];

const BANDS = [
  { band: 'u', label: 'u', wl: 0.36 },
  { band: 'g', label: 'g', wl: 0.48 },
  { band: 'r', label: 'r', wl: 0.62 },
  { band: 'i', label: 'i', wl: 0.76 },
  { band: 'z', label: 'z', wl: 0.9 },
  { band: 'Y', label: 'Y', wl: 1.02 },
  { band: 'J', label: 'J', wl: 1.25 },
  { band: 'H', label: 'H', wl: 1.65 },
  { band: 'K', label: 'Ks', wl: 2.15 },
  { band: 'ch1', label: '3.6 um', wl: 3.56 },
  { band: 'ch2', label: '4.5 um', wl: 4.5 },
  { band: 'ch3', label: '5.8 um', wl: 5.74 },
];

/** A smooth stellar-bump shape in microjansky, peaking near 1.6 um rest frame. */
function sedShape(wlUm: number, z: number, norm: number): number {
  const rest = wlUm / (1 + z);
  const x = Math.log10(rest / 1.6);
  const bump = Math.exp(-(x * x) / (2 * 0.35 * 0.35));
  const uv = 0.15 * Math.exp(-((Math.log10(rest / 0.15)) ** 2) / 0.08);
  return norm * (bump + uv + 0.02);
}

/** Ellipse polyline enclosing `mass` of a 2-D Gaussian. */
function ellipse(mx: number, my: number, sx: number, sy: number, rho: number, mass: number): [number, number][] {
  const r = Math.sqrt(-2 * Math.log(1 - mass));
  const out: [number, number][] = [];
  const c = Math.sqrt(1 - rho * rho);
  for (let k = 0; k <= 48; k++) {
    const t = (2 * Math.PI * k) / 48;
    const u = Math.cos(t);
    const v = Math.sin(t);
    out.push([round(mx + r * sx * u), round(my + r * sy * (rho * u + c * v))]);
  }
  return out;
}

function marginal(p: ParameterInfo, mu: number, sd: number): Marginal {
  const edges: number[] = [];
  const density: number[] = [];
  const lo = mu - 4 * sd;
  const w = (8 * sd) / 24;
  for (let i = 0; i <= 24; i++) edges.push(round(lo + i * w));
  const r = rng(Math.round(mu * 1000));
  for (let i = 0; i < 24; i++) {
    const c = lo + (i + 0.5) * w;
    const g = Math.exp(-((c - mu) ** 2) / (2 * sd * sd)) / (sd * Math.sqrt(2 * Math.PI));
    density.push(round(g * (0.85 + 0.3 * r())));
  }
  const kdeX: number[] = [];
  const kdeY: number[] = [];
  for (let i = 0; i <= 60; i++) {
    const x = lo + (i * 8 * sd) / 60;
    kdeX.push(round(x));
    kdeY.push(round(Math.exp(-((x - mu) ** 2) / (2 * sd * sd)) / (sd * Math.sqrt(2 * Math.PI))));
  }
  return { param: p.name, edges, density, kdeX, kdeY, rule: 'Scott' };
}

function paramRow(p: ParameterInfo, mu: number, sd: number, truth: number | undefined): ParamRow {
  const row: ParamRow = {
    name: p.name,
    label: p.label,
    unit: p.unit,
    median: round(mu),
    lo: round(mu - sd),
    hi: round(mu + sd),
    mean: round(mu + 0.01),
    std: round(sd),
    p025: round(mu - 1.96 * sd),
    p16: round(mu - sd),
    p50: round(mu),
    p84: round(mu + sd),
    p975: round(mu + 1.96 * sd),
    hdi68: [round(mu - 0.98 * sd), round(mu + 1.01 * sd)],
    hdi95: [round(mu - 1.94 * sd), round(mu + 1.97 * sd)],
    multimodal: false,
  };
  if (truth !== undefined) row.truth = round(truth);
  return row;
}

function objectContent(f: Fake, i: number, mock: boolean): ObjectContent {
  const r = rng(1000 + i);
  const slug = slugOf(f.id);
  const truths = mock ? f.mu.map((m, k) => m + 0.7 * f.sd[k] * gauss(r)) : undefined;
  const params = PARAMS.map((p, k) => paramRow(p, f.mu[k], f.sd[k], truths?.[k]));
  const marginals = f.summariesOnly ? [] : PARAMS.map((p, k) => marginal(p, f.mu[k], f.sd[k]));
  const contours: Contour2d[] = [];
  if (!f.summariesOnly) {
    for (let a = 0; a < PARAMS.length; a++) {
      for (let b = a + 1; b < PARAMS.length; b++) {
        const rho = a === 0 && b === 1 ? f.rho01 : 0.15 * (a - b + 2);
        const pts: [number, number][] = [];
        for (let n = 0; n < 120; n++) {
          const u = gauss(r);
          const v = gauss(r);
          pts.push([round(f.mu[a] + f.sd[a] * u), round(f.mu[b] + f.sd[b] * (rho * u + Math.sqrt(1 - rho * rho) * v))]);
        }
        contours.push({
          x: PARAMS[a].name,
          y: PARAMS[b].name,
          levels: [0.68, 0.95].map((mass) => ({ mass, paths: [ellipse(f.mu[a], f.mu[b], f.sd[a], f.sd[b], rho, mass)] })),
          points: pts,
        });
      }
    }
  }
  const norm = 10 ** (f.mu[0] - 9.6) * (f.z < 1 ? 4 : 1.2);
  const photometry: PhotPoint[] = BANDS.map((b, k) => {
    const model = sedShape(b.wl, f.z, norm);
    const err = 0.06 * model + 0.05;
    let flux = model + err * gauss(r);
    let upper = false;
    let limit: number | null = null;
    let nsig: number | null = null;
    if (f.limits && k === 0) {
      upper = true;
      nsig = 3;
      flux = 0.02;
      limit = round(3 * err);
    }
    if (f.limits && k === 1) flux = -0.4 * err; // a negative forced flux: still a measurement
    return {
      band: b.band,
      label: b.label,
      wavelengthUm: b.wl,
      fluxUJy: round(flux),
      errUJy: round(err),
      modelUJy: round(model),
      upperLimit: upper,
      limitUJy: limit,
      limitNsigma: nsig,
      residualSigma: upper ? null : round((flux - model) / err, 3),
    };
  });
  const mw: number[] = [];
  const mf: number[] = [];
  for (let k = 0; k <= 120; k++) {
    const wl = 10 ** (Math.log10(0.25) + (k / 120) * (Math.log10(8) - Math.log10(0.25)));
    mw.push(round(wl));
    mf.push(round(sedShape(wl, f.z, norm)));
  }
  const spectra = f.spectrum
    ? [
        (() => {
          const wl: number[] = [];
          const fl: number[] = [];
          const er: number[] = [];
          const mk: boolean[] = [];
          const md: number[] = [];
          for (let k = 0; k < 80; k++) {
            const w = 0.6 + (k / 79) * 0.35;
            const m = sedShape(w, f.z, norm);
            const e = 0.08 * m;
            wl.push(round(w));
            md.push(round(m));
            er.push(round(e));
            fl.push(round(m + e * gauss(r)));
            mk.push(k >= 30 && k < 36);
          }
          return { instrument: 'grism', wavelengthUm: wl, fluxUJy: fl, errUJy: er, mask: mk, modelUJy: md };
        })(),
      ]
    : [];
  const flagReasons = FLAG_INFO.filter((fi) => (f.flags & fi.bit) !== 0).map((fi) => ({ label: fi.label, text: fi.explain() }));
  const neighbours = FAKES.filter((g) => g !== f).map((g) => ({
    id: g.id,
    slug: slugOf(g.id),
    sepArcsec: round(Math.hypot((g.ra - f.ra) * Math.cos((f.dec * Math.PI) / 180), g.dec - f.dec) * 3600, 2),
  }));
  neighbours.sort((a, b) => a.sepArcsec - b.sepArcsec);
  const prev = i > 0 ? { id: FAKES[i - 1].id, slug: slugOf(FAKES[i - 1].id) } : null;
  const next = i < FAKES.length - 1 ? { id: FAKES[i + 1].id, slug: slugOf(FAKES[i + 1].id) } : null;
  const offset = f.flags & FLAGS.RELATION_OUTLIER ? -1.42 : 0.11;
  return {
    id: f.id,
    slug,
    index: i,
    ra: f.ra,
    dec: f.dec,
    raHms: hms(f.ra),
    decDms: dms(f.dec),
    redshift: f.z,
    nSamples: f.summariesOnly ? 0 : 512,
    ess: f.summariesOnly ? 0 : 311.4,
    essKind: 'kish',
    chi2: f.summariesOnly ? null : f.flags & FLAGS.POOR_FIT ? 41.2 : 9.8,
    dof: f.summariesOnly ? null : 8,
    chi2Pvalue: f.summariesOnly ? null : f.flags & FLAGS.POOR_FIT ? 2.6e-6 : 0.279,
    flags: f.flags,
    flagReasons,
    population: f.population,
    pStarForming: f.population === 'star-forming' ? 0.93 : 0.08,
    summariesOnly: f.summariesOnly,
    params,
    correlation: f.summariesOnly ? null : PARAMS.map((_, a) => PARAMS.map((__, b) => (a === b ? 1 : a + b === 1 ? f.rho01 : 0.1))),
    marginals,
    contours,
    photometry: f.summariesOnly ? [] : photometry,
    model: f.summariesOnly ? null : { wavelengthUm: mw, fluxUJy: mf, frame: 'observed' },
    spectra,
    relations: [{ name: 'main-sequence', title: 'Star-forming main sequence', offset, tension: round(offset / 0.32, 3), outlier: (f.flags & FLAGS.RELATION_OUTLIER) !== 0 }],
    neighbours,
    prev,
    next,
    extra: [{ name: 'field', value: f.id.startsWith('GAL') ? 'north <b>&amp;</b>' : 'south' }],
    downloads: f.summariesOnly ? { draws: null, photometry: null } : { draws: `downloads/objects/${slug}/draws.fits`, photometry: `downloads/objects/${slug}/photometry.csv` },
  };
}

function hms(ra: number): string {
  const h = ra / 15;
  const hh = Math.floor(h);
  const mm = Math.floor((h - hh) * 60);
  const ss = ((h - hh) * 60 - mm) * 60;
  return `${String(hh).padStart(2, '0')}:${String(mm).padStart(2, '0')}:${ss.toFixed(3).padStart(6, '0')}`;
}

function dms(dec: number): string {
  const s = dec < 0 ? '-' : '+';
  const a = Math.abs(dec);
  const d = Math.floor(a);
  const m = Math.floor((a - d) * 60);
  const sec = ((a - d) * 60 - m) * 60;
  return `${s}${String(d).padStart(2, '0')}:${String(m).padStart(2, '0')}:${sec.toFixed(2).padStart(5, '0')}`;
}

function relationContent(mock: boolean): RelationContent {
  const r = rng(77);
  const pivot = 10;
  const zBins = [0.2, 0.8, 1.5];
  const bins: BinFit[] = [];
  const points: RelationContent['points'] = [];
  for (let bi = 0; bi < zBins.length - 1; bi++) {
    const a = 0.6 + 0.5 * bi;
    const b = 0.78;
    const s = 0.28;
    const xs = [8.75, 9.25, 9.75, 10.25, 10.75, 11.25];
    const med = xs.map((x) => round(a + b * (x - pivot) + 0.03 * gauss(r)));
    const bx: number[] = [];
    const mid: number[] = [];
    for (let k = 0; k <= 20; k++) {
      const x = 8.5 + (k * 3) / 20;
      bx.push(round(x));
      mid.push(round(a + b * (x - pivot)));
    }
    const est = (m: number, e: number) => ({ median: round(m), lo: round(m - e), hi: round(m + e) });
    bins.push({
      zLo: zBins[bi],
      zHi: zBins[bi + 1],
      n: 412 - 120 * bi,
      completenessLogM: 8.6 + 0.5 * bi,
      fits: [
        { method: 'deconvolved', n: 412 - 120 * bi, a: est(a, 0.02), b: est(b, 0.03), s: est(s, 0.015), diagnostics: { rhat: 1.002, essBulk: 3810 }, warnings: [] },
        { method: 'hierarchical', n: 412 - 120 * bi, a: est(a + 0.01, 0.025), b: est(b - 0.01, 0.035), s: est(s - 0.02, 0.02), diagnostics: { rhat: 1.004, essBulk: 2214, acceptance: 0.31 }, warnings: [] },
        { method: 'naive', n: 412 - 120 * bi, a: est(a + 0.03, 0.015), b: est(b - 0.08, 0.02), s: est(s + 0.06, 0.01), diagnostics: { chi2: 455.1 }, warnings: ['ignores per-object uncertainties'] },
        { method: 'mixture', n: 412 - 120 * bi, a: est(a - 0.01, 0.03), b: est(b + 0.01, 0.04), s: est(s - 0.03, 0.02), diagnostics: { rhat: 1.01, fractionSequence: 0.84 }, warnings: [] },
      ],
      running: {
        centres: xs,
        median: med,
        p16: med.map((m) => round(m - 0.3)),
        p84: med.map((m) => round(m + 0.3)),
        medianLo: med.map((m) => round(m - 0.05)),
        medianHi: med.map((m) => round(m + 0.05)),
        n: [12, 48, 95, 120, 80, 22],
      },
      band: { method: 'hierarchical', x: bx, lo: mid.map((m, k) => round(m - 0.04 - 0.01 * Math.abs(k - 10))), mid, hi: mid.map((m, k) => round(m + 0.04 + 0.01 * Math.abs(k - 10))) },
      reference: { x: [9, 11], y: [round(a - 0.9 + 0.1), round(a + 0.75)], label: 'Reference main sequence (converted to this IMF)' },
      ...(mock ? { truth: { a, b, s } } : {}),
    });
    for (let k = 0; k < 150; k++) {
      const x = 8.6 + 2.8 * r();
      const z = zBins[bi] + (zBins[bi + 1] - zBins[bi]) * r();
      points.push({ id: `P${bi}-${k}`, slug: `P${bi}-${k}`, x: round(x), y: round(a + b * (x - pivot) + s * gauss(r)), z: round(z, 3) });
    }
  }
  const nx = 30;
  const ny = 25;
  const counts: number[] = [];
  for (let j = 0; j < ny; j++) {
    for (let i = 0; i < nx; i++) {
      const x = 8.5 + (i + 0.5) * 0.1;
      const y = -2 + (j + 0.5) * 0.2;
      const d = y - (0.8 + 0.78 * (x - pivot));
      counts.push(Math.round(30 * Math.exp(-(d * d) / (2 * 0.3 * 0.3)) * Math.exp(-((x - 10) ** 2) / 2)));
    }
  }
  return {
    name: 'main-sequence',
    title: 'Star-forming main sequence',
    x: PARAMS[0],
    y: PARAMS[1],
    population: 'star-forming',
    pivot,
    zBins,
    bins,
    density: { x0: 8.5, dx: 0.1, y0: -2, dy: 0.2, nx, ny, counts },
    outliers: [{ id: FAKES[1].id, slug: slugOf(FAKES[1].id), x: 9.71, y: -0.92, z: 1.204, tension: -4.44, reason: 'below the relation' }],
    points,
    methodNotes: ['The deconvolved fit uses each object\'s posterior mean and covariance.', 'The hierarchical fit reweights each object\'s draws by the population model over the interim prior.'],
    caveats: ['Fitted above the mass completeness limit only.', 'Star-forming galaxies selected by the mixture probability.'],
    priorUsed: 'uniform in log M* and log SFR',
  };
}

export async function writeMiniContent(dir: string, opts: MiniOptions = {}): Promise<void> {
  const mock = opts.mock ?? false;
  const omit = new Set(opts.omit ?? []);
  await rm(dir, { recursive: true, force: true });
  await mkdir(join(dir, 'objects'), { recursive: true });
  await mkdir(join(dir, 'downloads'), { recursive: true });
  const json = (p: string, v: unknown) => writeFile(join(dir, p), JSON.stringify(v, null, 1) + '\n');

  const objects = FAKES.map((f, i) => objectContent(f, i, mock));
  const index: ObjectIndexEntry[] = objects.map((o, i) => ({ id: o.id, slug: o.slug, index: i, ra: o.ra, dec: o.dec, redshift: o.redshift, flags: o.flags, population: o.population }));
  const columns: ColumnDoc[] = [
    { name: 'id', unit: '', ucd: 'meta.id;meta.main', description: 'Object identifier', type: 'string' },
    { name: 'ra', unit: 'deg', ucd: 'pos.eq.ra;meta.main', description: 'Right ascension (ICRS)', type: 'double' },
    { name: 'dec', unit: 'deg', ucd: 'pos.eq.dec;meta.main', description: 'Declination (ICRS)', type: 'double' },
    { name: 'redshift', unit: '', ucd: 'src.redshift', description: 'Redshift', type: 'double' },
    ...PARAMS.flatMap((p) => [
      { name: `${p.name}_p50`, unit: p.unit, ucd: p.ucd ?? '', description: `${p.description}: posterior median`, formula: 'weighted quantile 0.5, linear interpolation of the weighted CDF', type: 'double' as const },
      { name: `${p.name}_mean`, unit: p.unit, ucd: p.ucd ?? '', description: `${p.description}: posterior mean`, formula: 'sum(w x) / sum(w)', type: 'double' as const },
    ]),
    { name: 'ess', unit: '', ucd: 'stat.value', description: 'Kish effective sample size', formula: '(sum w)^2 / sum w^2', type: 'double' },
    { name: 'flags', unit: '', ucd: 'meta.code.qual', description: 'Quality bitmask', type: 'int' },
    { name: 'population', unit: '', ucd: 'src.class', description: 'star-forming or quiescent', type: 'string' },
  ];
  const site: SiteContent = {
    title: 'Mini Deep Field SED Catalogue',
    version: '1.0.0',
    releaseDate: '2025-06-01',
    descriptionHtml: '<p>Posterior summaries for <strong>three</strong> galaxies, for testing. Strings like <code>&lt;script&gt;</code> stay escaped.</p>\n<ul><li>Photometry in 12 bands</li><li>One grism spectrum</li></ul>\n',
    citation: { text: 'Doe, J. & Roe, R. (2025), Mini Deep Field SED Catalogue, v1.0.0.', bibtex: '@misc{mini2025,\n  author = {Doe, J. and Roe, R.},\n  title = {Mini Deep Field SED Catalogue},\n  year = {2025},\n  version = {1.0.0}\n}' },
    licence: 'CC-BY-4.0',
    objectPages: { mode: 'static', shardSize: 50, limit: 50000 },
    quality: { minEss: 50, minChi2Pvalue: 0.001, priorEdgeWidth: 0.02, priorEdgeMass: 0.2, multimodalMinMass: 0.1, outlierTension: 3 },
    doi: '10.0000/example.mini',
    changelog: [
      { version: '1.0.0', date: '2025-06-01', notes: 'First public release.' },
      { version: '0.9.0', date: '2025-03-10', notes: 'Internal release with <angle> brackets & ampersands.' },
    ],
    survey: { areaDeg2: 0.05, magLimit: 25.5, magBand: 'i' },
    cosmology: { H0: 70, Om0: 0.3, Ode0: 0.7 },
    model: { imf: 'Chabrier', sfh: 'delayed-tau', dust: 'Calzetti', sfrTimescaleMyr: 100 },
    parameters: PARAMS,
    counts: { objects: 3, withSamples: 2, summariesOnly: 1, draws: 1024, photometryRows: 24, bands: 12, withSpectra: 1, starForming: 2, quiescent: 1, flagged: 2, isMock: mock },
    relations: omit.has('relations') ? [] : [{ name: 'main-sequence', title: 'Star-forming main sequence', x: 'log_mass', y: 'log_sfr', population: 'star-forming' }],
    headline: omit.has('relations')
      ? []
      : [{ relation: 'main-sequence', title: 'Star-forming main sequence', zLo: 0.2, zHi: 0.8, method: 'hierarchical', slope: { median: 0.77, lo: 0.735, hi: 0.805 }, intercept: { median: 0.61, lo: 0.585, hi: 0.635 }, scatter: { median: 0.26, lo: 0.24, hi: 0.28 }, n: 412 }],
    columns,
    flags: FLAG_INFO.map((f) => ({ bit: f.bit, name: f.name, label: f.label, explanation: f.explain(), count: objects.filter((o) => o.flags & f.bit).length })),
    downloads: [
      { file: 'catalogue.arrow', bytes: 0, sha256: '0'.repeat(64), format: 'Apache Arrow IPC file', notes: 'One row per galaxy; column metadata carries unit, description and UCD.' },
      { file: 'catalogue.csv', bytes: 1234, sha256: 'ab'.repeat(32), format: 'CSV', notes: 'Comma-separated, header row, RFC 4180 quoting.' },
    ],
    sky: {
      projection: 'tangent',
      centre: { ra: 150.05, dec: 2.25 },
      cells: [
        { x: 0.06, y: -0.04, n: 2 },
        { x: -0.06, y: 0.06, n: 1 },
        { x: 0.0, y: 0.0, n: 3 },
        { x: 0.02, y: 0.04, n: 1 },
      ],
      cellSize: 0.02,
      extent: { xMin: -0.1, xMax: 0.1, yMin: -0.1, yMax: 0.1 },
    },
    redshiftHist: { edges: [0, 0.25, 0.5, 0.75, 1, 1.25, 1.5], counts: [0, 0, 1, 1, 0, 1] },
    massHist: { edges: [9, 9.5, 10, 10.5, 11], starForming: [0, 0, 2, 0], quiescent: [0, 1, 0, 0] },
    tool: { name: 'Posterity', version: '0.1.0' },
    warnings: ['This is test content.'],
  };
  await json('site.json', site);
  await json('objects/index.json', index);
  for (const o of objects) await json(`objects/${o.slug}.json`, o);
  if (!omit.has('relations')) {
    await mkdir(join(dir, 'relations'), { recursive: true });
    await json('relations/main-sequence.json', relationContent(mock));
  }
  if (!omit.has('quality')) {
    const quality: QualityContent = {
      isMock: mock,
      essHist: { edges: [1, 10, 100, 1000, 10000], counts: [0, 0, 2, 0] },
      pvalueHist: { edges: [0, 0.2, 0.4, 0.6, 0.8, 1], counts: [1, 1, 0, 0, 0] },
      flagCounts: site.flags.map((f) => ({ name: f.name, label: f.label, count: f.count, fraction: round(f.count / 3, 4) })),
      flagsByRedshift: [
        { zLo: 0.2, zHi: 0.8, n: 1, fractions: { POOR_FIT: 0, LOW_ESS: 0 } },
        { zLo: 0.8, zHi: 1.5, n: 2, fractions: { POOR_FIT: 0.5, LOW_ESS: 0 } },
      ],
      worstFits: [{ id: FAKES[1].id, slug: slugOf(FAKES[1].id), chi2: 41.2, pvalue: 2.6e-6, flags: FAKES[1].flags }],
      calibration: mock
        ? PARAMS.slice(0, 2).map((p, k) => ({
            param: p.name,
            label: p.label,
            n: 2000,
            coverage: [0.5, 0.68, 0.9, 0.95].map((level) => ({ level, fraction: round(level - 0.02 * (k + 1), 3), se: 0.011 })),
            pitHist: [0.11, 0.1, 0.09, 0.1, 0.1, 0.1, 0.1, 0.1, 0.09, 0.11],
            bias: 0.012 * (k + 1),
            nmad: 0.08,
            outlierFraction: 0.01,
            outlierRule: '|d| > 0.5 dex',
            coverage68: round(0.68 - 0.02 * (k + 1), 3),
            flagged: k === 1,
            verdict: k === 1 ? 'intervals slightly too narrow' : 'calibrated within errors',
          }))
        : [],
    };
    await json('quality.json', quality);
  }
  if (!omit.has('massfunction')) {
    const mf: MassFunctionContent = {
      bins: [0, 1].map((bi) => ({
        zLo: [0.2, 0.8][bi],
        zHi: [0.8, 1.5][bi],
        completenessLogM: 8.6 + 0.5 * bi,
        points: [9, 9.5, 10, 10.5, 11, 11.5].map((logM, k) => {
          const phi = 10 ** (-2.3 - 0.1 * bi - 0.25 * k - (k > 3 ? 0.6 * (k - 3) ** 2 : 0));
          return { logM, phi, phiErr: 0.2 * phi, bootLo: 0.75 * phi, bootHi: 1.3 * phi, n: 40 - 6 * k };
        }),
        schechter: { phiStar: { median: 10 ** (-2.8 - 0.1 * bi), lo: 10 ** (-2.9 - 0.1 * bi), hi: 10 ** (-2.7 - 0.1 * bi) }, logMStar: { median: 10.8, lo: 10.7, hi: 10.9 }, alpha: { median: -1.3, lo: -1.4, hi: -1.2 } },
        ...(mock ? { truth: { phiStar: 10 ** (-2.8), logMStar: 10.75, alpha: -1.3 } } : {}),
      })),
      areaDeg2: 0.05,
      notes: ['1/Vmax estimator (Schmidt 1968) with Poisson uncertainties.'],
    };
    await json('massfunction.json', mf);
  }
  if (!omit.has('outliers')) {
    const out: OutlierEntry[] = [{ id: FAKES[1].id, slug: slugOf(FAKES[1].id), relation: 'main-sequence', tension: -4.44, offset: -1.42, redshift: 1.204, flags: FAKES[1].flags, reason: 'below the relation' }];
    await json('outliers.json', out);
  }
  await writeArrow(join(dir, 'downloads', 'catalogue.arrow'), {
    numRows: 3,
    columns: [
      { name: 'id', kind: 'string', values: objects.map((o) => o.id) },
      { name: 'ra', kind: 'float64', unit: 'deg', values: Float64Array.from(objects.map((o) => o.ra)) },
      { name: 'dec', kind: 'float64', unit: 'deg', values: Float64Array.from(objects.map((o) => o.dec)) },
      { name: 'redshift', kind: 'float64', values: Float64Array.from(objects.map((o) => o.redshift)) },
      ...PARAMS.map((p, k) => ({ name: `${p.name}_p50`, kind: 'float64' as const, unit: p.unit, values: Float64Array.from(FAKES.map((f) => f.mu[k])) })),
      { name: 'flags', kind: 'int32', values: Int32Array.from(objects.map((o) => o.flags)) },
      { name: 'population', kind: 'string', values: objects.map((o) => o.population) },
    ],
  });
  await writeFile(join(dir, 'downloads', 'catalogue.csv'), 'id,ra,dec\n' + objects.map((o) => `"${o.id}",${o.ra},${o.dec}`).join('\n') + '\n');
  for (const o of objects) {
    if (!o.downloads.draws) continue;
    await mkdir(join(dir, 'downloads', 'objects', o.slug), { recursive: true });
    await writeFile(join(dir, 'downloads', 'objects', o.slug, 'draws.fits'), fitsBytes({ numRows: 1, columns: [{ name: 'weight', kind: 'float32', values: Float32Array.of(1) }, { name: 'log_mass', kind: 'float32', values: Float32Array.of(10) }] }, { extname: 'DRAWS' }));
    await writeFile(join(dir, 'downloads', 'objects', o.slug, 'photometry.csv'), 'band,flux\nu,1\n');
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  const dir = process.argv[2];
  if (!dir) {
    console.error('usage: tsx test/helpers/mini-content.ts <dir> [--mock] [--figures]');
    process.exit(2);
  }
  await writeMiniContent(dir, { mock: process.argv.includes('--mock') });
  if (process.argv.includes('--figures')) {
    const { prerenderFigures } = await import('../../src/lib/charts/prerender.ts');
    const r = await prerenderFigures(dir);
    console.log(`prerendered ${r.count} figures`);
  }
  console.log(`wrote ${dir}`);
}
