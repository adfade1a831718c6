/**
 * The unit mapping (src/lib/io/units.ts): what common free-text units map to, and that every
 * string we write is read by Debian's astropy without a warning, in the format it is written
 * for (vounit for VOTable, fits for FITS), and means the same physical unit in both.
 *
 * Check values: the standards' own spellings (IVOA VOUnits 1.0 sect. 2.4 known units and 2.9
 * functions; FITS 4.0 sect. 4.3), and astropy 5.2.1's parsers as the reference reader.
 */
import { describe, expect, it } from 'vitest';
import { fitsUnit, knownSymbols, parseUnit, unitLabel, unitNote, voUnit, type UnitSpec } from '../../src/lib/io/units.ts';
import { describeWithPython, runPython } from '../helpers/python.ts';

function spec(text: string): UnitSpec {
  const r = parseUnit(text);
  if (!r.ok) throw new Error(`${text}: ${r.message}`);
  return r.unit;
}

/** Free text as people write it, and the canonical label it must map to. */
const MAPPED: [string, string][] = [
  ['', ''], ['-', ''],
  ['log(solMass)', 'dex(solMass)'], ['log10(Msun)', 'dex(solMass)'], ['[solMass]', 'dex(solMass)'], ['dex(M_sun)', 'dex(solMass)'],
  ['log(solMass/yr)', 'dex(solMass/yr)'], ['log(Msun yr-1)', 'dex(solMass/yr)'], ['log(solMass.yr**-1)', 'dex(solMass/yr)'],
  ['log(yr)', 'dex(yr)'], ['dex', 'dex'], ['log(cm/s2)', 'dex(cm.s**-2)'],
  ['mag', 'mag'], ['AB mag', 'mag'], ['Gyr', 'Gyr'], ['Ga', 'Gyr'], ['years', 'yr'], ['yr-1', 'yr**-1'], ['/yr', 'yr**-1'],
  ['solMass/yr', 'solMass/yr'], ['Msun/yr', 'solMass/yr'], ['km s-1', 'km/s'], ['km/s', 'km/s'], ['deg', 'deg'],
  ['uJy', 'uJy'], ['μJy', 'uJy'], ['micron', 'um'], ['kpc', 'kpc'], ['cm^-3', 'cm**-3'], ['Msun/Mpc3', 'solMass.Mpc**-3'],
  ['erg/s/cm2/A', 'erg.s**-1.cm**-2.Angstrom**-1'], ['erg/(s.cm2)', 'erg.s**-1.cm**-2'], ['W.m**-2.Hz**-1', 'W.m**-2.Hz**-1'],
];

/** Not mapped, each for a reason the message gives. */
const REFUSED: [string, RegExp][] = [
  ['ln(solMass)', /natural-logarithm/],
  ['1e10 solMass', /scale factor/],
  ['furlong', /unknown unit symbol "furlong"/],
  ['m**(1/2)', /whole-number powers/],
  ['log(log(yr))', /logarithm of a logarithm/],
  ['dm', /unknown unit symbol "dm"/], // VOUnits sect. 2.7: no deci prefix
];

describe('unit mapping', () => {
  it.each(MAPPED)('%j maps to %j, and the label maps to itself', (text, label) => {
    expect(unitLabel(spec(text))).toBe(label);
    expect(unitLabel(spec(label))).toBe(label);
  });

  it.each(REFUSED)('%j is refused', (text, why) => {
    const r = parseUnit(text);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.message).toMatch(why);
  });

  it('writes logarithms as the quoted VOUnit dex, no FITS unit, and the physical unit in words', () => {
    const u = spec('log(solMass/yr)');
    expect(voUnit(u)).toBe("'dex'");
    expect(fitsUnit(u)).toBe('');
    expect(unitNote(u)).toBe('dex: log10 of the value in solMass/yr');
    expect(unitNote(spec('solMass'))).toBeNull();
  });

  it('rewrites units VOUnits deprecates with a scale factor (VOUnits sect. 2.10)', () => {
    expect(voUnit(spec('Angstrom'))).toBe('1e-1nm');
    expect(voUnit(spec('erg/s/cm2/A'))).toBe('1e-6J.s**-1.cm**-2.nm**-1');
    expect(fitsUnit(spec('erg/s/cm2/A'))).toBe('erg.s**-1.cm**-2.Angstrom**-1');
  });
});

describeWithPython('astropy (Debian python3-astropy) reads every unit we write without a warning', ['astropy'], () => {
  it('every known symbol, prefixed where allowed, and every mapped example', () => {
    const texts = new Set<string>(MAPPED.map((m) => m[0]));
    for (const s of knownSymbols()) {
      texts.add(s.symbol);
      if (s.prefixes) for (const p of ['k', 'M', 'G', 'm', 'u', 'n']) texts.add(p + s.symbol);
      texts.add(`${s.symbol}**-2`);
    }
    const cases = [...texts].map((t) => {
      const u = spec(t);
      return { text: t, vo: voUnit(u), fits: fitsUnit(u), label: unitLabel(u), log: u.log };
    });
    const out = runPython(
      `
import warnings
import astropy.units as u
res = []
for c in json.load(sys.stdin):
    r = {'text': c['text']}
    for key, fmt in (('vo', 'vounit'), ('fits', 'fits'), ('label', 'generic')):
        s = c[key]
        with warnings.catch_warnings(record=True) as w:
            warnings.simplefilter('always')
            try:
                x = u.Unit(s, format=fmt)
                r[key] = 'ok'
            except Exception as e:
                x = None
                r[key] = 'error: ' + str(e)[:200]
        if w:
            r[key] = 'warning: ' + '; '.join(str(m.message)[:200] for m in w)
        r[key + '_unit'] = x
    # the same physical unit in both formats (scale 1 between them), linear units only
    if not c['log'] and r['vo_unit'] is not None and r['fits_unit'] is not None:
        try:
            r['ratio'] = float(r['vo_unit'].to(r['fits_unit']))
        except Exception as e:
            r['ratio'] = str(e)
    for key in ('vo', 'fits', 'label'):
        del r[key + '_unit']
    res.append(r)
print(json.dumps(res))
`,
      cases,
    ) as { text: string; vo: string; fits: string; label: string; ratio?: number | string }[];
    const bad = out.filter((r) => r.vo !== 'ok' || r.fits !== 'ok' || r.label !== 'ok' || (r.ratio !== undefined && (typeof r.ratio !== 'number' || Math.abs(r.ratio - 1) > 1e-12)));
    expect(bad).toEqual([]);
    expect(out.length).toBeGreaterThan(100);
  });
});
