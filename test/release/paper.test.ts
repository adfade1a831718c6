/**
 * The files a paper and an archive ask for, each read back by a reader outside the project:
 * the byte-by-byte catalogue by astropy's readers for that format (ascii.cds with the ReadMe,
 * ascii.mrt for the journal's single file), compared value by value with catalogue.csv; the
 * LaTeX table compiled by pdflatex (structure checked without it); CITATION.cff parsed by
 * PyYAML and checked against the Citation File Format 1.2.0 rules; datacite.json against the
 * mandatory properties and controlled lists of the DataCite Metadata Schema 4; the schema.org
 * JSON-LD parsed into RDF by rdflib.
 */
import { beforeAll, afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync, writeFileSync, copyFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { runPipeline } from '../../src/lib/pipeline/run.ts';
import { describeWithPython, runPython } from '../helpers/python.ts';
import { shouldRunWithTools } from '../helpers/tools.ts';

let tmp: string;
let dl: string;
let content: string;

beforeAll(async () => {
  tmp = mkdtempSync(join(tmpdir(), 'posterity-paper-'));
  const bundle = join(tmp, 'bundle');
  await generateDemoBundle(bundle, { nObjects: 120, drawsRange: [128, 256] });
  dl = join(tmp, 'downloads');
  content = join(tmp, 'content');
  await runPipeline(bundle, { contentDir: content, downloadsDir: dl });
}, 600_000);
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

const COMPARE = `
import csv, math, warnings
from astropy.io import ascii
from astropy import units as u
args = json.load(sys.stdin)
out = {}
with warnings.catch_warnings(record=True) as w:
    warnings.simplefilter('always')
    cds = ascii.read(args['dat'], format='cds', readme=args['readme'])
    mrt = ascii.read(args['mrt'], format='mrt')
    out['warnings'] = [str(x.message) for x in w]
rows = list(csv.DictReader(open(args['csv'], newline='')))
# the declared format of each column, from the ReadMe as astropy parsed it
fmt = {c.name: c.info.format for c in cds.itercols()}
def declared(readme):
    d = {}
    for line in open(readme):
        m = __import__('re').match(r'\\s*(\\d+)?-?\\s*(\\d+)\\s+([AIFE][0-9.]+)\\s+(\\S+)\\s+(\\S+)', line)
        if m: d[m.group(5)] = (m.group(3), m.group(4))
    return d
dec = declared(args['readme'])
out['columns'] = {'cds': cds.colnames, 'mrt': mrt.colnames, 'csv': list(rows[0].keys())}
out['n'] = [len(cds), len(mrt), len(rows)]
out['units'] = {}
for name, (f, unit) in dec.items():
    if unit != '---':
        u.Unit(unit, format='cds')
    out['units'][name] = unit
bad = []
checked = 0
for t, label in ((cds, 'cds'), (mrt, 'mrt')):
    for name in t.colnames:
        f = dec[name][0]
        col = t[name]
        for i, r in enumerate(rows):
            want = r[name]
            got = col[i]
            masked = bool(col.mask[i]) if hasattr(col, 'mask') else False
            checked += 1
            if f[0] == 'A':
                if (str(got) if not masked else '') != want: bad.append([label, name, i, want, str(got)])
            elif f[0] == 'I':
                w = {'true': '1', 'false': '0'}.get(want, want)
                if (want == '' and not masked) or (want != '' and (masked or int(got) != int(w))): bad.append([label, name, i, want, str(got)])
            else:
                if want in ('', 'inf', '-inf', 'nan'):
                    if not masked: bad.append([label, name, i, want, str(got)])
                    continue
                if masked: bad.append([label, name, i, want, 'masked']); continue
                v = float(want); g = float(got)
                d = int(f.split('.')[1])
                # half a unit in the last declared place (F: after the point; E: of the mantissa)
                tol = (0.5 * 10 ** -d if f[0] == 'F' else 0.5 * 10 ** (math.floor(math.log10(abs(v))) - d) if v else 0) * (1 + 1e-9) + 1e-15
                if abs(g - v) > tol: bad.append([label, name, i, want, str(g), f])
out['checked'] = checked
out['bad'] = bad[:20]
out['nbad'] = len(bad)
print(json.dumps(out))
`;

describeWithPython('the byte-by-byte catalogue read back by astropy', ['astropy'], () => {
  it('both forms hold every column and row of catalogue.csv, equal at the precision the ReadMe declares, with units astropy parses', () => {
    const r = runPython(COMPARE, { dat: join(dl, 'cds', 'catalogue.dat'), readme: join(dl, 'cds', 'ReadMe'), mrt: join(dl, 'catalogue-mrt.txt'), csv: join(dl, 'catalogue.csv') }) as {
      warnings: string[];
      columns: { cds: string[]; mrt: string[]; csv: string[] };
      n: number[];
      units: Record<string, string>;
      checked: number;
      bad: unknown[];
      nbad: number;
    };
    expect(r.warnings).toEqual([]);
    expect(r.columns.cds).toEqual(r.columns.csv);
    expect(r.columns.mrt).toEqual(r.columns.csv);
    expect(r.n).toEqual([120, 120, 120]);
    // the data centre's unit syntax: logarithmic units in brackets, solar masses as Msun
    expect(r.units).toMatchObject({ ra: 'deg', log_mstar_p50: '[Msun]', log_sfr_p50: '[Msun/yr]', av_p50: 'mag', log_age_p50: '[yr]' });
    expect(r.checked).toBe(2 * 120 * r.columns.csv.length);
    expect(r.bad).toEqual([]);
    expect(r.nbad).toBe(0);
  });

  it('positions, redshifts and true values are exact; summaries are rounded to their errors', () => {
    const readme = readFileSync(join(dl, 'cds', 'ReadMe'), 'utf8');
    expect(readme).toMatch(/^Byte-by-byte Description of file: catalogue\.dat$/m);
    expect(readme).toMatch(/\sF\d+\.7\s+deg\s+ra\s/); // the generator writes 7 decimals
    expect(readme).toMatch(/\sF\d+\.5\s+---\s+redshift\s/);
    expect(readme).toMatch(/\sE\d+\.2\s+---\s+chi2_pvalue\s/);
    expect(readme).toMatch(/\sF\d+\.[34]\s+\[Msun\]\s+log_mstar_p50\s/);
    for (const line of readme.split('\n')) expect(line.length, line).toBeLessThanOrEqual(80);
  });
});

describe('the LaTeX table of the relation fits', () => {
  const tex = () => readFileSync(join(dl, 'relations.tex'), 'utf8');
  it('has one table per fitted relation, six cells a row, balanced braces and environments', () => {
    const t = tex();
    expect(t.match(/\\begin\{table\}/g)!.length).toBe(2);
    expect(t.match(/\\end\{table\}/g)!.length).toBe(2);
    let depth = 0;
    for (const ch of t.replace(/\\[{}]/g, '')) {
      if (ch === '{') depth++;
      if (ch === '}') depth--;
      expect(depth).toBeGreaterThanOrEqual(0);
    }
    expect(depth).toBe(0);
    const rows = t.split('\n').filter((l) => /^\$[\d.]+<z<[\d.]+\$ &/.test(l));
    expect(rows.length).toBeGreaterThan(10);
    for (const r of rows) {
      expect(r.split(' & ').length, r).toBe(6);
      expect(r).toMatch(/\$-?[\d.]+\^\{\+[\d.]+\}_\{-[\d.]+\}\$ \\\\$/);
    }
    expect(t).not.toMatch(/[^\x00-\x7f]/);
  });

  it.runIf(shouldRunWithTools(['pdflatex']))('compiles with pdflatex in a plain article', () => {
    const dir = mkdtempSync(join(tmpdir(), 'posterity-tex-'));
    copyFileSync(join(dl, 'relations.tex'), join(dir, 'relations.tex'));
    writeFileSync(join(dir, 'paper.tex'), '\\documentclass{article}\n\\begin{document}\n\\input{relations}\n\\end{document}\n');
    const r = spawnSync('pdflatex', ['-interaction=nonstopmode', '-halt-on-error', 'paper.tex'], { cwd: dir, encoding: 'utf8', timeout: 120_000 });
    expect(r.status, r.stdout.slice(-3000)).toBe(0);
    expect(readFileSync(join(dir, 'paper.pdf')).subarray(0, 5).toString()).toBe('%PDF-');
    expect(r.stdout).not.toMatch(/Missing character|Undefined control sequence/);
    rmSync(dir, { recursive: true, force: true });
  });
});

describeWithPython('CITATION.cff, datacite.json and the JSON-LD', ['yaml', 'rdflib'], () => {
  it('CITATION.cff parses as YAML and follows the Citation File Format 1.2.0', () => {
    const cff = runPython(`import yaml\nprint(json.dumps(yaml.safe_load(open(json.load(sys.stdin)).read()), default=str))`, join(dl, 'CITATION.cff')) as Record<string, any>;
    // CFF 1.2.0: cff-version, message, title and authors are required; type is software or dataset;
    // dates are strings YYYY-MM-DD; licence an SPDX identifier; a person has family-names, an entity a name
    expect(cff['cff-version']).toBe('1.2.0');
    for (const k of ['message', 'title', 'authors']) expect(cff[k], k).toBeTruthy();
    expect(cff.type).toBe('dataset');
    expect(cff['date-released']).toMatch(/^\d{4}-(0[1-9]|1[012])-(0[1-9]|[12]\d|3[01])$/);
    expect(typeof cff['date-released']).toBe('string');
    expect(cff.license).toBe('CC-BY-4.0');
    expect(cff.version).toBe('1.0.0');
    expect(cff.authors).toEqual([{ name: 'Veyra Deep Field Collaboration' }]);
    const allowed = new Set(['cff-version', 'message', 'type', 'title', 'version', 'date-released', 'license', 'doi', 'url', 'authors', 'abstract', 'keywords', 'identifiers', 'repository', 'preferred-citation', 'references', 'contact', 'commit', 'license-url', 'repository-artifact', 'repository-code']);
    for (const k of Object.keys(cff)) expect(allowed.has(k), k).toBe(true);
  });

  it('datacite.json holds the mandatory DataCite properties with values from its controlled lists', () => {
    const a = JSON.parse(readFileSync(join(dl, 'datacite.json'), 'utf8')).data.attributes;
    // DataCite Metadata Schema 4: Creator, Title, Publisher, PublicationYear and ResourceType are
    // mandatory (the identifier is assigned on registration); nameType Personal or Organizational
    expect(a.creators).toEqual([{ name: 'Veyra Deep Field Collaboration', nameType: 'Organizational' }]);
    expect(a.titles[0].title).toMatch(/Veyra Deep Field/);
    expect(a.publisher).toBe('Veyra Deep Field Collaboration');
    expect(a.publicationYear).toBe(2026);
    expect(a.types.resourceTypeGeneral).toBe('Dataset');
    expect(a.dates).toEqual([{ date: '2026-12-01', dateType: 'Issued' }]);
    expect(a.version).toBe('1.0.0');
    expect(a.rightsList[0]).toMatchObject({ rightsIdentifier: 'cc-by-4.0', rightsIdentifierScheme: 'SPDX' });
    expect(a.descriptions[0].descriptionType).toBe('Abstract');
  });

  it('the JSON-LD parses into schema.org triples with name, version, licence, citation and download links', () => {
    const doc = JSON.parse(readFileSync(join(content, 'dataset.json'), 'utf8'));
    expect(doc['@context']).toBe('https://schema.org/');
    // offline: the schema.org context is given as its vocabulary, with the address-valued properties as IRIs
    const r = runPython(
      `import rdflib
doc = json.load(sys.stdin)
doc['@context'] = {'@vocab': 'https://schema.org/', 'contentUrl': {'@type': '@id'}, 'license': {'@type': '@id'}}
g = rdflib.Graph()
g.parse(data=json.dumps(doc), format='json-ld', base='https://example.org/release/')
S = rdflib.Namespace('https://schema.org/')
ds = next(g.subjects(rdflib.RDF.type, S.Dataset))
one = lambda p: str(next(g.objects(ds, p)))
print(json.dumps({'name': one(S.name), 'version': one(S.version), 'license': one(S.license), 'citation': one(S.citation),
  'urls': sorted(str(u) for d in g.objects(ds, S.distribution) for u in g.objects(d, S.contentUrl)), 'triples': len(g)}))`,
      doc,
    ) as { name: string; version: string; license: string; citation: string; urls: string[]; triples: number };
    expect(r.name).toMatch(/Veyra Deep Field/);
    expect(r.version).toBe('1.0.0');
    expect(r.license).toBe('https://creativecommons.org/licenses/by/4.0/');
    expect(r.citation).toMatch(/Collaboration \(2026\)/);
    for (const f of ['catalogue.csv', 'catalogue.fits', 'catalogue.vot', 'catalogue-mrt.txt', 'CITATION.cff', 'cds/ReadMe'])
      expect(r.urls, f).toContain(`https://example.org/release/downloads/${f}`);
    expect(r.triples).toBeGreaterThan(50);
    expect(doc.description.length).toBeGreaterThanOrEqual(50);
    expect(doc.description.length).toBeLessThanOrEqual(5000);
  });
});
