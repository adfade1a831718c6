/**
 * A small table holding every column kind of the in-memory model, with the edge values the
 * writers must keep exactly: 2^53 + 1 and the int64 extremes, NaN, nulls, non-ASCII text,
 * quotes and markup in strings, and a description too long for one FITS card.
 */
import { expect } from 'vitest';
import type { Column, Table } from '../../src/lib/io/table.ts';

const LONG_DESC =
  "Posterior median of log10 stellar mass, from the weighted draws' CDF (linear interpolation between order statistics); isn't it long?";

export function everyKindTable(): Table {
  const n = 6;
  const valid = (nulls: number[]) => {
    const v = new Uint8Array(n).fill(1);
    for (const i of nulls) v[i] = 0;
    return v;
  };
  const columns: Column[] = [
    {
      name: 'id', kind: 'int64', ucd: 'meta.id;meta.main', description: 'Object identifier',
      values: BigInt64Array.from([9007199254740993n, -9007199254740993n, 0n, -(2n ** 63n), 2n ** 63n - 1n, 42n]),
    },
    {
      name: 'ra', kind: 'float64', unit: 'deg', ucd: 'pos.eq.ra;meta.main', description: 'Right ascension (ICRS)',
      values: Float64Array.from([0, 359.99999999999994, 1e-300, 123.456789012345678, 0.1, 180]),
    },
    {
      name: 'dec', kind: 'float64', unit: 'deg', ucd: 'pos.eq.dec;meta.main', description: 'Declination (ICRS)',
      values: Float64Array.from([-90, 90, -0.5, 1.5e-8, NaN, 0]),
    },
    {
      name: 'logmass_p50', kind: 'float32', unit: 'log(solMass)', ucd: 'phys.mass', description: LONG_DESC,
      values: Float32Array.from([10.5, NaN, 9.25, -1.5, 3.4028234663852886e38, 1e-38]),
    },
    {
      name: 'n_bands', kind: 'int32', ucd: 'meta.number', description: 'Number of bands used in the fit',
      values: Int32Array.from([12, 2147483647, -2147483648, 0, 7, 3]), valid: valid([3]),
    },
    {
      name: 'n_chain', kind: 'int16', description: 'Chains',
      values: Int16Array.from([1, -32768, 32767, 0, 4, 2]), valid: valid([5]),
    },
    {
      name: 'flags', kind: 'uint8', ucd: 'meta.code.qual', description: 'Quality bitmask',
      values: Uint8Array.from([0, 255, 1, 128, 7, 0]), valid: valid([2]),
    },
    {
      name: 'is_mock', kind: 'bool', ucd: 'meta.code', description: 'Object comes from a mock catalogue',
      values: Uint8Array.from([1, 0, 1, 0, 0, 1]), valid: valid([4]),
    },
    {
      name: 'name', kind: 'string', ucd: 'meta.id', description: 'Object name & "alias" <free text>',
      values: ['Ångström-1', 'naïve galaxy', '', "O'Brien <b>&amp;</b>", 'μ-lens ☃', 'x'],
    },
  ];
  return { columns, numRows: n };
}

/** Value at row i in a JSON-friendly form: int64 as decimal text, null for nulls and NaN. */
export function cell(col: Column, i: number): string | number | boolean | null {
  if (col.valid && col.valid[i] === 0) return null;
  const v = col.values[i];
  if (typeof v === 'bigint') return v.toString();
  if (typeof v === 'number') {
    if (Number.isNaN(v)) return null;
    return col.kind === 'bool' ? v === 1 : v;
  }
  return v ?? null;
}

/** Asserts two tables hold the same columns, kinds, metadata and values (nulls compared as nulls). */
export function expectSameTable(got: Table, want: Table, opts: { stringNullAsEmpty?: boolean; checkMeta?: boolean } = {}): void {
  expect(got.numRows).toBe(want.numRows);
  expect(got.columns.map((c) => c.name)).toEqual(want.columns.map((c) => c.name));
  want.columns.forEach((w, j) => {
    const g = got.columns[j]!;
    expect(g.kind, w.name).toBe(w.kind);
    if (opts.checkMeta !== false) {
      expect({ unit: g.unit, description: g.description, ucd: g.ucd }, w.name).toEqual({ unit: w.unit, description: w.description, ucd: w.ucd });
    }
    for (let i = 0; i < want.numRows; i++) {
      let wv = cell(w, i);
      if (opts.stringNullAsEmpty && w.kind === 'string' && wv === null) wv = '';
      const gv = cell(g, i);
      if (typeof wv === 'number' && typeof gv === 'number') expect(Object.is(gv, wv) || gv === wv, `${w.name}[${i}]: ${gv} vs ${wv}`).toBe(true);
      else expect(gv, `${w.name}[${i}]`).toEqual(wv);
    }
  });
}
