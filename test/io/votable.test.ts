/**
 * VOTable 1.4 writer checked against the IVOA VOTable 1.4 XML Schema (the copy shipped with
 * astropy, used in place, via xmllint) and against astropy.io.votable as an independent
 * reader, for TABLEDATA and BINARY2; plus the round trip through our own reader.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readVOTable, writeVOTable, type WriteVOTableOptions } from '../../src/lib/io/votable.ts';
import type { Table } from '../../src/lib/io/table.ts';
import { cell, everyKindTable, expectSameTable } from '../helpers/everyKind.ts';
import { describeWithPython, hasPython, runPython } from '../helpers/python.ts';
import { runTool, shouldRunWithTools } from '../helpers/tools.ts';
import { astropyRead } from '../helpers/astropy-read.ts';
import { parseUnit, unitLabel, withFormatUnits } from '../../src/lib/io/units.ts';

let dir = '';
beforeAll(() => { dir = mkdtempSync(path.join(tmpdir(), 'posterity-vot-')); });
afterAll(() => { rmSync(dir, { recursive: true, force: true }); });

const OPTS: WriteVOTableOptions = {
  resourceName: 'demo_release',
  description: 'A synthetic release & its <catalogue>',
  coosys: { id: 'icrs_sys', system: 'ICRS', epoch: 'J2000' },
  raDecColumns: ['ra', 'dec'],
  params: { release: 'DR1', note: 'quotes " and \' and <tags>' },
};

/** A larger table with ids beyond 2^53 and nulls, to exercise BINARY2 across base64 chunks. */
function bigTable(n: number): Table {
  const id = new BigInt64Array(n);
  const x = new Float64Array(n);
  const k = new Int32Array(n);
  const valid = new Uint8Array(n).fill(1);
  const s: string[] = [];
  for (let i = 0; i < n; i++) {
    id[i] = 9007199254740993n + BigInt(i) * 1000003n;
    x[i] = i % 97 === 0 ? NaN : Math.sin(i) * 1e3;
    k[i] = i * 7 - 5000;
    if (i % 13 === 0) valid[i] = 0;
    s.push(`obj-${i}${i % 5 === 0 ? '-é' : ''}`);
  }
  return {
    numRows: n,
    columns: [
      { name: 'id', kind: 'int64', values: id, ucd: 'meta.id;meta.main' },
      { name: 'x', kind: 'float64', values: x, unit: 'mag' },
      { name: 'k', kind: 'int32', values: k, valid },
      { name: 's', kind: 'string', values: s },
    ],
  };
}

describe('VOTable: our own round trip', () => {
  for (const serialization of ['TABLEDATA', 'BINARY2'] as const) {
    it(`${serialization} reads back exactly`, async () => {
      const p = path.join(dir, `rt-${serialization}.vot`);
      const t = everyKindTable();
      await writeVOTable(p, t, { ...OPTS, serialization });
      const back = await readVOTable(p);
      // VOTable has nulls for every type, so string nulls would survive; the table has none.
      expectSameTable(back, t);
      expect((back.columns[0]!.values as BigInt64Array)[0]).toBe(9007199254740993n);
      expect(back.meta).toEqual({ release: 'DR1', note: 'quotes " and \' and <tags>' });
    });
  }

  it('switches to BINARY2 above the row threshold, and the bytes are deterministic', async () => {
    const t = bigTable(3000);
    const a = path.join(dir, 'auto-a.vot');
    const b = path.join(dir, 'auto-b.vot');
    await writeVOTable(a, t, { resourceName: 'big', binaryThresholdRows: 2999 });
    await writeVOTable(b, t, { resourceName: 'big', binaryThresholdRows: 2999 });
    const text = readFileSync(a, 'utf8');
    expect(text).toContain('<BINARY2>');
    expect(text).not.toContain('<TABLEDATA>');
    expect(readFileSync(a).equals(readFileSync(b))).toBe(true);
    expectSameTable(await readVOTable(a), t);
    const small = path.join(dir, 'auto-small.vot');
    await writeVOTable(small, t, { resourceName: 'big' });
    expect(readFileSync(small, 'utf8')).toContain('<TABLEDATA>');
  });

  it('refuses a position column that is not there, and a malformed epoch', async () => {
    const p = path.join(dir, 'bad.vot');
    await expect(writeVOTable(p, everyKindTable(), { ...OPTS, raDecColumns: ['ra', 'decl'] })).rejects.toThrow(/column "decl"/);
    await expect(writeVOTable(p, everyKindTable(), { ...OPTS, coosys: { id: 'c', system: 'ICRS', epoch: '2000 AD' } })).rejects.toThrow(/epoch/);
  });

  it('reports malformed XML and cells that do not parse with file and row', async () => {
    const p = path.join(dir, 'rt-TABLEDATA.vot');
    const bad = path.join(dir, 'broken.vot');
    const text = readFileSync(p, 'utf8');
    const { writeFileSync } = await import('node:fs');
    writeFileSync(bad, text.replace('</TABLEDATA>', ''));
    await expect(readVOTable(bad)).rejects.toThrow(/broken\.vot: not well-formed XML/);
    writeFileSync(bad, text.replace('<TD>12</TD>', '<TD>twelve</TD>'));
    await expect(readVOTable(bad)).rejects.toThrow(/broken\.vot, row 1, column "n_bands": cell does not parse/);
  });
});

// The IVOA schema is located inside astropy; it is used in place, never copied.
const XSD = hasPython(['astropy'])
  ? (runPython("import astropy.io.votable, os\nprint(json.dumps(os.path.join(os.path.dirname(astropy.io.votable.__file__), 'data', 'VOTable.v1.4.xsd')))") as string)
  : '';

describeWithPython('VOTable: IVOA 1.4 schema (xmllint)', ['astropy'], () => {
  const run = shouldRunWithTools(['xmllint']);
  if (!run) console.warn('[skip] VOTable schema validation: needs xmllint (set CI=true to require it)');
  it.skipIf(!run)('TABLEDATA and BINARY2 documents validate against VOTable.v1.4.xsd', async () => {
    const files: string[] = [];
    for (const serialization of ['TABLEDATA', 'BINARY2'] as const) {
      const p = path.join(dir, `xsd-${serialization}.vot`);
      await writeVOTable(p, everyKindTable(), { ...OPTS, serialization });
      files.push(p);
    }
    const big = path.join(dir, 'xsd-big.vot');
    await writeVOTable(big, bigTable(2000), { resourceName: 'big', serialization: 'BINARY2' });
    files.push(big);
    const r = runTool('xmllint', ['--noout', '--schema', XSD, ...files]);
    expect(r.stderr).not.toMatch(/fails to validate|error/i);
    for (const f of files) expect(r.stderr).toContain(`${f} validates`);
    expect(r.status).toBe(0);
  });

  it.skipIf(!run)('the schema check has teeth: a FIELD without datatype is rejected', async () => {
    const p = path.join(dir, 'xsd-TABLEDATA.vot');
    const bad = path.join(dir, 'xsd-bad.vot');
    const { writeFileSync } = await import('node:fs');
    writeFileSync(bad, readFileSync(p, 'utf8').replace(' datatype="short"', ''));
    const r = runTool('xmllint', ['--noout', '--schema', XSD, bad]);
    expect(r.status).not.toBe(0);
    expect(r.stderr).toMatch(/fails to validate/);
  });
});

const ASTROPY_VOT = `
import warnings
import numpy as np
from astropy.io.votable import parse
from astropy.table import Table
warnings.simplefilter('ignore')
path = json.load(sys.stdin)
vot = parse(path)
res = vot.resources[0]
t = res.tables[0]
arr = t.array
out = {
  'version': vot.version,
  'coosys': [{'ID': c.ID, 'system': c.system, 'epoch': c.epoch} for c in res.coordinate_systems],
  'params': {p.name: str(p.value) for p in t.params},
  'fields': [],
}
for f in t.fields:
    col = arr[f.name]
    mask = np.ma.getmaskarray(col)
    vals = []
    for v, m in zip(np.asarray(col.data), mask):
        if m:
            vals.append(None)
        elif f.datatype in ('long', 'int', 'short', 'unsignedByte'):
            vals.append(str(int(v)))
        elif f.datatype in ('double', 'float'):
            vals.append(None if np.isnan(v) else float(v))
        elif f.datatype == 'boolean':
            vals.append(bool(v))
        else:
            vals.append(str(v))
    out['fields'].append({'name': f.name, 'ID': f.ID, 'datatype': f.datatype, 'unit': f.unit.to_string() if f.unit is not None and hasattr(f.unit, 'to_string') else f.unit,
                          'ucd': f.ucd, 'ref': f.ref, 'description': f.description, 'values': vals, 'dtype': col.dtype.str})
tt = Table.read(path, format='votable')
out['table_dtypes'] = {n: tt[n].dtype.str for n in tt.colnames}
print(json.dumps(out))
`;

interface AstropyField {
  name: string; ID: string; datatype: string; unit: string | null; ucd: string | null; ref: string | null;
  description: string | null; values: (string | number | boolean | null)[]; dtype: string;
}

describeWithPython('VOTable: astropy reads what we wrote', ['astropy', 'numpy'], () => {
  for (const serialization of ['TABLEDATA', 'BINARY2'] as const) {
    it(`${serialization}: every name, datatype, unit, UCD, ref, description and value matches`, async () => {
      const p = path.join(dir, `astropy-${serialization}.vot`);
      const t = everyKindTable();
      await writeVOTable(p, t, { ...OPTS, serialization });
      const got = runPython(ASTROPY_VOT, p) as { version: string; coosys: unknown[]; params: Record<string, string>; fields: AstropyField[]; table_dtypes: Record<string, string> };
      expect(got.version).toBe('1.4');
      expect(got.coosys).toEqual([{ ID: 'icrs_sys', system: 'ICRS', epoch: 'J2000' }]);
      expect(got.params).toEqual({ release: 'DR1', note: 'quotes " and \' and <tags>' });
      const datatypes: Record<string, string> = { int64: 'long', float64: 'double', float32: 'float', int32: 'int', int16: 'short', uint8: 'unsignedByte', bool: 'boolean', string: 'unicodeChar' };
      expect(got.fields.map((f) => f.name)).toEqual(t.columns.map((c) => c.name));
      t.columns.forEach((c, j) => {
        const f = got.fields[j]!;
        expect(f.datatype, c.name).toBe(datatypes[c.kind]);
        expect(f.unit ?? undefined, c.name).toBe(c.unit);
        expect(f.ucd ?? undefined, c.name).toBe(c.ucd);
        expect(f.description ?? undefined, c.name).toBe(c.description);
        expect(f.ref, c.name).toBe(c.name === 'ra' || c.name === 'dec' ? 'icrs_sys' : null);
        for (let i = 0; i < t.numRows; i++) {
          const want = cell(c, i);
          const have = f.values[i];
          if (c.kind === 'string') expect(have ?? '', `${c.name}[${i}]`).toBe(want ?? '');
          else if (c.kind === 'float64' || c.kind === 'float32' || c.kind === 'bool') expect(have, `${c.name}[${i}]`).toEqual(want);
          else expect(have, `${c.name}[${i}]`).toEqual(want === null ? null : String(want));
        }
      });
      // 64-bit ids stay exact and integer-typed in astropy.
      expect(got.fields[0]!.values.slice(0, 2)).toEqual(['9007199254740993', '-9007199254740993']);
      expect(got.table_dtypes.id).toMatch(/i8$/);
    });
  }

  it('BINARY2 with many rows, nulls and ids beyond 2^53 reads the same in astropy', async () => {
    const p = path.join(dir, 'astropy-big.vot');
    const t = bigTable(2500);
    await writeVOTable(p, t, { resourceName: 'big', serialization: 'BINARY2' });
    const got = runPython(ASTROPY_VOT, p) as { fields: AstropyField[] };
    t.columns.forEach((c, j) => {
      const have = got.fields[j]!.values;
      const want = Array.from({ length: t.numRows }, (_, i) => {
        const v = cell(c, i);
        return v === null || c.kind === 'float64' || c.kind === 'string' ? v : String(v);
      });
      expect(have, c.name).toEqual(want);
    });
  });
});

/** everyKindTable with its units in canonical form, then spelled as VOUnits (src/lib/io/units.ts). */
function voUnitsTable(t: Table): Table {
  const canonical = { ...t, columns: t.columns.map((c) => (c.unit ? { ...c, unit: canonicalUnit(c.unit) } : c)) };
  return withFormatUnits(canonical, 'votable', 'test.vot');
}

function canonicalUnit(text: string): string {
  const r = parseUnit(text);
  if (!r.ok) throw new Error(r.message);
  return unitLabel(r.unit);
}

describeWithPython("VOTable: astropy's validator and reader report nothing", ['astropy'], () => {
  it('TABLEDATA, BINARY2 and a large BINARY2 document: no validator warning, no astropy warning', async () => {
    const files: string[] = [];
    for (const serialization of ['TABLEDATA', 'BINARY2'] as const) {
      const p = path.join(dir, `clean-${serialization}.vot`);
      await writeVOTable(p, voUnitsTable(everyKindTable()), { ...OPTS, serialization });
      files.push(p);
    }
    const big = path.join(dir, 'clean-big.vot');
    await writeVOTable(big, voUnitsTable(bigTable(2000)), { resourceName: 'big', serialization: 'BINARY2' });
    files.push(big);
    const got = astropyRead(files.map((f) => [f, 'votable']));
    expect(got.map((r) => [path.basename(r.path), r.warnings])).toEqual(files.map((f) => [path.basename(f), []]));
    // the log10 mass keeps a unit astropy understands, with its physical unit in the description
    expect(got[0]!.units.logmass_p50).toBe('dex');
    expect(got[0]!.units.ra).toBe('deg');
  });

  it('the check has teeth: a log(...) unit (W50) and a TABLE named but without an ID (W03) are reported', async () => {
    const p = path.join(dir, 'clean-TABLEDATA.vot');
    const bad = path.join(dir, 'warned.vot');
    const { writeFileSync } = await import('node:fs');
    writeFileSync(bad, readFileSync(p, 'utf8').replace(/unit="&apos;dex&apos;"/, 'unit="log(solMass)"').replace(/<TABLE ID="[^"]*" name="[^"]*"/, '<TABLE name="demo release"'));
    const [r] = astropyRead([[bad, 'votable']]);
    const text = r!.warnings.join('\n');
    expect(text).toMatch(/W50: Invalid unit string 'log\(solMass\)'/);
    expect(text).toMatch(/W03: Implicitly generating an ID from a name/);
  });
});
