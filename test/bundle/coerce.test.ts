/**
 * Column typing of the bundle layer: problem counting beyond the listed ones, and the one
 * kind a passed-through objects column gets whatever the input format.
 */
import { describe, it, expect } from 'vitest';
import { MAX_PER_COLUMN, ProblemSink, looksLikeList, normalisePassThrough, toFloat64 } from '../../src/lib/bundle/coerce.ts';
import type { Column } from '../../src/lib/io/table.ts';

const text = (values: string[]): Column => ({ name: 'c', kind: 'string', values });

describe('ProblemSink', () => {
  it('lists ten problems of a kind and counts the rest in one line that keeps the place', () => {
    const sink = new ProblemSink();
    for (let i = 0; i < 25; i++) sink.add({ severity: 'error', file: 'samples.csv', row: i + 1, column: 'w', message: 'weight is negative', expected: 'a finite weight >= 0', got: '-1' });
    const ps = sink.finish();
    expect(ps).toHaveLength(MAX_PER_COLUMN + 1);
    expect(ps[MAX_PER_COLUMN]).toEqual({ severity: 'error', file: 'samples.csv', column: 'w', message: 'weight is negative: 15 more like this (25 in all)', expected: 'a finite weight >= 0' });
  });

  it('a cell that could not be typed is reported once', () => {
    const sink = new ProblemSink();
    toFloat64(text(['1', 'x', '[1, 2]']), { file: 'f.csv', sink, rowOffset: 0 });
    expect(sink.finish().map((p) => p.message)).toEqual(['not a number', expect.stringMatching(/wide layout/)]);
    expect(sink.failedRows('f.csv', 'c')).toBe('all');
  });
});

describe('looksLikeList', () => {
  it('finds lists and vectors, not numbers or names', () => {
    for (const t of ['[1, 2]', '(1;2)', '{1,2}', '1 2 3', '1;2']) expect(looksLikeList(t), t).toBe(true);
    for (const t of ['1', '-2.5e3', 'g1', 'high', '']) expect(looksLikeList(t), t).toBe(false);
  });
});

describe('normalisePassThrough', () => {
  it('types CSV text by its values', () => {
    expect(normalisePassThrough(text(['true', 'false', '']), true)).toMatchObject({ kind: 'bool', values: Uint8Array.of(1, 0, 0), valid: Uint8Array.of(1, 1, 0) });
    expect(normalisePassThrough(text(['12', '-3', '9007199254740993']), true)).toMatchObject({ kind: 'int64', values: BigInt64Array.of(12n, -3n, 9007199254740993n) });
    const f = normalisePassThrough(text(['1.5', '', 'inf']), true);
    expect(f.kind).toBe('float64');
    expect(Array.from(f.values as Float64Array)).toEqual([1.5, NaN, Infinity]);
  });

  it('keeps text that only looks like numbers (leading zeros) or is mixed', () => {
    expect(normalisePassThrough(text(['007', '012']), true).kind).toBe('string');
    expect(normalisePassThrough(text(['1', 'star-forming']), true).kind).toBe('string');
    expect(normalisePassThrough(text(['true', 'false']), false).kind).toBe('string'); // typed formats keep text
  });

  it('widens typed integers to int64 and float32 to float64, exactly', () => {
    expect(normalisePassThrough({ name: 'n', kind: 'int32', values: Int32Array.of(1, -2) }, false)).toMatchObject({ kind: 'int64', values: BigInt64Array.of(1n, -2n) });
    const f = normalisePassThrough({ name: 'x', kind: 'float32', values: Float32Array.of(0.1) }, false);
    expect(f).toMatchObject({ kind: 'float64', values: Float64Array.of(Math.fround(0.1)) });
  });
});
