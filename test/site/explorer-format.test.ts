import { describe, expect, it } from 'vitest';
import { decodeChunk, encodeChunk } from '../../src/site/explorer-format.ts';

describe('explorer chunk files', () => {
  it('round-trip every storage type, with numeric columns aligned for zero-copy views', () => {
    const ids = ['a', 'GAL 0002/b+', '9007199254740993', 'é-ü', ''];
    const buf = encodeChunk(5, [
      { name: 'id', type: 'str', values: ids },
      { name: 'ra', type: 'f64', values: [0.1, 359.99999999, 180, NaN, -0] },
      { name: 'z', type: 'f32', values: [0.5, 1.25, NaN, 3, 1e-3] },
      { name: 'flags', type: 'u8', values: [0, 1, 2, 255, 7] },
      { name: 'n', type: 'i32', values: [-5, 2 ** 31 - 1, 0, 1, 2] },
      { name: 's', type: 'i16', values: [-32768, 32767, 0, 1, 2] },
      { name: 'pop', type: 'cat', values: [0, 1, 1, 0, 2] },
      { name: 'ascii', type: 'str', values: ['x', 'yy', 'zzz', '', 'w'] },
    ]);
    expect(buf.length % 8).toBe(0);
    const copy = buf.slice().buffer;
    const { rows, columns } = decodeChunk(copy);
    expect(rows).toBe(5);
    expect(columns.get('id')).toEqual(ids);
    expect(columns.get('ascii')).toEqual(['x', 'yy', 'zzz', '', 'w']);
    expect(Array.from(columns.get('ra') as Float64Array)).toEqual([0.1, 359.99999999, 180, NaN, -0]);
    expect(Array.from(columns.get('z') as Float32Array)).toEqual([0.5, 1.25, NaN, 3, Math.fround(1e-3)]);
    expect(Array.from(columns.get('flags') as Uint8Array)).toEqual([0, 1, 2, 255, 7]);
    expect(Array.from(columns.get('n') as Int32Array)).toEqual([-5, 2 ** 31 - 1, 0, 1, 2]);
    expect(Array.from(columns.get('s') as Int16Array)).toEqual([-32768, 32767, 0, 1, 2]);
    expect(Array.from(columns.get('pop') as Uint8Array)).toEqual([0, 1, 1, 0, 2]);
    expect((columns.get('ra') as Float64Array).buffer).toBe(copy);
  });

  it('refuses a file that is not a chunk', () => {
    expect(() => decodeChunk(new Uint8Array([1, 2, 3, 4, 0, 0, 0, 0]).buffer)).toThrow(/bad magic/);
  });
});
