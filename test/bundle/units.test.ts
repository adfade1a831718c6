/**
 * Units on load: release.json parameter units are mapped to the canonical form of
 * src/lib/io/units.ts (common free text such as log(solMass), mag, Gyr is accepted), a unit that
 * cannot be mapped is an error naming its release.json field, and a passed-through objects column
 * whose unit cannot be mapped keeps its unit text in the description, with a warning.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { copyFileSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { writeFits } from '../../src/lib/io/fits/index.ts';
import { TINY, errorsOf, expectProblem, load, problemsOf } from './_problems.ts';

let tmp: string;
beforeAll(() => {
  tmp = mkdtempSync(join(tmpdir(), 'posterity-units-'));
});
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

/** The tiny bundle with its parameter units replaced, and optionally objects as FITS with extra columns. */
async function tinyWith(name: string, units: string[], objects?: { unit: string; name: string }[]): Promise<string> {
  const dir = join(tmp, name);
  mkdirSync(dir, { recursive: true });
  for (const f of ['objects.csv', 'samples.csv', 'photometry.csv', 'bands.csv']) copyFileSync(join(TINY, f), join(dir, f));
  const cfg = JSON.parse(readFileSync(join(TINY, 'release.json'), 'utf8'));
  units.forEach((u, i) => (cfg.parameters[i].unit = u));
  if (objects) {
    cfg.tables.objects.path = 'objects.fits';
    await writeFits(join(dir, 'objects.fits'), {
      numRows: 3,
      columns: [
        { name: 'id', kind: 'string', values: ['g1', 'g2', 'g3'] },
        { name: 'ra', kind: 'float64', values: Float64Array.from([10.5, 11, 12.25]), unit: 'deg' },
        { name: 'dec', kind: 'float64', values: Float64Array.from([-5.25, 2, 45]), unit: 'deg' },
        { name: 'zphot', kind: 'float64', values: Float64Array.from([0.5, 1.2, 0.8]) },
        ...objects.map((o, k) => ({ name: o.name, kind: 'float64' as const, values: Float64Array.from([k, k + 1, k + 2]), unit: o.unit, description: `extra ${o.name}` })),
      ],
    }, { extname: 'OBJECTS', date: '2026-01-15' });
  }
  writeFileSync(join(dir, 'release.json'), JSON.stringify(cfg, null, 2));
  return dir;
}

describe('parameter units from release.json', () => {
  it('maps common free-text forms to the canonical form', async () => {
    for (const [a, b, want] of [
      ['log(solMass)', 'log(solMass/yr)', ['dex(solMass)', 'dex(solMass/yr)']],
      ['log10(Msun)', '[Msun/yr]', ['dex(solMass)', 'dex(solMass/yr)']],
      ['mag', 'Gyr', ['mag', 'Gyr']],
    ] as const) {
      const b0 = await load(await tinyWith(`ok-${a}-${b}`.replace(/[^a-z0-9-]/gi, '_'), [a, b]));
      expect(b0.config.parameters.map((p) => p.unit)).toEqual(want);
    }
  });

  it('an unmappable unit is an error naming its field, with what was expected', async () => {
    const ps = await problemsOf(await tinyWith('bad', ['log(solMass)', 'furlongs/fortnight']));
    expect(errorsOf(ps)).toHaveLength(1);
    const p = expectProblem(ps, { severity: 'error', file: 'release.json', field: 'parameters[1].unit', message: /unit cannot be mapped.*unknown unit symbol "furlongs"/ });
    expect(p.got).toBe('"furlongs/fortnight"');
    expect(p.expected).toMatch(/log\(solMass\)/);
  });
});

describe('units of passed-through objects columns', () => {
  it('maps what it can; keeps an unmappable unit in the description, with a warning', async () => {
    const dir = await tinyWith('extra', ['log(solMass)', 'log(solMass/yr)'], [
      { name: 'ew_halpha', unit: 'Angstrom' },
      { name: 'size', unit: 'kpc' },
      { name: 'odd', unit: 'furlong' },
    ]);
    const b = await load(dir);
    const extra = Object.fromEntries(b.objects.extra.map((c) => [c.name, c]));
    expect(extra.ew_halpha!.unit).toBe('Angstrom');
    expect(extra.size!.unit).toBe('kpc');
    expect(extra.odd!.unit).toBeUndefined();
    expect(extra.odd!.description).toBe('extra odd (unit as supplied: furlong)');
    expectProblem(b.warnings, { severity: 'warning', file: 'objects.fits', column: 'odd', message: /unit cannot be mapped/ });
  });
});
