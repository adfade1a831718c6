/**
 * FITS writer checked against fitsverify (the reference FITS verifier) and astropy.io.fits
 * (an independent reader), plus exact read-back through our own reader.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { PosterityError } from '../../src/lib/core/problems.ts';
import { readFits } from '../../src/lib/io/fits/read.ts';
import { writeFits } from '../../src/lib/io/fits/write.ts';
import { formatCards, parseCards } from '../../src/lib/io/fits/header.ts';
import type { Table } from '../../src/lib/io/table.ts';
import { cell, everyKindTable, expectSameTable } from '../helpers/everyKind.ts';
import { describeWithPython, runPython } from '../helpers/python.ts';
import { describeWithTools, runTool } from '../helpers/tools.ts';

let dir = '';
beforeAll(() => { dir = mkdtempSync(path.join(tmpdir(), 'posterity-fitsw-')); });
afterAll(() => { rmSync(dir, { recursive: true, force: true }); });

const OPTS = {
  extname: 'CATALOGUE',
  date: '2025-01-31',
  keywords: { RELEASE: 'DR1', NOBJ: 6, PIVOT: 10.25, MOCK: false },
  comments: ['A demonstration release of a synthetic catalogue.'],
};

/** The every-kind table with its non-ASCII strings replaced, for a fully standard file. */
function asciiTable(): Table {
  const t = everyKindTable();
  const name = t.columns.find((c) => c.name === 'name')!;
  name.values = (name.values as string[]).map((s) => s.normalize('NFKD').replace(/[^\x20-\x7e]/g, ''));
  return t;
}

describe('FITS writer: bytes and our reader', () => {
  it('writes whole 2880-byte blocks of 80-character ASCII cards', async () => {
    const p = path.join(dir, 'blocks.fits');
    await writeFits(p, everyKindTable(), OPTS);
    const bytes = readFileSync(p);
    expect(bytes.length % 2880).toBe(0);
    const primary = bytes.subarray(0, 2880).toString('latin1');
    expect(primary.slice(0, 80)).toBe('SIMPLE  =                    T / conforms to FITS Standard 4.0'.padEnd(80));
    expect(primary).toContain("DATE    = '2025-01-31'");
    const ext = bytes.subarray(2880, 2880 * 3).toString('latin1');
    expect(ext.slice(0, 20)).toBe("XTENSION= 'BINTABLE'");
    expect(ext).toMatch(/^[\x20-\x7e]*$/);
    // The description longer than one card goes on over CONTINUE cards (sect. 4.2.1.2).
    expect(ext).toContain('CONTINUE  ');
    expect(ext).toContain("LONGSTRN= 'OGIP 1.0'");
    expect(ext).toContain('COMMENT TCOMMn holds a free-text description of column n.');
  });

  it('reads back exactly, including 2^53 + 1, the int64 extremes, NaN and nulls', async () => {
    const p = path.join(dir, 'roundtrip.fits');
    const t = everyKindTable();
    await writeFits(p, t, OPTS);
    const back = await readFits(p);
    expectSameTable(back, t);
    expect((back.columns[0]!.values as BigInt64Array)[0]).toBe(9007199254740993n);
    expect(back.meta).toMatchObject({ EXTNAME: 'CATALOGUE', DATE: '2025-01-31', RELEASE: 'DR1', NOBJ: 6, PIVOT: 10.25, MOCK: false });
  });

  it('is byte-deterministic whatever the chunk size', async () => {
    const a = path.join(dir, 'det-a.fits');
    const b = path.join(dir, 'det-b.fits');
    await writeFits(a, everyKindTable(), OPTS);
    await writeFits(b, everyKindTable(), { ...OPTS, chunkRows: 1 });
    expect(readFileSync(a).equals(readFileSync(b))).toBe(true);
  });

  it('writes string nulls as empty strings (FITS has no null for A fields)', async () => {
    const p = path.join(dir, 'strnull.fits');
    const t: Table = { numRows: 2, columns: [{ name: 's', kind: 'string', values: ['a', 'b'], valid: Uint8Array.from([1, 0]) }] };
    await writeFits(p, t, { extname: 'T' });
    const back = await readFits(p);
    expect(back.columns[0]!.values).toEqual(['a', '']);
  });

  it('widens a uint8 column whose 256 values are all used when it also has nulls', async () => {
    const p = path.join(dir, 'widen.fits');
    const values = new Uint8Array(257);
    for (let i = 0; i < 256; i++) values[i] = i;
    const valid = new Uint8Array(257).fill(1);
    valid[256] = 0;
    await writeFits(p, { numRows: 257, columns: [{ name: 'b', kind: 'uint8', values, valid }] }, { extname: 'T' });
    const back = await readFits(p);
    expect(back.columns[0]!.kind).toBe('int16');
    expect(cell(back.columns[0]!, 255)).toBe(255);
    expect(cell(back.columns[0]!, 256)).toBe(null);
  });

  it('rejects bad keywords, dates and ASCII-only violations with named problems', async () => {
    const p = path.join(dir, 'bad.fits');
    await expect(writeFits(p, everyKindTable(), { extname: 'X', keywords: { 'lower': 1 } })).rejects.toThrow(/keywords\.lower/);
    await expect(writeFits(p, everyKindTable(), { extname: 'X', keywords: { TTYPE1: 'x' } })).rejects.toThrow(PosterityError);
    await expect(writeFits(p, everyKindTable(), { extname: 'X', date: '31/01/2025' })).rejects.toThrow(/DATE/);
    await expect(writeFits(p, everyKindTable(), { extname: 'X', strings: 'ascii' })).rejects.toThrow(/row 1, column "name"/);
  });
});

describe('FITS header cards', () => {
  it('escapes quotes and splits long strings without breaking an escape pair', () => {
    const text = "a'b ".repeat(40) + "end''";
    const { cards, long } = formatCards('TCOMM1', text);
    expect(long).toBe(true);
    for (const c of cards) expect(c.length).toBe(80);
    const back = parseCards(cards);
    expect(back).toHaveLength(1);
    expect(back[0]!.value).toBe(text.replace(/ +$/, ''));
  });

  it('formats fixed-format numbers and logicals right-justified to column 30', () => {
    expect(formatCards('NAXIS1', 56).cards[0]!.slice(0, 30)).toBe('NAXIS1  =                   56');
    expect(formatCards('MOCK', false).cards[0]!.slice(0, 30)).toBe('MOCK    =                    F');
    expect(formatCards('PIVOT', 1e21).cards[0]!.slice(10, 30).trim()).toBe('1.0E+21');
  });
});

describeWithTools('FITS writer: fitsverify', ['fitsverify'], () => {
  it('an ASCII table passes with 0 warnings and 0 errors', async () => {
    const p = path.join(dir, 'verify-ascii.fits');
    await writeFits(p, asciiTable(), OPTS);
    const r = runTool('fitsverify', ['-q', p]);
    // With -q, fitsverify prints one line: "verification OK" only with 0 warnings and 0 errors.
    expect(r.stdout.trim()).toBe(`verification OK: ${p}`);
    expect(r.status).toBe(0);
  });

  it('UTF-8 text in A fields is the only thing reported (FITS 4.0 allows ASCII only)', async () => {
    const p = path.join(dir, 'verify-utf8.fits');
    await writeFits(p, everyKindTable(), OPTS);
    const r = runTool('fitsverify', [p]);
    const errors = (r.stdout + r.stderr).split('\n').filter((l) => /\*\*\* (Error|Warning)/.test(l));
    // Rows 1, 2 and 5 of the name column hold non-ASCII text.
    expect(errors).toHaveLength(3);
    for (const e of errors) expect(e).toMatch(/column #9 contains non-ASCII text/);
    expect(r.stdout).toMatch(/0 warning\(s\) and 3 error\(s\)/);
  });

  it('an empty table with zero rows is valid', async () => {
    const p = path.join(dir, 'verify-empty.fits');
    await writeFits(p, { numRows: 0, columns: [{ name: 'id', kind: 'int64', values: new BigInt64Array(0) }, { name: 's', kind: 'string', values: [] }] }, { extname: 'EMPTY', date: '2025-01-31' });
    const r = runTool('fitsverify', ['-q', p]);
    expect(r.stdout.trim()).toBe(`verification OK: ${p}`);
    const back = await readFits(p);
    expect(back.numRows).toBe(0);
    expect(back.columns.map((c) => c.kind)).toEqual(['int64', 'string']);
  });
});

const ASTROPY_DUMP = `
import warnings
import numpy as np
from astropy.io import fits
from astropy.table import Table
warnings.simplefilter('ignore')
path = json.load(sys.stdin)
t = Table.read(path, hdu=1)
t.convert_bytestring_to_unicode()
with fits.open(path) as hd:
    hdr = hd[1].header
    raw = hd[1].data.view(np.ndarray)
    out = {'columns': [], 'header': {k: hdr[k] for k in ('EXTNAME', 'DATE', 'RELEASE', 'NOBJ', 'PIVOT', 'MOCK')}}
    for i, name in enumerate(t.colnames, start=1):
        c = t[name]
        mask = np.ma.getmaskarray(c)
        vals = []
        for v, m in zip(c, mask):
            if m:
                vals.append(None)
            elif c.dtype.kind in 'iu':
                vals.append(str(int(v)))
            elif c.dtype.kind == 'f':
                vals.append(None if np.isnan(v) else float(v))
            elif c.dtype.kind == 'b':
                vals.append(bool(v))
            else:
                vals.append(str(v))
        out['columns'].append({
            'name': name, 'dtype': c.dtype.str, 'unit': None if c.unit is None else c.unit.to_string(),
            'tunit': hdr.get(f'TUNIT{i}'), 'ucd': hdr.get(f'TUCD{i}'), 'comm': hdr.get(f'TCOMM{i}'),
            'values': vals, 'raw_logical': [int(x) for x in raw[name]] if c.dtype.kind == 'b' else None,
        })
print(json.dumps(out))
`;

interface AstropyColumn {
  name: string; dtype: string; unit: string | null; tunit: string | null; ucd: string | null; comm: string | null;
  values: (string | number | boolean | null)[]; raw_logical: number[] | null;
}

describeWithPython('FITS writer: astropy reads what we wrote', ['astropy', 'numpy'], () => {
  it('every name, unit, UCD, description and value matches', async () => {
    const p = path.join(dir, 'astropy.fits');
    const t = everyKindTable();
    await writeFits(p, t, OPTS);
    const got = runPython(ASTROPY_DUMP, p) as { columns: AstropyColumn[]; header: Record<string, unknown> };
    expect(got.header).toEqual({ EXTNAME: 'CATALOGUE', DATE: '2025-01-31', RELEASE: 'DR1', NOBJ: 6, PIVOT: 10.25, MOCK: false });
    expect(got.columns.map((c) => c.name)).toEqual(t.columns.map((c) => c.name));
    const dtypes: Record<string, string> = { int64: '>i8', float64: '>f8', float32: '>f4', int32: '>i4', int16: '>i2', uint8: '|u1', bool: '|b1' };
    t.columns.forEach((c, j) => {
      const a = got.columns[j]!;
      if (c.kind !== 'string') expect(a.dtype, c.name).toBe(dtypes[c.kind]);
      expect(a.tunit ?? undefined, c.name).toBe(c.unit);
      expect(a.ucd ?? undefined, c.name).toBe(c.ucd);
      expect(a.comm ?? undefined, c.name).toBe(c.description);
      for (let i = 0; i < t.numRows; i++) {
        const want = cell(c, i);
        const have = a.values[i];
        if (c.kind === 'bool') {
          // astropy shows a null logical as False; the stored byte must be 0 (sect. 7.3.3.1).
          expect(a.raw_logical![i], `${c.name}[${i}]`).toBe(want === null ? 0 : want ? 0x54 : 0x46);
        } else if (c.kind === 'string') {
          // astropy masks empty strings; the text itself must match.
          expect(have ?? '', `${c.name}[${i}]`).toBe(want ?? '');
        } else if (c.kind === 'float64' || c.kind === 'float32') {
          expect(have, `${c.name}[${i}]`).toEqual(want);
        } else {
          // Integers come back from Python as decimal text, so no float rounds them.
          expect(have, `${c.name}[${i}]`).toEqual(want === null ? null : String(want));
        }
      }
    });
    // 2^53 + 1 is exact in astropy too, so no float went in between.
    expect(got.columns[0]!.values[0]).toBe('9007199254740993');
    expect(got.columns.find((c) => c.name === 'logmass_p50')!.unit).toBe('log(solMass)');
  });
});
