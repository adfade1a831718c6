/**
 * The published catalogue: one row per object, every column documented with unit,
 * UCD (UCD1+) and description. The same column list feeds every download format and
 * the /columns/ page, so they cannot disagree.
 *
 * UCD1+ has no word for a percentile. We write a parameter's percentiles with its own
 * UCD followed by `stat.min` (2.5th and 16th, lower bounds of the central 95% and 68%
 * credible intervals) or `stat.max` (84th and 97.5th), the median with `stat.median`,
 * the mean with `stat.mean`, and the standard deviation as `stat.stdev;<ucd>`.
 *
 * Units are the canonical labels of src/lib/io/units.ts (parameters' units are mapped when
 * release.json is read); each writer turns them into its format's spelling. A logarithmic
 * quantity's description names the physical unit it is the log10 of, because neither the
 * VOTable unit ('dex') nor FITS (no TUNITn) can carry it.
 */
import type { Column, Table } from '../io/table.ts';
import type { ParameterConfig, ReleaseConfig } from '../bundle/schema.ts';
import type { ObjectsData } from '../bundle/load.ts';
import type { SummaryTable } from './summarise.ts';
import type { ColumnDoc } from './content.ts';
import { FLAG_INFO } from '../core/flags.ts';
import { describeWithUnit, spreadLabel } from '../io/units.ts';

export interface RelationColumns {
  name: string;
  offset: Float64Array;
  tension: Float64Array;
}

export interface CatalogueInputs {
  config: ReleaseConfig;
  objects: ObjectsData;
  summary: SummaryTable;
  population: string[];
  pSequence: Float64Array | null;
  relations: RelationColumns[];
}

const STATS = [
  { key: 'mean', ucd: (u: string) => `${u};stat.mean`, text: 'posterior mean (weighted)' },
  { key: 'std', ucd: (u: string) => `stat.stdev;${u}`, text: 'posterior standard deviation (weighted, normalised by the sum of weights)' },
  { key: 'p025', ucd: (u: string) => `${u};stat.min`, text: '2.5th percentile of the weighted posterior (lower bound of the central 95% credible interval)' },
  { key: 'p16', ucd: (u: string) => `${u};stat.min`, text: '16th percentile of the weighted posterior (lower bound of the central 68% credible interval)' },
  { key: 'p50', ucd: (u: string) => `${u};stat.median`, text: 'posterior median (50th percentile)' },
  { key: 'p84', ucd: (u: string) => `${u};stat.max`, text: '84th percentile of the weighted posterior (upper bound of the central 68% credible interval)' },
  { key: 'p975', ucd: (u: string) => `${u};stat.max`, text: '97.5th percentile of the weighted posterior (upper bound of the central 95% credible interval)' },
] as const;

const QUANTILE_RULE = 'weighted CDF with midpoint plotting positions, linear interpolation (equal weights: Hyndman and Fan type 5)';

function hasMixtureRule(config: ReleaseConfig): boolean {
  return config.relations.some((r) => r.methods.includes('mixture'));
}

function paramUcd(p: ParameterConfig): string {
  return p.ucd ?? 'stat.param';
}

export function flagsDescription(): string {
  return 'bitmask of quality flags: ' + FLAG_INFO.map((f) => `${f.bit} ${f.name.toLowerCase()}`).join(', ');
}

/** Column dictionary of the catalogue, in column order. */
export function catalogueColumns(config: ReleaseConfig, objects: ObjectsData, relations: string[], hasMixture: boolean): ColumnDoc[] {
  const cols: ColumnDoc[] = [
    { name: 'id', type: 'string', unit: '', ucd: 'meta.id;meta.main', description: 'object identifier, as in the input catalogue' },
    { name: 'ra', type: 'double', unit: 'deg', ucd: 'pos.eq.ra;meta.main', description: 'right ascension (ICRS)' },
    { name: 'dec', type: 'double', unit: 'deg', ucd: 'pos.eq.dec;meta.main', description: 'declination (ICRS)' },
    { name: 'redshift', type: 'double', unit: '', ucd: 'src.redshift', description: 'redshift used in the fit' },
    { name: 'n_samples', type: 'int', unit: '', ucd: 'meta.number', description: 'number of posterior draws supplied' },
    { name: 'ess', type: 'double', unit: '', ucd: 'stat.value', description: 'effective sample size of the draws', formula: 'Kish: (sum w)^2 / sum w^2; for MCMC draws with a chain column, the autocorrelation ESS (smallest over parameters)' },
    { name: 'chi2', type: 'double', unit: '', ucd: 'stat.fit.chi2', description: 'chi-square of the best fit, as supplied' },
    { name: 'chi2_pvalue', type: 'double', unit: '', ucd: 'stat.fit.goodness', description: 'chi-square survival probability', formula: `Q(dof/2, chi2/2), regularised upper incomplete gamma function; dof = bands used - ${config.quality.dofSubtract ?? config.parameters.length}` },
    { name: 'flags', type: 'int', unit: '', ucd: 'meta.code.qual', description: flagsDescription() },
    { name: 'population', type: 'string', unit: '', ucd: 'src.class', description: hasMixtureRule(config) ? `star-forming or quiescent: by the main-sequence mixture (p_sequence >= 0.5) for galaxies above a redshift bin's mass-completeness limit, otherwise by log sSFR = log SFR - log M* above or below ${config.populations.threshold} (posterior medians); empty where undetermined` : `star-forming or quiescent, by log sSFR = log SFR - log M* above or below ${config.populations.threshold} (posterior medians); empty where undetermined` },
  ];
  if (hasMixture)
    cols.push({ name: 'p_sequence', type: 'double', unit: '', ucd: 'stat.probability', description: 'probability of belonging to the star-forming main sequence, from the two-component mixture fit', formula: 'sequence density / (sequence + broad component) at the posterior mean, averaged over the fit posterior' });
  for (const p of config.parameters) {
    for (const s of STATS) {
      // a standard deviation of log10 values is a spread in dex, whatever they are the log of
      const unit = s.key === 'std' ? spreadLabel(p.unit) : p.unit;
      cols.push({
        name: `${p.name}_${s.key}`,
        type: 'double',
        unit,
        ucd: s.ucd(paramUcd(p)),
        description: describeWithUnit(`${p.description}: ${s.text}`, unit),
        formula: s.key.startsWith('p') ? QUANTILE_RULE : undefined,
      });
    }
  }
  for (const r of relations) {
    const rel = config.relations.find((x) => x.name === r)!;
    const y = config.parameters.find((p) => p.name === rel.y)!;
    const offsetUnit = spreadLabel(y.unit);
    cols.push({ name: `${r}_offset`, type: 'double', unit: offsetUnit, ucd: `${paramUcd(y)};arith.diff`, description: describeWithUnit(`offset of ${y.name} from the ${rel.title} fit in the object's redshift bin`, offsetUnit), formula: 'y - (a + b (x - pivot)) at the posterior mean' });
    cols.push({ name: `${r}_tension`, type: 'double', unit: '', ucd: 'stat.value', description: `offset from the ${rel.title} in units of the combined intrinsic scatter and projected posterior spread`, formula: 'offset / sqrt(s^2 + Cyy - 2 b Cxy + b^2 Cxx)' });
  }
  for (const p of config.parameters)
    if (objects.truth[p.name]) cols.push({ name: `${p.name}_true`, type: 'double', unit: p.unit, ucd: paramUcd(p), description: describeWithUnit(`true ${p.description} (mock catalogue)`, p.unit) });
  for (const c of objects.extra) {
    cols.push({
      name: c.name,
      type: c.kind === 'string' ? 'string' : c.kind === 'int64' ? 'long' : c.kind === 'int32' || c.kind === 'int16' || c.kind === 'uint8' ? 'int' : c.kind === 'bool' ? 'boolean' : 'double',
      unit: c.unit ?? '',
      ucd: c.ucd ?? '',
      description: describeWithUnit(c.description ?? 'passed through from the input objects table', c.unit ?? ''),
    });
  }
  return cols;
}

function kindOf(doc: ColumnDoc): Column['kind'] {
  switch (doc.type) {
    case 'string': return 'string';
    case 'int': return 'int32';
    case 'long': return 'int64';
    case 'boolean': return 'bool';
    case 'float': return 'float32';
    default: return 'float64';
  }
}

/** The catalogue as a table in the column model. */
export function buildCatalogue(inp: CatalogueInputs): { table: Table; docs: ColumnDoc[] } {
  const { config, objects, summary, relations } = inp;
  const docs = catalogueColumns(config, objects, relations.map((r) => r.name), !!inp.pSequence);
  const values = new Map<string, Column['values']>();
  values.set('id', objects.id);
  values.set('ra', objects.ra);
  values.set('dec', objects.dec);
  values.set('redshift', objects.redshift);
  values.set('n_samples', summary.nSamples);
  values.set('ess', summary.ess);
  values.set('chi2', summary.chi2);
  values.set('chi2_pvalue', summary.chi2Pvalue);
  values.set('flags', summary.flags);
  values.set('population', inp.population);
  if (inp.pSequence) values.set('p_sequence', inp.pSequence);
  config.parameters.forEach((p, j) => {
    for (const s of STATS) values.set(`${p.name}_${s.key}`, summary[s.key][j]);
    if (objects.truth[p.name]) values.set(`${p.name}_true`, objects.truth[p.name]);
  });
  for (const r of relations) {
    values.set(`${r.name}_offset`, r.offset);
    values.set(`${r.name}_tension`, r.tension);
  }
  for (const c of objects.extra) values.set(c.name, c.values);
  const columns: Column[] = docs.map((d) => {
    const col: Column = { name: d.name, kind: kindOf(d), values: values.get(d.name)!, unit: d.unit || undefined, ucd: d.ucd || undefined, description: d.description };
    const extra = objects.extra.find((c) => c.name === d.name);
    if (extra?.valid) col.valid = extra.valid;
    return col;
  });
  return { table: { columns, numRows: objects.n }, docs };
}
