/**
 * loadBundle (used by `posterity check` and `build`) reports every problem of a bundle,
 * each at its exact place: file, 1-based data row, the user's column name, or the
 * release.json field. One tiny fixture bundle per kind of problem (test/fixtures/bad/).
 */
import { describe, it, expect } from 'vitest';
import { join } from 'node:path';
import { BAD, TINY, errorsOf, expectProblem, load, problemsOf } from './_problems.ts';

const bad = (name: string) => join(BAD, name);

describe('the tiny bundle every bad fixture starts from', () => {
  it('loads without problems', async () => {
    const b = await load(TINY);
    expect(b.objects.id).toEqual(['g1', 'g2', 'g3']);
    expect(b.warnings).toEqual([]);
    expect(Array.from(b.samples!.offsets)).toEqual([0, 2, 4, 6]);
  });
});

describe('columns', () => {
  it('a missing required column', async () => {
    const ps = await problemsOf(bad('missing-column'));
    expect(errorsOf(ps)).toHaveLength(1);
    const p = expectProblem(ps, { severity: 'error', file: 'objects.csv', column: 'dec', message: 'required column is missing' });
    expect(p.got).toBe('columns id, ra, zphot');
  });

  it('a mapped column that is not in the file names the mapping', async () => {
    const ps = await problemsOf(bad('mapped-column-missing'));
    expect(errorsOf(ps)).toHaveLength(1);
    const p = expectProblem(ps, { file: 'objects.csv', column: 'zphot', field: 'tables.objects.columns.redshift', message: /required column is missing .*"redshift" to "zphot"/ });
    expect(p.got).toContain('z_phot');
  });

  it('unknown columns are warnings, and the bundle still loads', async () => {
    const b = await load(bad('unknown-columns'));
    const ws = b.warnings;
    expect(ws.every((w) => w.severity === 'warning')).toBe(true);
    expectProblem(ws, { file: 'photometry.csv', column: 'seeing', message: /unknown column/ });
    expectProblem(ws, { file: 'samples.csv', column: 'sampler_note', message: /unknown column/ });
    expectProblem(ws, { file: 'release.json', field: 'tables.photometry.columns.magnitude', message: /column map names a column we do not know/ });
    expect(ws).toHaveLength(3);
  });

  it('text in a number column, with no follow-on errors for the same cell', async () => {
    const ps = await problemsOf(bad('wrong-type'));
    expect(errorsOf(ps)).toHaveLength(2);
    const a = expectProblem(ps, { file: 'objects.csv', row: 2, column: 'ra', message: 'not a number' });
    expect(a.got).toBe('"ten"');
    expect(a.expected).toMatch(/a number/);
    expectProblem(ps, { file: 'samples.csv', row: 3, column: 'log_sfr', message: 'not a number', got: '"high"' });
  });

  it('a wide layout (a list of draws in one CSV cell) is refused with a clear message', async () => {
    const ps = await problemsOf(bad('wide-samples'));
    for (const column of ['w', 'log_mstar', 'log_sfr'])
      expectProblem(ps, { file: 'samples.csv', row: 1, column, message: /holds a list of values \(wide layout\).*one posterior draw per row/ });
    expect(errorsOf(ps)).toHaveLength(3);
  });
});

describe('ids', () => {
  it('a duplicate object id names both rows', async () => {
    const ps = await problemsOf(bad('duplicate-ids'));
    expect(errorsOf(ps)).toHaveLength(1);
    const p = expectProblem(ps, { file: 'objects.csv', row: 4, column: 'id', message: 'duplicate object id', got: '"g2"' });
    expect(p.expected).toMatch(/first at row 2/);
  });

  it('samples of an unknown object', async () => {
    const ps = await problemsOf(bad('unknown-sample-ids'));
    expect(errorsOf(ps)).toHaveLength(1);
    expectProblem(ps, { file: 'samples.csv', row: 7, column: 'id', message: 'id not in the objects table', got: '"g9"' });
  });

  it('photometry of an unknown object', async () => {
    const ps = await problemsOf(bad('unknown-photometry-ids'));
    expect(errorsOf(ps)).toHaveLength(1);
    expectProblem(ps, { file: 'photometry.csv', row: 3, column: 'id', message: 'id not in the objects table', got: '"gX"' });
  });

  it('an object without draws names its row in the objects table', async () => {
    const ps = await problemsOf(bad('object-without-samples'));
    expect(errorsOf(ps)).toHaveLength(1);
    expectProblem(ps, { file: 'objects.csv', row: 3, column: 'id', object: 'g3', message: 'object has no posterior draws' });
  });
});

describe('values', () => {
  it('negative, NaN and infinite weights, each at its row', async () => {
    const ps = await problemsOf(bad('bad-weights'));
    expect(errorsOf(ps)).toHaveLength(3);
    expectProblem(ps, { file: 'samples.csv', row: 2, column: 'w', message: 'weight is negative', got: '-0.5' });
    expectProblem(ps, { file: 'samples.csv', row: 3, column: 'w', message: 'weight is missing or NaN', got: 'NaN' });
    expectProblem(ps, { file: 'samples.csv', row: 5, column: 'w', message: 'weight is infinite', got: 'Infinity' });
  });

  it('an object whose draws all have zero weight', async () => {
    const ps = await problemsOf(bad('zero-weights'));
    expect(errorsOf(ps)).toHaveLength(1);
    expectProblem(ps, { file: 'samples.csv', row: 3, column: 'w', object: 'g2', message: 'every draw of this object has zero weight' });
  });

  it('RA and Dec out of range', async () => {
    const ps = await problemsOf(bad('ra-dec-range'));
    expect(errorsOf(ps)).toHaveLength(2);
    expectProblem(ps, { file: 'objects.csv', row: 1, column: 'ra', message: 'right ascension out of range', expected: 'degrees in [0, 360)', got: '360.5' });
    expectProblem(ps, { file: 'objects.csv', row: 3, column: 'dec', message: 'declination out of range', expected: 'degrees in [-90, 90]', got: '-91' });
  });

  it('negative, infinite and missing flux errors', async () => {
    const ps = await problemsOf(bad('flux-errors'));
    expect(errorsOf(ps)).toHaveLength(3);
    expectProblem(ps, { file: 'photometry.csv', row: 1, column: 'flux_err', message: 'flux error is negative', got: '-0.1' });
    expectProblem(ps, { file: 'photometry.csv', row: 2, column: 'flux_err', message: 'flux error is infinite', got: 'Infinity' });
    expectProblem(ps, { file: 'photometry.csv', row: 3, column: 'flux_err', message: 'flux error is missing or NaN', got: 'NaN' });
  });

  it('wavelengths that are not positive, in bands, spectra and models', async () => {
    const ps = await problemsOf(bad('wavelengths'));
    expect(errorsOf(ps)).toHaveLength(4);
    expectProblem(ps, { file: 'bands.csv', row: 2, column: 'wavelength', message: 'wavelength is not positive', got: '0' });
    expectProblem(ps, { file: 'spectra.csv', row: 2, column: 'wavelength', message: 'wavelength is not positive', got: '-0.61' });
    expectProblem(ps, { file: 'models.csv', row: 1, column: 'wavelength', message: 'wavelength is not positive', got: '0' });
    expectProblem(ps, { file: 'models.csv', row: 3, column: 'wavelength', message: 'wavelength is missing or NaN', got: 'NaN' });
  });
});

describe('release.json', () => {
  it('unknown units: an enum error naming units.flux and the allowed values', async () => {
    const ps = await problemsOf(bad('unknown-units'));
    expect(errorsOf(ps)).toHaveLength(1);
    const p = expectProblem(ps, { file: 'release.json', field: 'units.flux' });
    expect(p.expected).toContain('"uJy"');
    expect(p.got).toContain('"nJy"');
  });

  it('a missing field is named', async () => {
    const ps = await problemsOf(bad('config-missing-field'));
    expect(errorsOf(ps)).toHaveLength(1);
    expectProblem(ps, { file: 'release.json', field: 'title', message: 'required field is missing', expected: 'a string' });
  });

  it('a field of the wrong type is named, with the type found', async () => {
    const ps = await problemsOf(bad('config-wrong-type'));
    expect(errorsOf(ps)).toHaveLength(1);
    expectProblem(ps, { file: 'release.json', field: 'survey.areaDeg2', message: 'wrong type', expected: 'a number', got: 'the text "large"' });
  });

  it('invalid JSON names the line', async () => {
    const ps = await problemsOf(bad('invalid-json'));
    expect(ps).toHaveLength(1);
    // the trailing comma ends line 16; the parser stops at the "}" on line 17
    expectProblem(ps, { file: 'release.json', message: 'not valid JSON at line 17' });
  });

  it('a table path that does not exist names the file and the field', async () => {
    const ps = await problemsOf(bad('missing-table-file'));
    expect(errorsOf(ps)).toHaveLength(1);
    expectProblem(ps, { file: 'samples_v2.csv', field: 'tables.samples.path', message: 'table file not found' });
  });
});

describe('truncated or corrupt files name the file', () => {
  it('a CSV with an unclosed quote', async () => {
    const ps = await problemsOf(bad('csv-unclosed-quote'));
    expect(errorsOf(ps)).toHaveLength(1);
    expectProblem(ps, { file: 'photometry.csv', row: 2, message: /quoted field is not closed/ });
  });

  it('an Arrow file cut in half', async () => {
    const ps = await problemsOf(bad('arrow-truncated'));
    expect(errorsOf(ps)).toHaveLength(1);
    expectProblem(ps, { file: 'samples.arrow', message: /Arrow/ });
  });

  it('a FITS file cut short', async () => {
    const ps = await problemsOf(bad('fits-truncated'));
    expect(errorsOf(ps)).toHaveLength(1);
    expectProblem(ps, { file: 'objects.fits', message: /truncated/ });
  });
});

describe('several problems in one bundle', () => {
  it('all five are reported in one run, a release.json error included', async () => {
    const ps = await problemsOf(bad('five-errors'));
    expect(errorsOf(ps)).toHaveLength(5);
    expectProblem(ps, { file: 'release.json', field: 'units.flux' });
    expectProblem(ps, { file: 'objects.csv', row: 4, column: 'id', message: 'duplicate object id', got: '"g3"' });
    expectProblem(ps, { file: 'samples.csv', row: 2, column: 'w', message: 'weight is negative' });
    expectProblem(ps, { file: 'photometry.csv', row: 4, column: 'id', message: 'id not in the objects table', got: '"g7"' });
    expectProblem(ps, { file: 'bands.csv', row: 1, column: 'wavelength', message: 'wavelength is not positive', got: '-0.5' });
  });
});
