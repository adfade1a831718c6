/**
 * A wide samples layout (all of an object's draws as a list or vector in one cell) is
 * refused with a message that says how to store the draws instead, in every format:
 * CSV (the fixture test/fixtures/bad/wide-samples), Arrow List columns and FITS vector
 * columns (written here at test time; the FITS file by astropy).
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { copyFileSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import * as arrow from 'apache-arrow';
import { TINY, errorsOf, expectProblem, problemsOf } from './_problems.ts';
import { describeWithPython, runPython } from '../helpers/python.ts';

let tmp: string;
beforeAll(() => {
  tmp = mkdtempSync(join(tmpdir(), 'posterity-wide-'));
});
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

function bundleWithSamples(name: string, file: string): string {
  const dir = join(tmp, name);
  mkdirSync(dir, { recursive: true });
  for (const f of ['objects.csv', 'photometry.csv', 'bands.csv']) copyFileSync(join(TINY, f), join(dir, f));
  const cfg = JSON.parse(readFileSync(join(TINY, 'release.json'), 'utf8'));
  cfg.tables.samples.path = file;
  writeFileSync(join(dir, 'release.json'), JSON.stringify(cfg, null, 2));
  return dir;
}

const draws = { g1: [[1, 0.5], [10.1, 10.2], [0.5, 0.6]], g2: [[1, 0.2], [9.5, 9.6], [0.1, 0.2]], g3: [[1, 0.8], [11, 11.1], [1.5, 1.4]] };

describe('wide layouts are refused', () => {
  it('an Arrow List column of draws', async () => {
    const dir = bundleWithSamples('arrow', 'samples.arrow');
    const list = (j: number) => arrow.vectorFromArray(Object.values(draws).map((d) => d[j]), new arrow.List(new arrow.Field('item', new arrow.Float64(), true)));
    const table = new arrow.Table({ id: arrow.vectorFromArray(Object.keys(draws), new arrow.Utf8()), w: list(0), log_mstar: list(1), log_sfr: list(2) });
    writeFileSync(join(dir, 'samples.arrow'), arrow.tableToIPC(table, 'file'));
    const ps = await problemsOf(dir);
    expect(errorsOf(ps)).toHaveLength(1);
    const p = expectProblem(ps, { file: 'samples.arrow', column: 'w', message: /list columns .* not supported; store one draw per row/ });
    expect(p.got).toMatch(/List/);
  });
});

describeWithPython('wide layouts are refused (FITS, written by astropy)', ['numpy', 'astropy.io.fits'], () => {
  it('a FITS vector column (TFORM 2D) of draws', async () => {
    const dir = bundleWithSamples('fits', 'samples.fits');
    runPython(
      `import numpy as np
from astropy.io import fits
d = json.load(sys.stdin)
ids = list(d['draws'].keys())
cols = [fits.Column(name='id', format='2A', array=np.array(ids))]
for j, name in enumerate(['w', 'log_mstar', 'log_sfr']):
    cols.append(fits.Column(name=name, format='2D', array=np.array([d['draws'][i][j] for i in ids])))
fits.BinTableHDU.from_columns(cols).writeto(d['path'], overwrite=True)
print('null')`,
      { draws, path: join(dir, 'samples.fits') },
    );
    const ps = await problemsOf(dir);
    expect(errorsOf(ps)).toHaveLength(1);
    expectProblem(ps, { file: 'samples.fits', column: 'w', message: /vector column w has 2 elements per row .*store one draw per row/, expected: 'one value per cell', got: '2 values per cell' });
  });
});
