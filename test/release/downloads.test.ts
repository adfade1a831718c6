/**
 * The published downloads open in the field's own tools without complaint:
 * - catalogue.fits passes Debian's fitsverify (HEASARC) with no errors;
 * - catalogue.vot validates against the IVOA VOTable 1.4 XSD shipped with Debian's
 *   python3-astropy (xmllint, libxml2-utils), and every UCD passes the UCD1+ word list
 *   (also from astropy) including the rule of which words may stand first;
 * - astropy reads catalogue.fits and catalogue.vot, and every value, unit and column name
 *   equals ours (compared with catalogue.csv, value by value, not a sample);
 * - every download astropy has a reader for (catalogue.vot, catalogue.fits, the CSV files,
 *   per-object draws and photometry) opens with zero warnings: astropy's VOTable validator,
 *   a VOTable parse with verify='warn', and Table.read, every warning recorded. This for the
 *   demo release and for the tiny fixture bundle. samples.parquet is read only where pyarrow
 *   is installed: astropy 5.2.1 reads Parquet through pyarrow, which Debian's python3-astropy
 *   does not pull in;
 * - the Arrow library reads catalogue.arrow with the same values;
 * - our own readers round-trip every format we write.
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { mkdirSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tableFromIPC } from 'apache-arrow';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { runPipeline } from '../../src/lib/pipeline/run.ts';
import { PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { readTable } from '../../src/lib/io/read.ts';
import { readVOTable } from '../../src/lib/io/votable.ts';
import { checkUcd, parseUcdWordList } from '../../src/lib/io/ucd.ts';
import { parseUnit, unitNote } from '../../src/lib/io/units.ts';
import { stringAt, type Table } from '../../src/lib/io/table.ts';
import { describeWithTools, runTool } from '../helpers/tools.ts';
import { describeWithPython, hasPython, runPython, PYTHON } from '../helpers/python.ts';
import { astropyRead, type AstropyFormat } from '../helpers/astropy-read.ts';
import { spawnSync } from 'node:child_process';

const ROOT = join(PROJECT_ROOT, 'test-output', 'downloads');
const DL = join(ROOT, 'content', 'downloads');
const TINY_DL = join(ROOT, 'tiny', 'downloads');

let csv: Table;
beforeAll(async () => {
  rmSync(ROOT, { recursive: true, force: true });
  mkdirSync(ROOT, { recursive: true });
  await generateDemoBundle(join(ROOT, 'bundle'), { nObjects: 90 });
  await runPipeline(join(ROOT, 'bundle'), { contentDir: join(ROOT, 'content'), downloadsDir: DL });
  await runPipeline(join(PROJECT_ROOT, 'test', 'fixtures', 'bundles', 'tiny'), { contentDir: join(ROOT, 'tiny'), downloadsDir: TINY_DL });
  csv = await readTable(join(DL, 'catalogue.csv'));
}, 600_000);

/** Every file under a downloads folder that astropy has a reader for, with the reader's format. */
function astropyReadable(dl: string): [string, AstropyFormat][] {
  const out: [string, AstropyFormat][] = [];
  const walk = (d: string) => {
    for (const e of readdirSync(d, { withFileTypes: true }).sort((a, b) => (a.name < b.name ? -1 : 1))) {
      const p = join(d, e.name);
      if (e.isDirectory()) walk(p);
      else if (e.name.endsWith('.vot')) out.push([p, 'votable']);
      else if (e.name.endsWith('.fits')) out.push([p, 'fits']);
      else if (/\.csv(\.gz)?$/.test(e.name)) out.push([p, 'ascii.csv']);
      else if (e.name.endsWith('.parquet') && hasPython(['pyarrow'])) out.push([p, 'parquet']);
    }
  };
  walk(dl);
  return out;
}

/** Values of a CSV column as numbers (NaN for empty) or strings. */
function csvColumn(name: string): (number | string)[] {
  const c = csv.columns.find((x) => x.name === name)!;
  return (c.values as string[]).map((v) => (v === '' ? NaN : Number.isNaN(Number(v)) || name === 'id' || name === 'population' ? v : Number(v)));
}

function sameNumbers(a: ArrayLike<number>, b: ArrayLike<number>, rel = 1e-12): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) {
    const x = a[i], y = b[i];
    if (Number.isNaN(x) && Number.isNaN(y)) continue;
    if (Math.abs(x - y) > rel * Math.max(Math.abs(x), Math.abs(y), 1e-300)) return false;
  }
  return true;
}

describe('our own readers', () => {
  it('read back every catalogue format with the same values', async () => {
    const fits = await readTable(join(DL, 'catalogue.fits'));
    const arrow = await readTable(join(DL, 'catalogue.arrow'));
    const vot = await readVOTable(join(DL, 'catalogue.vot'));
    for (const t of [fits, arrow, vot]) {
      expect(t.numRows).toBe(csv.numRows);
      for (const c of csv.columns) {
        const other = t.columns.find((x) => x.name === c.name);
        expect(other, c.name).toBeDefined();
        for (let i = 0; i < csv.numRows; i++) {
          const a = stringAt(c, i);
          const b = stringAt(other!, i);
          if (a === b) continue;
          const na = Number(a), nb = Number(b);
          if (a === '' && (b === '' || b === 'NaN')) continue;
          if (other!.kind === 'bool') {
            expect(a === 'true' ? '1' : a === 'false' ? '0' : a, `${c.name} row ${i + 1}`).toBe(b);
            continue;
          }
          expect(Math.abs(na - nb) <= 1e-12 * Math.max(Math.abs(na), 1e-300), `${c.name} row ${i + 1}: ${a} vs ${b}`).toBe(true);
        }
      }
    }
  });

  it('the Arrow library reads catalogue.arrow with units in field metadata', () => {
    const t = tableFromIPC(readFileSync(join(DL, 'catalogue.arrow')));
    expect(t.numRows).toBe(csv.numRows);
    const ra = t.getChild('ra')!.toArray() as Float64Array;
    expect(sameNumbers(ra, csvColumn('ra') as number[])).toBe(true);
    expect(t.schema.fields.find((f) => f.name === 'ra')!.metadata.get('unit')).toBe('deg');
    const ids = t.getChild('id')!.toArray() as string[];
    expect([...ids]).toEqual(csvColumn('id'));
  });
});

describeWithTools('fitsverify (HEASARC) on catalogue.fits', ['fitsverify'], () => {
  it('reports no errors and no warnings', () => {
    const r = runTool('fitsverify', ['-q', join(DL, 'catalogue.fits')]);
    expect(r.stdout + r.stderr).toMatch(/verification OK/);
  });
});

describeWithTools('VOTable 1.4 XSD (IVOA, as shipped by astropy) on catalogue.vot', ['xmllint'], () => {
  it('validates', () => {
    const dir = spawnSync(PYTHON, ['-c', 'import astropy.io.votable, os; print(os.path.dirname(astropy.io.votable.__file__))'], { encoding: 'utf8' }).stdout.trim();
    const r = runTool('xmllint', ['--noout', '--schema', join(dir, 'data', 'VOTable.v1.4.xsd'), join(DL, 'catalogue.vot')]);
    expect(r.stderr).toContain('validates');
    expect(r.status).toBe(0);
  });

  it('every UCD passes the UCD1+ word list, including which words may stand first', () => {
    const dir = spawnSync(PYTHON, ['-c', 'import astropy.io.votable, os; print(os.path.dirname(astropy.io.votable.__file__))'], { encoding: 'utf8' }).stdout.trim();
    const words = parseUcdWordList(readFileSync(join(dir, 'data', 'ucd1p-words.txt'), 'utf8'));
    const release = JSON.parse(readFileSync(join(DL, 'release.json'), 'utf8')) as { columns: { name: string; ucd: string }[] };
    const bad = release.columns.filter((c) => c.ucd).map((c) => [c.name, c.ucd, checkUcd(c.ucd, words)]).filter((x) => x[2] !== null);
    expect(bad).toEqual([]);
  });
});

describeWithPython('astropy (Debian python3-astropy) reads the catalogue', ['astropy', 'numpy'], () => {
  it('FITS and VOTable: every column name, unit and value equals ours', () => {
    const release = JSON.parse(readFileSync(join(DL, 'release.json'), 'utf8')) as { columns: { name: string; unit: string }[] };
    const out = runPython(
      `
import warnings, math
from astropy.table import Table
warnings.simplefilter('ignore')
args = json.load(sys.stdin)
res = {}
for fmt, path in (('fits', args['fits']), ('votable', args['vot'])):
    t = Table.read(path, format=fmt)
    cols = {}
    for name in t.colnames:
        c = t[name]
        vals = []
        for v in c.tolist():
            if isinstance(v, bytes): v = v.decode()
            if isinstance(v, float) and math.isnan(v): v = None
            vals.append(v)
        mask = getattr(c, 'mask', None)
        if mask is not None and mask is not False:
            try:
                vals = [None if m else v for v, m in zip(vals, list(mask))]
            except TypeError:
                pass
        cols[name] = {'unit': None if c.unit is None else str(c.unit), 'values': vals}
    res[fmt] = cols
from astropy.io import fits
hdr = fits.getheader(args['fits'], 1)
res['tcomm'] = {hdr['TTYPE%d' % i]: hdr.get('TCOMM%d' % i) for i in range(1, hdr['TFIELDS'] + 1)}
print(json.dumps(res))
`,
      { fits: join(DL, 'catalogue.fits'), vot: join(DL, 'catalogue.vot') },
    ) as Record<'fits' | 'votable', Record<string, { unit: string | null; values: (number | string | boolean | null)[] }>> & { tcomm: Record<string, string | null> };
    for (const fmt of ['fits', 'votable'] as const) {
      const cols = out[fmt];
      expect(Object.keys(cols)).toEqual(csv.columns.map((c) => c.name));
      for (const doc of release.columns) {
        const ours = csvColumn(doc.name);
        const theirs = cols[doc.name].values;
        expect(theirs.length, `${fmt} ${doc.name}`).toBe(ours.length);
        for (let i = 0; i < ours.length; i++) {
          const a = ours[i];
          const b = theirs[i];
          if (typeof a === 'number' && Number.isNaN(a)) {
            expect(b === null || b === '' || (typeof b === 'number' && Number.isNaN(b)), `${fmt} ${doc.name} row ${i + 1}: ${b}`).toBe(true);
          } else if (typeof a === 'number') {
            const nb = typeof b === 'boolean' ? (b ? 1 : 0) : Number(b);
            expect(Math.abs(a - nb) <= 1e-12 * Math.max(Math.abs(a), 1e-300), `${fmt} ${doc.name} row ${i + 1}: ${a} vs ${b}`).toBe(true);
          } else {
            expect(String(b ?? ''), `${fmt} ${doc.name} row ${i + 1}`).toBe(a);
          }
        }
        // units: astropy may normalise the spelling (e.g. 'deg'), but a unit must not be lost.
        // A log10 quantity is 'dex' in the VOTable and has no TUNITn in FITS; both files then
        // name its physical unit in the description (src/lib/io/units.ts).
        if (!doc.unit) continue;
        const spec = parseUnit(doc.unit);
        expect(spec.ok, doc.unit).toBe(true);
        if (!spec.ok) continue;
        if (!spec.unit.log) expect(cols[doc.name].unit, `${fmt} ${doc.name} unit`).not.toBeNull();
        else if (fmt === 'votable') expect(cols[doc.name].unit, `${fmt} ${doc.name} unit`).toBe('dex');
        else {
          expect(cols[doc.name].unit, `${fmt} ${doc.name} unit`).toBeNull();
          expect(out.tcomm[doc.name], `TCOMM of ${doc.name}`).toContain(unitNote(spec.unit)!);
        }
      }
    }
    // the demo's log10 stellar mass, as written in its release.json: log(solMass)
    const mass = release.columns.find((c) => c.name === 'log_mstar_p50')!;
    expect(mass.unit).toBe('dex(solMass)');
    expect(out.tcomm.log_mstar_p50).toContain('log10 of the value in solMass');
  });
});

describeWithPython('astropy opens every download without a single warning', ['astropy'], () => {
  for (const [name, dir] of [['demo release', DL], ['tiny fixture bundle', TINY_DL]] as const) {
    it(`${name}: validator, VOTable parse and Table.read report nothing`, () => {
      const files = astropyReadable(dir);
      const formats = new Set(files.map((f) => f[1]));
      for (const f of ['votable', 'fits', 'ascii.csv'] as const) expect(formats.has(f), f).toBe(true);
      expect(files.some((f) => f[0].includes('/objects/') && f[0].endsWith('draws.fits')), 'per-object draws').toBe(true);
      const got = astropyRead(files);
      const warned = got.filter((r) => r.warnings.length).map((r) => ({ file: r.path.slice(dir.length + 1), warnings: r.warnings }));
      expect(warned).toEqual([]);
      expect(got.every((r) => r.rows > 0)).toBe(true);
    });
  }
});
