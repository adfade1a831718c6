/**
 * `posterity check <bundle>` through the command line: every problem on stderr in one
 * run with its place, errors and warnings listed apart, exit 1 on any error, 0 otherwise.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { BAD } from './_problems.ts';

interface Run { status: number | null; stdout: string; stderr: string }

function check(dir: string): Promise<Run> {
  return new Promise((ok, fail) => {
    const child = spawn(process.execPath, ['scripts/posterity.mjs', 'check', dir], { cwd: PROJECT_ROOT, stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '', stderr = '';
    child.stdout.on('data', (b) => (stdout += b));
    child.stderr.on('data', (b) => (stderr += b));
    child.on('error', fail);
    child.on('close', (status) => ok({ status, stdout, stderr }));
  });
}

let tmp: string;
const runs: Record<string, Run> = {};

beforeAll(async () => {
  tmp = mkdtempSync(join(tmpdir(), 'posterity-cli-'));
  await generateDemoBundle(join(tmp, 'demo'), { nObjects: 60 });
  const dirs: Record<string, string> = {
    'five-errors': join(BAD, 'five-errors'),
    'unknown-columns': join(BAD, 'unknown-columns'),
    'invalid-json': join(BAD, 'invalid-json'),
    'fits-truncated': join(BAD, 'fits-truncated'),
    demo: join(tmp, 'demo'),
  };
  // two at a time (two cores)
  const names = Object.keys(dirs);
  for (let i = 0; i < names.length; i += 2)
    await Promise.all(names.slice(i, i + 2).map(async (n) => (runs[n] = await check(dirs[n]))));
}, 120_000);
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

describe('posterity check', () => {
  it('reports all five errors of one bundle in one run, each with its place, and exits 1', () => {
    const r = runs['five-errors'];
    expect(r.status).toBe(1);
    expect(r.stderr).toMatch(/^5 errors:$/m);
    for (const line of [
      'error: release.json, field "units.flux": not one of the allowed values: expected one of "uJy", "mJy", "Jy", "erg/s/cm2/A", "ABmag", got the text "nJy"',
      'error: objects.csv, row 4, column "id": duplicate object id: expected an id not used before (first at row 3), got "g3"',
      'error: samples.csv, row 2, column "w": weight is negative: expected a finite weight >= 0, got -0.5',
      'error: photometry.csv, row 4, column "id": id not in the objects table: expected the id of a row of the objects table, got "g7"',
      'error: bands.csv, row 1, column "wavelength": wavelength is not positive: expected a finite wavelength > 0, got -0.5',
    ])
      expect(r.stderr).toContain(line);
    expect(r.stdout).toBe('');
  });

  it('prints warnings apart from errors and exits 0 when there are only warnings', () => {
    const r = runs['unknown-columns'];
    expect(r.status).toBe(0);
    expect(r.stderr).not.toMatch(/error/);
    expect(r.stderr).toMatch(/^3 warnings:$/m);
    expect(r.stderr).toContain('warning: photometry.csv, column "seeing": unknown column, not used');
    expect(r.stderr).toContain('warning: samples.csv, column "sampler_note": unknown column, not used');
    expect(r.stderr).toContain('warning: release.json, field "tables.photometry.columns.magnitude"');
    expect(r.stdout).toMatch(/^ok: 3 objects, 6 draws, 4 photometry rows$/m);
  });

  it('names the line of invalid JSON and the file of a truncated table', () => {
    expect(runs['invalid-json'].status).toBe(1);
    expect(runs['invalid-json'].stderr).toContain('error: release.json: not valid JSON at line 17');
    expect(runs['fits-truncated'].status).toBe(1);
    expect(runs['fits-truncated'].stderr).toMatch(/error: objects\.fits, row 2: truncated/);
  });

  it('exits 0 on a good bundle (the demo, 60 objects)', () => {
    const r = runs.demo;
    expect(r.stderr).not.toMatch(/error/);
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/^ok: 60 objects, \d+ draws, \d+ photometry rows$/m);
  });
});
