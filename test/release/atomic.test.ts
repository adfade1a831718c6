/**
 * A build is atomic: a failed build, or one interrupted by SIGTERM, leaves the previous
 * output byte for byte as it was and no staging folder behind.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawn } from 'node:child_process';
import { createHash } from 'node:crypto';
import { copyFileSync, existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { buildRelease, PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { PosterityError } from '../../src/lib/core/problems.ts';

let tmp: string;
let bundle: string;
let out: string;
let before: Map<string, string>;

/** Path (relative to `dir`) to SHA-256 of every file, and "dir" for every folder. */
function snapshot(dir: string): Map<string, string> {
  const m = new Map<string, string>();
  const walk = (d: string) => {
    for (const e of readdirSync(d, { withFileTypes: true })) {
      const p = join(d, e.name);
      if (e.isDirectory()) {
        m.set(relative(dir, p) + '/', 'dir');
        walk(p);
      } else m.set(relative(dir, p), createHash('sha256').update(readFileSync(p)).digest('hex'));
    }
  };
  walk(dir);
  return m;
}

/** Staging or swap folders a build may leave next to its output. */
const leftovers = () => readdirSync(tmp).filter((n) => n.startsWith('.posterity-tmp-') || n.startsWith('.posterity-old-'));

beforeAll(async () => {
  tmp = mkdtempSync(join(tmpdir(), 'posterity-atomic-'));
  bundle = join(tmp, 'bundle');
  out = join(tmp, 'out');
  await generateDemoBundle(bundle, { nObjects: 60 });
  await buildRelease(bundle, { out });
  before = snapshot(out);
}, 300_000);
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

describe('a failing build', () => {
  it('is rejected and leaves the previous output byte for byte as it was', async () => {
    expect(before.size).toBeGreaterThan(100);
    expect(before.has('index.html')).toBe(true);
    const broken = join(tmp, 'broken');
    mkdirSync(broken);
    for (const f of readdirSync(bundle)) copyFileSync(join(bundle, f), join(broken, f));
    // one right ascension out of range in row 3
    const lines = readFileSync(join(broken, 'objects.csv'), 'utf8').split('\n');
    const cells = lines[3].split(',');
    cells[1] = '400';
    lines[3] = cells.join(',');
    writeFileSync(join(broken, 'objects.csv'), lines.join('\n'));
    const err = await buildRelease(broken, { out }).then(
      () => null,
      (e: unknown) => e,
    );
    expect(err).toBeInstanceOf(PosterityError);
    expect((err as PosterityError).problems).toContainEqual(expect.objectContaining({ file: 'objects.csv', row: 3, column: 'RA_DEG' }));
    expect(snapshot(out)).toEqual(before);
    expect(leftovers()).toEqual([]);
  });
});

describe('an interrupted build', () => {
  it('exits on SIGTERM with 143, leaving the previous output as it was and no staging folder', async () => {
    const child = spawn(process.execPath, ['scripts/posterity.mjs', 'build', bundle, '--out', out, '--quiet'], { cwd: PROJECT_ROOT, stdio: ['ignore', 'pipe', 'pipe'] });
    let stderr = '';
    child.stderr.on('data', (b) => (stderr += b));
    const exited = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((ok) => child.on('exit', (code, signal) => ok({ code, signal })));
    // wait until the staging folder exists (the build has started), then about 3 s in all
    const t0 = Date.now();
    while (leftovers().length === 0 && Date.now() - t0 < 20_000) await new Promise((r) => setTimeout(r, 50));
    expect(leftovers().length, 'the build made its staging folder').toBe(1);
    await new Promise((r) => setTimeout(r, Math.max(0, 3000 - (Date.now() - t0))));
    child.kill('SIGTERM');
    const { code, signal } = await exited;
    expect(code === 143 || (code === null && signal === 'SIGTERM') || (code !== null && code !== 0), `exit ${code} ${signal}\n${stderr}`).toBe(true);
    expect(code).toBe(143);
    // a child process (the site build) must not go on writing after the parent is gone
    await new Promise((r) => setTimeout(r, 1500));
    expect(leftovers()).toEqual([]);
    expect(existsSync(out)).toBe(true);
    expect(snapshot(out)).toEqual(before);
  }, 60_000);
});
