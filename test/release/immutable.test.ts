/**
 * A published version never changes silently: a build into a folder that holds another
 * version is refused before anything runs, one of the same version is refused when its bytes
 * differ, and --replace overrides both.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync, readFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { publishedVersion, sameContent } from '../../src/lib/release/immutable.ts';
import { buildRelease, PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { PosterityError } from '../../src/lib/core/problems.ts';

let tmp: string;
const site = (dir: string, version: string, page = '<p>a</p>') => {
  mkdirSync(join(dir, 'downloads'), { recursive: true });
  writeFileSync(join(dir, 'downloads', 'release.json'), JSON.stringify({ version }));
  writeFileSync(join(dir, 'index.html'), page);
};

beforeAll(() => {
  tmp = mkdtempSync(join(tmpdir(), 'posterity-immutable-'));
});
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

describe('published versions', () => {
  it('an output folder records its version in downloads/release.json', () => {
    site(join(tmp, 'a'), '0.9.0');
    expect(publishedVersion(join(tmp, 'a'))).toBe('0.9.0');
    expect(publishedVersion(join(tmp, 'nothing-here'))).toBeNull();
  });

  it('two folders are the same only with the same files and bytes', async () => {
    site(join(tmp, 'x'), '1.0.0');
    site(join(tmp, 'y'), '1.0.0');
    expect(await sameContent(join(tmp, 'x'), join(tmp, 'y'))).toBeNull();
    writeFileSync(join(tmp, 'y', 'index.html'), '<p>b</p>');
    expect(await sameContent(join(tmp, 'x'), join(tmp, 'y'))).toBe('index.html differs');
    writeFileSync(join(tmp, 'y', 'index.html'), '<p>a</p>');
    writeFileSync(join(tmp, 'y', 'extra.txt'), '');
    expect(await sameContent(join(tmp, 'x'), join(tmp, 'y'))).toBe('extra.txt would be removed');
  });

  it('a build of another version into a published folder is refused before it runs, naming the file and field', async () => {
    const out = join(tmp, 'published');
    site(out, '0.9.0');
    const bundle = join(tmp, 'bundle');
    mkdirSync(bundle, { recursive: true });
    writeFileSync(join(bundle, 'release.json'), JSON.stringify({ version: '1.0.0' }));
    const err = await buildRelease(bundle, { out }).then(() => null, (e: unknown) => e);
    expect(err).toBeInstanceOf(PosterityError);
    expect((err as PosterityError).problems[0]).toMatchObject({ file: join(out, 'downloads', 'release.json'), field: 'version', got: '0.9.0' });
    expect(readFileSync(join(out, 'index.html'), 'utf8')).toBe('<p>a</p>');
    expect(existsSync(join(tmp, `.posterity-tmp-published-${process.pid}`))).toBe(false);
    // the command line says so and exits 1; with --replace it goes on to the bundle (which is invalid here)
    const cli = (extra: string[]) => spawnSync(process.execPath, [join(PROJECT_ROOT, 'scripts', 'posterity.mjs'), 'build', bundle, '--out', out, '--quiet', ...extra], { encoding: 'utf8' });
    const r = cli([]);
    expect(r.status).toBe(1);
    expect(r.stderr).toContain('holds the published version 0.9.0');
    const forced = cli(['--replace']);
    expect(forced.status).toBe(1);
    expect(forced.stderr).not.toContain('published version');
    expect(forced.stderr).toContain('release.json');
  });
});
