/**
 * The derived content the pipeline writes under `content/` and the site reads.
 * Plain JSON-serialisable data only; every page of the site is rendered from these.
 *
 * Layout of `content/`:
 *   site.json                      SiteContent
 *   objects/index.json             ObjectIndexEntry[] (id order = catalogue order)
 *   objects/<slug>.json            ObjectContent (static mode: one page per object)
 *   objects/shards/<NNNNNN>.json   ObjectContent[] of objects [k*shardSize, (k+1)*shardSize) (viewer mode)
 *   relations/<name>.json          RelationContent
 *   quality.json                   QualityContent
 *   massfunction.json              MassFunctionContent
 *   outliers.json                  OutlierEntry[] (sorted by |tension|)
 *   downloads/                     the published downloads (copied into the site)
 *   figures/...                    prerendered SVGs (charts layer)
 */

export interface ParameterInfo {
  name: string;
  label: string;
  unit: string;
  description: string;
  ucd?: string;
  role: string;
  prior?: { kind: string; min?: number; max?: number; mean?: number; sigma?: number };
}

export interface ColumnDoc {
  name: string;
  unit: string;
  ucd: string;
  description: string;
  /** How the column is derived, in words or a formula. */
  formula?: string;
  type: 'string' | 'double' | 'float' | 'int' | 'long' | 'boolean';
}

export interface DownloadEntry {
  file: string;
  bytes: number;
  sha256: string;
  format: string;
  notes: string;
}

export interface FlagDoc {
  bit: number;
  name: string;
  label: string;
  explanation: string;
  count: number;
}

export interface HeadlineFit {
  relation: string;
  title: string;
  zLo: number;
  zHi: number;
  method: string;
  slope: Estimate;
  intercept: Estimate;
  scatter: Estimate;
  n: number;
}

export interface Estimate {
  median: number;
  lo: number;
  hi: number;
}

export interface SiteContent {
  title: string;
  version: string;
  releaseDate: string;
  descriptionHtml: string;
  citation: { text: string; bibtex: string };
  licence: string;
  doi?: string;
  changelog: { version: string; date: string; notes: string }[];
  survey: { areaDeg2: number; magLimit?: number; magBand?: string };
  cosmology: { H0: number; Om0: number; Ode0: number };
  model: { imf: string; sfh: string; dust: string; sfrTimescaleMyr: number; notes?: string };
  parameters: ParameterInfo[];
  counts: {
    objects: number;
    withSamples: number;
    summariesOnly: number;
    draws: number;
    photometryRows: number;
    bands: number;
    withSpectra: number;
    starForming: number;
    quiescent: number;
    flagged: number;
    isMock: boolean;
  };
  relations: { name: string; title: string; x: string; y: string; population: string }[];
  headline: HeadlineFit[];
  columns: ColumnDoc[];
  flags: FlagDoc[];
  downloads: DownloadEntry[];
  /** Binned sky density: a projection chosen from the field's extent. */
  sky: {
    projection: 'tangent' | 'equal-area';
    centre: { ra: number; dec: number };
    /** Points (x, y) in the projection's coordinates (degrees on the tangent plane) per cell with counts. */
    cells: { x: number; y: number; n: number }[];
    cellSize: number;
    extent: { xMin: number; xMax: number; yMin: number; yMax: number };
  };
  /** Redshift histogram: edges and counts. */
  redshiftHist: { edges: number[]; counts: number[] };
  /** Stellar-mass histogram per population. */
  massHist: { edges: number[]; starForming: number[]; quiescent: number[] };
  tool: { name: string; version: string };
  /**
   * Object pages: `static` builds one page per object; above `limit` objects (`viewer`), one
   * static viewer page loads the object's shard (`objects/shards/<NNNNNN>.json`, shard =
   * floor(catalogue index / shardSize)) so catalogues of 10^7 objects still build.
   */
  objectPages: { mode: 'static' | 'viewer'; shardSize: number; limit: number };
  /** The release's quality thresholds (drawn on the quality figures). */
  quality: { minEss: number; minChi2Pvalue: number; priorEdgeWidth: number; priorEdgeMass: number; multimodalMinMass: number; outlierTension: number };
  warnings: string[];
}

export interface ObjectIndexEntry {
  id: string;
  slug: string;
  /** Catalogue index (viewer mode: the shard is floor(index / shardSize)). */
  index: number;
  ra: number;
  dec: number;
  redshift: number;
  flags: number;
  population: string;
}

export interface ParamRow extends Estimate {
  name: string;
  label: string;
  unit: string;
  mean: number;
  std: number;
  p025: number;
  p16: number;
  p50: number;
  p84: number;
  p975: number;
  hdi68: [number, number];
  hdi95: [number, number];
  truth?: number;
  multimodal: boolean;
  priorEdgeMass?: number;
}

/** 1-D marginal for the corner plot: bin edges and density (weighted histogram), plus KDE on a grid. */
export interface Marginal {
  param: string;
  edges: number[];
  density: number[];
  kdeX: number[];
  kdeY: number[];
  rule: string;
}

/** 2-D marginal: contour polylines enclosing each mass level. */
export interface Contour2d {
  x: string;
  y: string;
  levels: { mass: number; paths: [number, number][][] }[];
  /** Up to ~200 equal-weight draws for a light scatter under the contours. */
  points: [number, number][];
}

export interface PhotPoint {
  band: string;
  label: string;
  /** Pivot wavelength in micron. */
  wavelengthUm: number;
  /** Flux density in microjansky (converted from the release's units). */
  fluxUJy: number;
  errUJy: number;
  modelUJy: number | null;
  upperLimit: boolean;
  /** For limits: the limit value in microjansky (n sigma). */
  limitUJy: number | null;
  limitNsigma: number | null;
  /** Residual (flux - model) / err, when a model flux exists and the point is a measurement. */
  residualSigma: number | null;
}

export interface SpectrumData {
  instrument: string;
  wavelengthUm: number[];
  fluxUJy: number[];
  errUJy: number[];
  mask: boolean[];
  modelUJy: number[] | null;
}

export interface ObjectContent {
  id: string;
  slug: string;
  index: number;
  ra: number;
  dec: number;
  raHms: string;
  decDms: string;
  redshift: number;
  nSamples: number;
  ess: number;
  essKind: 'kish' | 'autocorrelation';
  chi2: number | null;
  dof: number | null;
  chi2Pvalue: number | null;
  flags: number;
  flagReasons: { label: string; text: string }[];
  population: string;
  pStarForming: number | null;
  summariesOnly: boolean;
  params: ParamRow[];
  correlation: number[][] | null;
  marginals: Marginal[];
  contours: Contour2d[];
  photometry: PhotPoint[];
  model: { wavelengthUm: number[]; fluxUJy: number[]; frame: 'observed' | 'rest' } | null;
  spectra: SpectrumData[];
  relations: { name: string; title: string; offset: number | null; tension: number | null; outlier: boolean }[];
  neighbours: { id: string; slug: string; sepArcsec: number }[];
  prev: { id: string; slug: string } | null;
  next: { id: string; slug: string } | null;
  extra: { name: string; value: string }[];
  downloads: { draws: string | null; photometry: string | null };
}

export interface BinFit {
  zLo: number;
  zHi: number;
  n: number;
  /**
   * Under per-draw redshift-bin membership (`RelationContent.binMembership`): the effective
   * number of members, the sum over the n fitted galaxies of their probability f of being in
   * the bin. Absent when membership is by the catalogue redshift.
   */
  nEff?: number;
  completenessLogM: number | null;
  fits: MethodFit[];
  running: {
    centres: number[];
    median: number[];
    p16: number[];
    p84: number[];
    medianLo: number[];
    medianHi: number[];
    n: number[];
  } | null;
  /** Credible band of the mean relation for the preferred method. */
  band: { method: string; x: number[]; lo: number[]; mid: number[]; hi: number[] } | null;
  reference: { x: number[]; y: number[]; label: string } | null;
  truth?: { a: number; b: number; s: number };
}

export interface MethodFit {
  method: string;
  n: number;
  /** Intercept at x = pivot and at the bin's central redshift. */
  a: Estimate;
  b: Estimate;
  s: Estimate;
  /** Within-bin evolution: the coefficient of (z - z_centre), when fitted. */
  c?: Estimate;
  diagnostics: Record<string, number | number[] | string>;
  warnings: string[];
}

export interface RelationContent {
  name: string;
  title: string;
  x: ParameterInfo;
  y: ParameterInfo;
  population: string;
  pivot: number;
  zBins: number[];
  bins: BinFit[];
  /** Binned density of all selected objects in the x-y plane (does not grow with the catalogue). */
  density: { x0: number; dx: number; y0: number; dy: number; nx: number; ny: number; counts: number[] };
  /** The same grid per redshift bin (counts[bin][j * nx + i]), for one panel per bin; absent in older content. */
  densityByBin?: number[][];
  /** Outliers drawn as points on top of the density. */
  outliers: { id: string; slug: string; x: number; y: number; z: number; tension: number; reason: string }[];
  /** Up to a few thousand points (id, x, y, z) for linked brushing. */
  points: { id: string; slug: string; x: number; y: number; z: number }[];
  methodNotes: string[];
  caveats: string[];
  priorUsed: string;
  /**
   * Present when redshift-bin membership was assigned per posterior draw of a parameter with
   * the redshift role (absent: by the catalogue redshift): the parameter, and the floor below
   * which a galaxy's share of a bin is dropped (f >= minFraction and >= minDraws draws in the bin).
   */
  binMembership?: { kind: 'per-draw'; parameter: string; minFraction: number; minDraws: number };
}

export interface OutlierEntry {
  id: string;
  slug: string;
  relation: string;
  tension: number;
  offset: number;
  redshift: number;
  flags: number;
  reason: string;
}

export interface QualityContent {
  isMock: boolean;
  essHist: { edges: number[]; counts: number[] };
  pvalueHist: { edges: number[]; counts: number[] };
  flagCounts: { name: string; label: string; count: number; fraction: number }[];
  flagsByRedshift: { zLo: number; zHi: number; n: number; fractions: Record<string, number> }[];
  worstFits: { id: string; slug: string; chi2: number; pvalue: number; flags: number }[];
  calibration: {
    param: string;
    label: string;
    n: number;
    coverage: { level: number; fraction: number; se: number }[];
    pitHist: number[];
    bias: number;
    nmad: number;
    outlierFraction: number;
    outlierRule: string;
    coverage68: number;
    flagged: boolean;
    verdict: string;
  }[];
}

export interface MassFunctionContent {
  bins: {
    zLo: number;
    zHi: number;
    completenessLogM: number | null;
    points: { logM: number; phi: number; phiErr: number; bootLo: number | null; bootHi: number | null; n: number }[];
    schechter: { phiStar: Estimate; logMStar: Estimate; alpha: Estimate } | null;
    truth?: { phiStar: number; logMStar: number; alpha: number };
  }[];
  areaDeg2: number;
  notes: string[];
}
