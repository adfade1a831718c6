import { describe, expect, it } from 'vitest';
import { angularSeparationDeg, formatDecDms, formatRaHms, parseAngleArcsec, parseCoordinate } from '../../src/lib/core/sky.ts';
import { describeWithPython, runPython } from '../helpers/python.ts';
import { rng } from './stats/_random.ts';

describe('angularSeparationDeg (haversine)', () => {
  it('closed cases', () => {
    expect(angularSeparationDeg(10, 0, 20, 0)).toBeCloseTo(10, 12); // along the equator
    expect(angularSeparationDeg(359.5, 0, 0.5, 0)).toBeCloseTo(1, 12); // across RA 0/360
    expect(angularSeparationDeg(0, 89, 180, 89)).toBeCloseTo(2, 12); // over the pole
    expect(angularSeparationDeg(0, 90, 123, 90)).toBeCloseTo(0, 12);
    expect(angularSeparationDeg(0, 0, 180, 0)).toBeCloseTo(180, 6);
    // 1 arcsec in Dec
    expect(angularSeparationDeg(150, 30, 150, 30 + 1 / 3600) * 3600).toBeCloseTo(1, 9);
  });
});

describe('sexagesimal formatting', () => {
  it('formats worked examples, with carry and wrapping', () => {
    expect(formatRaHms(187.5)).toBe('12:30:00.00');
    expect(formatRaHms(0)).toBe('00:00:00.00');
    expect(formatRaHms(-15)).toBe('23:00:00.00');
    expect(formatRaHms(359.9999999)).toBe('00:00:00.00'); // 23:59:59.99998 rounds up to 24 h
    expect(formatRaHms(15 * (1 + 59 / 60 + 59.996 / 3600))).toBe('02:00:00.00');
    expect(formatDecDms(12.5)).toBe('+12:30:00.0');
    expect(formatDecDms(-0.5)).toBe('-00:30:00.0');
    expect(formatDecDms(-1e-9)).toBe('+00:00:00.0');
    expect(formatDecDms(-89.99999999, 2)).toBe('-90:00:00.00');
    expect(formatRaHms(10, 0)).toBe('00:40:00');
  });
});

describe('parseCoordinate and parseAngleArcsec', () => {
  it('reads decimal and sexagesimal positions', () => {
    expect(parseCoordinate('187.5 +12.25')).toEqual({ raDeg: 187.5, decDeg: 12.25 });
    expect(parseCoordinate(' 187.5, -12.25 ')).toEqual({ raDeg: 187.5, decDeg: -12.25 });
    expect(parseCoordinate('187.5d 12.25d')).toEqual({ raDeg: 187.5, decDeg: 12.25 });
    expect(parseCoordinate('12:30:00.0 +12:30:00')).toEqual({ raDeg: 187.5, decDeg: 12.5 });
    expect(parseCoordinate('12h30m00s +12d30m00s')).toEqual({ raDeg: 187.5, decDeg: 12.5 });
    expect(parseCoordinate('12 30 00 -00 30 00')).toEqual({ raDeg: 187.5, decDeg: -0.5 });
    expect(parseCoordinate('12:30 -00:30')).toEqual({ raDeg: 187.5, decDeg: -0.5 });
  });
  it('rejects malformed or out-of-range input', () => {
    for (const bad of ['', 'abc', '187.5', '400 0', '10 95', '12:60:00 +10:00:00', '12:30:00 +10:-5:00', '25:00:00 +00:00:00', '1e3 5', '12 30 00 10 20']) {
      expect(parseCoordinate(bad)).toBeNull();
    }
  });
  it('reads angular sizes in arcseconds', () => {
    expect(parseAngleArcsec('5"')).toBe(5);
    expect(parseAngleArcsec('2arcmin')).toBe(120);
    expect(parseAngleArcsec("3'")).toBe(180);
    expect(parseAngleArcsec('10')).toBe(10);
    expect(parseAngleArcsec('0.5 deg')).toBe(1800);
    expect(parseAngleArcsec('-3')).toBeNull();
    expect(parseAngleArcsec('3 parsec')).toBeNull();
  });
});

describeWithPython('sky against astropy', ['astropy'], () => {
  it('separations and sexagesimal strings agree with SkyCoord and Angle.to_string', () => {
    const u = rng(42);
    const pairs: number[][] = [];
    for (let i = 0; i < 60; i++) {
      const ra1 = u() * 360;
      const dec1 = Math.asin(2 * u() - 1) / (Math.PI / 180);
      pairs.push([ra1, dec1, ra1 + (u() - 0.5) * 2, dec1 + (u() - 0.5) * 2]); // near pairs
      pairs.push([ra1, dec1, u() * 360, Math.asin(2 * u() - 1) / (Math.PI / 180)]); // anywhere
    }
    pairs.push([359.9, 10, 0.1, 10], [0.05, -45, 359.95, -45.01], [10, 89.99, 190, 89.99], [77, -89.9, 300, -89.95]);
    const clampDec = (d: number) => Math.max(-90, Math.min(90, d));
    for (const p of pairs) {
      p[2] = ((p[2] % 360) + 360) % 360;
      p[3] = clampDec(p[3]);
    }
    const ref = runPython(
      `from astropy.coordinates import SkyCoord, Angle
import astropy.units as u
d = json.load(sys.stdin)
seps, ras, decs = [], [], []
for ra1, dec1, ra2, dec2 in d:
    a = SkyCoord(ra1 * u.deg, dec1 * u.deg); b = SkyCoord(ra2 * u.deg, dec2 * u.deg)
    seps.append(float(a.separation(b).deg))
    ras.append(Angle(ra1 * u.deg).to_string(unit=u.hour, sep=':', precision=2, pad=True))
    decs.append(Angle(dec1 * u.deg).to_string(unit=u.deg, sep=':', precision=1, pad=True, alwayssign=True))
print(json.dumps({'sep': seps, 'ra': ras, 'dec': decs}))`,
      pairs,
    ) as { sep: number[]; ra: string[]; dec: string[] };
    pairs.forEach(([ra1, dec1, ra2, dec2], i) => {
      expect(Math.abs(angularSeparationDeg(ra1, dec1, ra2, dec2) - ref.sep[i])).toBeLessThan(1e-9);
      expect(formatRaHms(ra1)).toBe(ref.ra[i]);
      expect(formatDecDms(dec1)).toBe(ref.dec[i]);
      // parsing what we format returns the position to the rounding of the string
      const back = parseCoordinate(`${formatRaHms(ra1, 3)} ${formatDecDms(dec1, 2)}`);
      expect(back).not.toBeNull();
      expect(angularSeparationDeg(ra1, dec1, back!.raDeg, back!.decDeg) * 3600).toBeLessThan(0.02);
    });
  });
});
