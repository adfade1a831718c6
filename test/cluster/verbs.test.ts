/**
 * The cluster verbs through the command line, without Slurm: `summarise` in parts, `merge`
 * back to exactly one pass, its refusals (missing, duplicated, foreign bundle, other tool
 * version) with exit code 1 and the file named, `merge --missing`, and
 * `build --summaries` refusing summaries of another bundle before touching its output.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { copyFileSync, existsSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { PROJECT_ROOT } from '../../src/lib/release/build.ts';

const POSTERITY = join(PROJECT_ROOT, 'scripts', 'posterity.mjs');
const run = (args: string[]) => spawnSync(process.execPath, [POSTERITY, ...args], { encoding: 'utf8', timeout: 120_000 });
const part = (k: number, of: number) => `summary-part-${k}-of-${of}.partial`;

let dir: string;
let bundle: string;
let other: string;
let parts: string;
let one: string;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'posterity-verbs-'));
  bundle = join(dir, 'bundle');
  other = join(dir, 'other');
  parts = join(dir, 'parts');
  one = join(dir, 'one');
  await generateDemoBundle(bundle, { nObjects: 40 });
  await generateDemoBundle(other, { nObjects: 40, seed: 7 });
  for (let k = 0; k < 3; k++) {
    const r = run(['summarise', bundle, '--part', String(k), '--of', '3', '--out', parts]);
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    expect(r.stdout).toContain(`wrote ${join(parts, part(k, 3))}: part ${k} of 3`);
  }
  expect(run(['summarise', bundle, '--part', '0', '--of', '1', '--out', one, '--quiet']).status).toBe(0);
}, 300_000);

afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** A copy of the partials folder to spoil. */
function copyParts(name: string): string {
  const d = join(dir, name);
  mkdirSync(d);
  for (const f of readdirSync(parts)) copyFileSync(join(parts, f), join(d, f));
  return d;
}

describe('posterity summarise and merge', () => {
  it('merging the parts gives the bytes of one pass', () => {
    const out = join(dir, 'merged');
    const r = run(['merge', parts, '--out', out]);
    expect(r.status).toBe(0);
    expect(r.stdout).toContain('merged 3 partials (40 objects)');
    expect(readdirSync(out)).toEqual([part(0, 1)]);
    expect(readFileSync(join(out, part(0, 1))).equals(readFileSync(join(one, part(0, 1))))).toBe(true);
    // merging again replaces the merged file
    expect(run(['merge', parts, '--out', out, '--quiet']).status).toBe(0);
  });

  it('refuses a missing part, naming it', () => {
    const d = copyParts('missing');
    rmSync(join(d, part(1, 3)));
    // a half-written partial of an interrupted task is a temporary file, never merged
    writeFileSync(join(d, `${part(1, 3)}.tmp-12345`), 'PSTYSUM1 half');
    const r = run(['merge', d, '--out', join(dir, 'm-missing')]);
    expect(r.status).toBe(1);
    expect(r.stderr).toContain('missing part 1 of 3');
    expect(existsSync(join(dir, 'm-missing', part(0, 1)))).toBe(false);
  });

  it('refuses a part given twice, naming both files', () => {
    const d = copyParts('dup');
    copyFileSync(join(d, part(2, 3)), join(d, 'again.partial'));
    const r = run(['merge', d, '--out', join(dir, 'm-dup')]);
    expect(r.status).toBe(1);
    expect(r.stderr).toContain('part 2 of 3 is given twice');
    expect(r.stderr).toContain('again.partial');
  });

  it('refuses a partial of another bundle, naming the file', () => {
    const d = copyParts('foreign');
    const r0 = run(['summarise', other, '--part', '1', '--of', '3', '--out', d, '--quiet']);
    expect(r0.status).toBe(0);
    const r = run(['merge', d, '--out', join(dir, 'm-foreign')]);
    expect(r.status).toBe(1);
    expect(r.stderr).toContain(join(d, part(1, 3)));
    expect(r.stderr).toContain('different bundle');
    // and --missing with the bundle counts that part as still to do
    const m = run(['merge', d, '--missing', '--of', '3', '--bundle', bundle]);
    expect(m.status).toBe(0);
    expect(m.stdout).toBe('1');
    expect(m.stderr).toContain(part(1, 3));
  });

  it('refuses a partial of another tool version', () => {
    const d = copyParts('version');
    const f = join(d, part(0, 3));
    const bytes = readFileSync(f);
    const at = bytes.indexOf('"version":"0.1.0"');
    expect(at).toBeGreaterThan(0);
    bytes.write('"version":"0.0.9"', at, 'latin1');
    writeFileSync(f, bytes);
    const r = run(['merge', d, '--out', join(dir, 'm-version')]);
    expect(r.status).toBe(1);
    expect(r.stderr).toContain(f);
    expect(r.stderr).toContain('another version');
    const m = run(['merge', d, '--missing', '--of', '3']);
    expect(m.stdout).toBe('0');
  });

  it('--missing lists the parts still to do', () => {
    expect(run(['merge', parts, '--missing', '--of', '3', '--bundle', bundle]).stdout).toBe('');
    expect(run(['merge', parts, '--missing', '--of', '5']).stdout).toBe('0,1,2,3,4');
  });

  it('usage errors exit 2', () => {
    expect(run(['summarise', bundle, '--part', '3', '--of', '3', '--out', parts]).status).toBe(2);
    expect(run(['summarise', bundle, '--of', '3', '--out', parts]).status).toBe(2);
    expect(run(['merge', parts]).status).toBe(2);
    expect(run(['merge', parts, '--out', parts]).status).toBe(2);
    expect(run(['build', bundle, '--out', join(dir, 'site'), '--summaries']).status).toBe(2);
  });

  it('input problems exit 1 with the path', () => {
    const r = run(['summarise', join(dir, 'nope'), '--part', '0', '--of', '2', '--out', parts]);
    expect(r.status).toBe(1);
    expect(r.stderr).toContain(join(dir, 'nope'));
    const e = join(dir, 'empty');
    mkdirSync(e);
    const m = run(['merge', e, '--out', join(dir, 'm-empty')]);
    expect(m.status).toBe(1);
    expect(m.stderr).toContain(e);
  });

  it('build --summaries refuses summaries of another bundle and leaves --out alone', () => {
    const site = join(dir, 'site');
    mkdirSync(site);
    writeFileSync(join(site, 'keep.txt'), 'previous build');
    const r = run(['build', other, '--out', site, '--summaries', one, '--quiet']);
    expect(r.status).toBe(1);
    expect(r.stderr).toContain(join(one, part(0, 1)));
    expect(r.stderr).toContain('field "bundle"');
    expect(readdirSync(site)).toEqual(['keep.txt']);
  });
});
