/**
 * The files a paper and an archive ask for, written beside the other downloads:
 *
 * - `cds/ReadMe` and `cds/catalogue.dat`: the catalogue in the byte-by-byte described ASCII
 *   form of the astronomical data centre; `catalogue-mrt.txt`: the same as one machine-readable
 *   table file for a journal (`io/mrt.ts`). Floats are rounded to the precision their errors
 *   support: a parameter's summaries to three significant digits of its median posterior
 *   standard deviation; positions, redshifts, true values and passed-through columns keep every
 *   digit they were given (up to a cap); chi-square probabilities in exponent form.
 * - `relations.tex`: the relation fits per redshift bin and method (a, b, s with asymmetric
 *   68% errors), one LaTeX table per relation (`io/latex.ts`).
 * - `CITATION.cff` (Citation File Format 1.2.0) and `datacite.json` (DataCite Metadata Schema
 *   4 properties in the JSON form of a DOI deposit).
 * - `datasetJsonLd`: schema.org Dataset metadata for the release page (JSON-LD), so dataset
 *   search engines index the release.
 */
import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { AuthorConfig, ReleaseConfig } from '../bundle/schema.ts';
import type { Table } from '../io/table.ts';
import { cdsUnit, writeCdsReadme, writeMrt, type MrtColumnSpec } from '../io/mrt.ts';
import { latexEstimate, latexTable, latexText } from '../io/latex.ts';
import { FLAG_INFO } from '../core/flags.ts';
import type { ColumnDoc, DownloadEntry, RelationContent } from './content.ts';

/** Licences by SPDX identifier: name and address (for CITATION.cff, DataCite and schema.org). */
export const LICENCES: Record<string, { name: string; url: string }> = {
  'CC-BY-4.0': { name: 'Creative Commons Attribution 4.0 International', url: 'https://creativecommons.org/licenses/by/4.0/' },
  'CC-BY-SA-4.0': { name: 'Creative Commons Attribution Share Alike 4.0 International', url: 'https://creativecommons.org/licenses/by-sa/4.0/' },
  'CC-BY-NC-4.0': { name: 'Creative Commons Attribution Non Commercial 4.0 International', url: 'https://creativecommons.org/licenses/by-nc/4.0/' },
  'CC-BY-3.0': { name: 'Creative Commons Attribution 3.0 Unported', url: 'https://creativecommons.org/licenses/by/3.0/' },
  'CC0-1.0': { name: 'Creative Commons Zero v1.0 Universal', url: 'https://creativecommons.org/publicdomain/zero/1.0/' },
  'ODbL-1.0': { name: 'Open Data Commons Open Database License v1.0', url: 'https://opendatacommons.org/licenses/odbl/1-0/' },
  'PDDL-1.0': { name: 'Open Data Commons Public Domain Dedication & License 1.0', url: 'https://opendatacommons.org/licenses/pddl/1-0/' },
  MIT: { name: 'MIT License', url: 'https://opensource.org/licenses/MIT' },
};

/** Media types of the downloads (IANA where registered, else the format's own). */
export const MEDIA_TYPES: Record<string, string> = {
  csv: 'text/csv',
  fits: 'application/fits',
  arrow: 'application/vnd.apache.arrow.file',
  vot: 'application/x-votable+xml',
  json: 'application/json',
  parquet: 'application/vnd.apache.parquet',
  gz: 'application/gzip',
  txt: 'text/plain',
  tex: 'application/x-tex',
  cff: 'application/x-yaml',
};

export interface Creator {
  kind: 'person' | 'organisation';
  /** Organisation name, or "Family, Given" for a person. */
  name: string;
  familyNames?: string;
  givenNames?: string;
  orcid?: string;
  affiliation?: string;
}

/** The release's creators: `authors`, else the BibTeX author field (`{{Team}}` an organisation, `Family, Given and ...` people). */
export function creators(config: ReleaseConfig): Creator[] {
  if (config.authors) return config.authors.map(fromAuthor);
  const m = /\bauthor\s*=\s*\{((?:[^{}]|\{(?:[^{}]|\{[^{}]*\})*\})*)\}/i.exec(config.citation.bibtex);
  if (!m) return [];
  return m[1]
    .split(/\s+and\s+/)
    .map((s) => s.trim())
    .filter(Boolean)
    .map((s): Creator => {
      if (/^\{.*\}$/.test(s)) return { kind: 'organisation', name: s.slice(1, -1).replace(/[{}]/g, '') };
      const clean = s.replace(/[{}]/g, '');
      const [family, given] = clean.includes(',') ? clean.split(',', 2).map((x) => x.trim()) : [clean.split(/\s+/).pop()!, clean.split(/\s+/).slice(0, -1).join(' ')];
      return { kind: 'person', name: given ? `${family}, ${given}` : family, familyNames: family, ...(given ? { givenNames: given } : {}) };
    });
}

function fromAuthor(a: AuthorConfig): Creator {
  if ('name' in a) return { kind: 'organisation', name: a.name, ...(a.affiliation ? { affiliation: a.affiliation } : {}) };
  return { kind: 'person', name: a.givenNames ? `${a.familyNames}, ${a.givenNames}` : a.familyNames, familyNames: a.familyNames, ...(a.givenNames ? { givenNames: a.givenNames } : {}), ...(a.orcid ? { orcid: a.orcid } : {}), ...(a.affiliation ? { affiliation: a.affiliation } : {}) };
}

export function publisher(config: ReleaseConfig, who: Creator[]): string {
  return config.publisher ?? who.find((c) => c.kind === 'organisation')?.name ?? config.survey.name ?? config.title;
}

/** The description as plain text: Markdown emphasis, code marks, headings, links and tables removed. */
export function plainDescription(markdown: string, max = 5000): string {
  const text = markdown
    .split('\n')
    .filter((l) => !/^\s*\|/.test(l))
    .map((l) => l.replace(/^#+\s*/, '').replace(/^\s*[-*]\s+/, ''))
    .join('\n')
    .replace(/\[([^\]]*)\]\([^)]*\)/g, '$1')
    .replace(/\*\*|__|`/g, '')
    .replace(/\n{2,}/g, '\n\n')
    .trim();
  if (text.length <= max) return text;
  const cut = text.slice(0, max - 1);
  return cut.slice(0, Math.max(cut.lastIndexOf('. ') + 1, max - 200)).trim() + '…';
}

const DOI_PATTERN = /^10\.\d{4,9}(\.\d+)?\/\S+$/;
const doiOf = (doi?: string) => (doi ? doi.replace(/^https?:\/\/(dx\.)?doi\.org\//i, '').replace(/^doi:/i, '') : undefined);

function median(values: Float64Array): number {
  const f = Float64Array.from(values).filter(Number.isFinite).sort();
  return f.length ? f[Math.floor((f.length - 1) / 2)] : NaN;
}

/** Column specs of the byte-by-byte catalogue: labels, data-centre units, explanations and precision. */
export function mrtColumns(config: ReleaseConfig, docs: ColumnDoc[], catalogue: Table): MrtColumnSpec[] {
  const params = new Map(config.parameters.map((p) => [p.name, p]));
  const stdDecimals = new Map<string, number>();
  for (const p of config.parameters) {
    const std = catalogue.columns.find((c) => c.name === `${p.name}_std`)?.values as Float64Array | undefined;
    const s = std ? median(std) : NaN;
    stdDecimals.set(p.name, s > 0 ? Math.max(0, Math.min(8, 2 - Math.floor(Math.log10(s)))) : 4);
  }
  const relationOf = new Map(config.relations.map((r) => [r.name, r]));
  return docs.map((d): MrtColumnSpec => {
    const base = { name: d.name, unit: cdsUnit(d.unit), explanation: explanation(d) };
    const stat = /^(.*)_(mean|std|p025|p16|p50|p84|p975)$/.exec(d.name);
    if (stat && params.has(stat[1])) return { ...base, decimals: stdDecimals.get(stat[1]) };
    const rel = /^(.*)_(offset|tension)$/.exec(d.name);
    if (rel && relationOf.has(rel[1])) return { ...base, decimals: rel[2] === 'tension' ? 2 : stdDecimals.get(relationOf.get(rel[1])!.y) ?? 3 };
    switch (d.name) {
      case 'ra':
      case 'dec':
        return { ...base, decimals: 'auto', maxDecimals: 8 };
      case 'redshift':
        return { ...base, decimals: 'auto', maxDecimals: 6 };
      case 'ess':
        return { ...base, decimals: 1 };
      case 'chi2':
        return { ...base, decimals: 'auto', maxDecimals: 4 };
      case 'chi2_pvalue':
        return { ...base, exponent: 2 };
      case 'p_sequence':
        return { ...base, decimals: 3 };
      case 'flags':
        return { ...base, explanation: `${d.description.split(':')[0]} (1)` };
      default:
        return { ...base, decimals: 'auto', maxDecimals: 6 };
    }
  });
}

function explanation(d: ColumnDoc): string {
  const t = d.description.replace(/\s+/g, ' ').trim();
  return t.charAt(0).toUpperCase() + t.slice(1);
}

function authorList(who: Creator[]): string {
  return who.map((c) => c.name).join('; ') || 'unknown';
}

/** Write the byte-by-byte catalogue in both forms; returns the files written. */
export async function writeMachineReadable(dl: string, config: ReleaseConfig, docs: ColumnDoc[], catalogue: Table): Promise<string[]> {
  const specs = mrtColumns(config, docs, catalogue);
  const who = creators(config);
  const notes = [`Bitmask of quality flags: ${FLAG_INFO.map((f) => `${f.bit} = ${f.label.toLowerCase()}`).join('; ')}; 0 = none.`, 'Percentiles and medians are of the weighted posterior draws (weighted CDF with midpoint plotting positions, linear interpolation).'];
  const doc = {
    title: `${config.title}, version ${config.version}`,
    authors: authorList(who),
    table: `Posterior summaries of ${catalogue.numRows} galaxies`,
    dataFile: 'catalogue.dat',
    description: [plainDescription(config.description, 1500)],
    notes,
  };
  await mkdir(join(dl, 'cds'), { recursive: true });
  await writeCdsReadme(join(dl, 'cds', 'ReadMe'), join(dl, 'cds', 'catalogue.dat'), catalogue, specs, doc);
  await writeMrt(join(dl, 'catalogue-mrt.txt'), catalogue, specs, { ...doc, dataFile: 'catalogue-mrt.txt' });
  return ['cds/ReadMe', 'cds/catalogue.dat', 'catalogue-mrt.txt'];
}

/** The relation fits as LaTeX tables, one per relation. */
export function relationsLatex(config: ReleaseConfig, relations: RelationContent[]): string {
  const out = [`% ${latexText(config.title)}, version ${latexText(config.version)}: relation fits per redshift bin.`, '% Base LaTeX only; paste into the paper.', ''];
  for (const r of relations) {
    const rows: string[][] = [];
    for (const b of r.bins)
      for (const f of b.fits)
        rows.push([`$${b.zLo}<z<${b.zHi}$`, latexText(f.method), String(f.n), latexEstimate(f.a.median, f.a.lo, f.a.hi), latexEstimate(f.b.median, f.b.lo, f.b.hi), latexEstimate(f.s.median, f.s.lo, f.s.hi)]);
    out.push(
      latexTable({
        caption: `${latexText(r.title)}: $y = a + b\\,(x - ${r.pivot}) + \\mathcal{N}(0, s^2)$ per redshift bin, with $x$ = \\texttt{${latexText(r.x.name)}} and $y$ = \\texttt{${latexText(r.y.name)}}; posterior medians with 68\\% credible intervals.`,
        label: `tab:${r.name.replace(/_/g, '-')}`,
        align: 'llrccc',
        head: ['Redshift', 'Method', '$N$', '$a$', '$b$', '$s$'],
        rows,
        note: `Galaxies: ${latexText(r.population)}${config.relations.find((c) => c.name === r.name)?.aboveCompleteness ? ', above the mass-completeness limit of each bin' : ''}. Source: ${latexText(config.title)}, version ${latexText(config.version)}.`,
      }),
      '',
    );
  }
  return out.join('\n');
}

const yamlString = (s: string) => JSON.stringify(s);

/** CITATION.cff (Citation File Format 1.2.0): a dataset with its authors, version, date, licence and identifiers. */
export function citationCff(config: ReleaseConfig): string {
  const who = creators(config);
  const L = ['cff-version: 1.2.0', `message: ${yamlString(`If you use this data release, please cite it as below. ${config.citation.text}`)}`, 'type: dataset', `title: ${yamlString(config.title)}`, `version: ${yamlString(config.version)}`, `date-released: ${yamlString(config.releaseDate)}`];
  if (LICENCES[config.licence]) L.push(`license: ${config.licence}`);
  const doi = doiOf(config.doi);
  if (doi && DOI_PATTERN.test(doi)) L.push(`doi: ${yamlString(doi)}`);
  if (config.url) L.push(`url: ${yamlString(config.url)}`);
  L.push('authors:');
  for (const c of who) {
    if (c.kind === 'organisation') L.push(`  - name: ${yamlString(c.name)}`);
    else {
      L.push(`  - family-names: ${yamlString(c.familyNames!)}`);
      if (c.givenNames) L.push(`    given-names: ${yamlString(c.givenNames)}`);
      if (c.orcid) L.push(`    orcid: ${yamlString(c.orcid)}`);
    }
    if (c.affiliation) L.push(`    affiliation: ${yamlString(c.affiliation)}`);
  }
  L.push(`abstract: ${yamlString(plainDescription(config.description, 2000))}`);
  L.push('keywords:', ...['galaxies', 'spectral energy distributions', 'stellar populations', 'Bayesian inference', 'catalogue'].map((k) => `  - ${yamlString(k)}`));
  return L.join('\n') + '\n';
}

/** DataCite Metadata Schema 4 properties in the JSON form of a DOI deposit (`data.attributes`). */
export function dataciteJson(config: ReleaseConfig, files: { formats: string[]; objects: number; previous?: { version: string; doi?: string; url?: string } }): unknown {
  const who = creators(config);
  const doi = doiOf(config.doi);
  const lic = LICENCES[config.licence];
  const related = [];
  if (files.previous?.doi) related.push({ relatedIdentifier: doiOf(files.previous.doi), relatedIdentifierType: 'DOI', relationType: 'IsNewVersionOf' });
  else if (files.previous?.url) related.push({ relatedIdentifier: files.previous.url, relatedIdentifierType: 'URL', relationType: 'IsNewVersionOf' });
  return {
    data: {
      type: 'dois',
      attributes: {
        ...(doi ? { doi } : {}),
        creators: who.map((c) =>
          c.kind === 'organisation'
            ? { name: c.name, nameType: 'Organizational', ...(c.affiliation ? { affiliation: [{ name: c.affiliation }] } : {}) }
            : {
                name: c.name,
                nameType: 'Personal',
                familyName: c.familyNames,
                ...(c.givenNames ? { givenName: c.givenNames } : {}),
                ...(c.orcid ? { nameIdentifiers: [{ nameIdentifier: c.orcid, nameIdentifierScheme: 'ORCID', schemeUri: 'https://orcid.org' }] } : {}),
                ...(c.affiliation ? { affiliation: [{ name: c.affiliation }] } : {}),
              },
        ),
        titles: [{ title: config.title }],
        publisher: publisher(config, who),
        publicationYear: Number(config.releaseDate.slice(0, 4)),
        types: { resourceTypeGeneral: 'Dataset', resourceType: 'Catalogue of galaxy posterior summaries' },
        subjects: [{ subject: 'Astronomy' }, { subject: 'Galaxies' }, { subject: 'Spectral energy distributions' }],
        dates: [{ date: config.releaseDate, dateType: 'Issued' }],
        language: 'en',
        version: config.version,
        ...(related.length ? { relatedIdentifiers: related } : {}),
        sizes: [`${files.objects} objects`],
        formats: files.formats,
        rightsList: [lic ? { rights: lic.name, rightsUri: lic.url, rightsIdentifier: config.licence.toLowerCase(), rightsIdentifierScheme: 'SPDX', schemeUri: 'https://spdx.org/licenses/' } : { rights: config.licence }],
        descriptions: [{ description: plainDescription(config.description), descriptionType: 'Abstract' }],
        ...(config.url ? { url: config.url } : {}),
        schemaVersion: 'http://datacite.org/schema/kernel-4',
      },
    },
  };
}

/** Write relations.tex, CITATION.cff and datacite.json; returns the files written. */
export async function writePaperFiles(dl: string, config: ReleaseConfig, relations: RelationContent[], info: { objects: number; previous?: { version: string; doi?: string; url?: string } }): Promise<string[]> {
  const written: string[] = [];
  if (relations.some((r) => r.bins.some((b) => b.fits.length))) {
    await writeFile(join(dl, 'relations.tex'), relationsLatex(config, relations));
    written.push('relations.tex');
  }
  if (creators(config).length) {
    await writeFile(join(dl, 'CITATION.cff'), citationCff(config));
    written.push('CITATION.cff');
    const formats = [...new Set(['csv', 'fits', 'arrow', 'vot', 'json', 'parquet', 'txt'].map((e) => MEDIA_TYPES[e]))];
    await writeFile(join(dl, 'datacite.json'), JSON.stringify(dataciteJson(config, { formats, ...info }), null, 1) + '\n');
    written.push('datacite.json');
  }
  return written;
}

/** schema.org Dataset metadata of the release page (JSON-LD); links are relative to the release page unless the release's `url` is known. */
export function datasetJsonLd(config: ReleaseConfig, downloads: DownloadEntry[], objects: number): Record<string, unknown> {
  const who = creators(config);
  const base = config.url ?? './';
  const lic = LICENCES[config.licence];
  const doi = doiOf(config.doi);
  const ext = (f: string) => f.split('.').pop() ?? '';
  return {
    '@context': 'https://schema.org/',
    '@type': 'Dataset',
    name: config.title,
    description: plainDescription(config.description),
    version: config.version,
    datePublished: config.releaseDate,
    license: lic ? lic.url : config.licence,
    citation: config.citation.text,
    creator: who.map((c) => (c.kind === 'organisation' ? { '@type': 'Organization', name: c.name } : { '@type': 'Person', name: c.name, familyName: c.familyNames, ...(c.givenNames ? { givenName: c.givenNames } : {}), ...(c.orcid ? { '@id': c.orcid } : {}) })),
    publisher: { '@type': 'Organization', name: publisher(config, who) },
    ...(doi ? { identifier: `https://doi.org/${doi}` } : {}),
    ...(config.url ? { url: config.url } : {}),
    isAccessibleForFree: true,
    keywords: ['galaxies', 'spectral energy distributions', 'stellar populations', 'Bayesian inference', ...config.parameters.map((p) => p.description)],
    variableMeasured: config.parameters.map((p) => ({ '@type': 'PropertyValue', name: p.name, description: p.description, ...(p.unit ? { unitText: p.unit } : {}) })),
    measurementTechnique: 'Bayesian fitting of spectral energy distributions',
    size: `${objects} objects`,
    distribution: downloads
      .filter((d) => d.file !== 'SHA256SUMS')
      .map((d) => ({ '@type': 'DataDownload', name: d.file, encodingFormat: MEDIA_TYPES[ext(d.file)] ?? d.format, contentUrl: `${base}downloads/${d.file}`, description: d.notes || d.format })),
  };
}
