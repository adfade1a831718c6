/**
 * JsonWriter writes the text JSON.stringify gives (the standard's serialisation of a number is
 * its shortest round-trip form; ECMA-262 Number::toString), for rounded decimals from their
 * mantissa and for everything else through String.
 */
import { describe, expect, it } from 'vitest';
import { JsonWriter } from '../../src/lib/pipeline/json-writer.ts';
import { uniforms } from '../core/stats/_random.ts';

const text = (f: (jw: JsonWriter) => void) => {
  const jw = new JsonWriter();
  f(jw);
  return new TextDecoder().decode(jw.take());
};

describe('JsonWriter', () => {
  it('writes values rounded to 10^e as JSON.stringify does, for every exponent from -12 to 6', () => {
    const u = uniforms(4000, 3, -1, 1);
    for (let e = -12; e <= 6; e++) {
      const f = 10 ** Math.abs(e);
      for (let i = 0; i < u.length; i++) {
        const scale = 10 ** ((i % 13) - 6);
        const x = u[i] * scale;
        const v = e >= 0 ? Math.round(x / f) * f : Math.round(x * f) / f;
        expect(text((jw) => jw.decimal(v, e))).toBe(JSON.stringify(v));
      }
    }
  });

  it('handles -0, zero, integers, tiny and huge values, and non-finite ones like JSON.stringify', () => {
    for (const [v, e] of [[-0, -3], [0, 2], [120, 1], [-5e-7, -8], [1e-6, -6], [123456789012, 0], [2 ** 53, 0], [NaN, -2], [Infinity, 1], [-0.000001, -6]] as const)
      expect(text((jw) => jw.decimal(v, e))).toBe(JSON.stringify(v));
    for (const v of [0.1 + 0.2, -1e-300, 1e21, 123.456, NaN])
      expect(text((jw) => jw.number(v))).toBe(JSON.stringify(v));
  });

  it('writes strings with JSON escapes and UTF-8', () => {
    for (const s of ['log_mstar', 'a"b\\c', 'tab\there', 'Ångström μm', '😀', '\u0001'])
      expect(text((jw) => jw.string(s))).toBe(JSON.stringify(s));
  });
});
