/**
 * The same bundle builds a byte-identical site (design, reliability rules): every file of two
 * builds into different folders is compared byte for byte.
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { mkdirSync, readdirSync, readFileSync, rmSync, statSync } from 'node:fs';
import { join, relative } from 'node:path';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { buildRelease, PROJECT_ROOT } from '../../src/lib/release/build.ts';

const ROOT = join(PROJECT_ROOT, 'test-output', 'determinism');

function files(dir: string): string[] {
  const out: string[] = [];
  const walk = (d: string) => {
    for (const name of readdirSync(d).sort()) {
      const p = join(d, name);
      if (statSync(p).isDirectory()) walk(p);
      else out.push(relative(dir, p));
    }
  };
  walk(dir);
  return out;
}

describe('determinism', () => {
  beforeAll(async () => {
    rmSync(ROOT, { recursive: true, force: true });
    mkdirSync(ROOT, { recursive: true });
    await generateDemoBundle(join(ROOT, 'bundle'), { nObjects: 70 });
    await buildRelease(join(ROOT, 'bundle'), { out: join(ROOT, 'a') });
    await buildRelease(join(ROOT, 'bundle'), { out: join(ROOT, 'b') });
  }, 900_000);

  it('two builds of the same bundle are byte-identical', () => {
    const a = files(join(ROOT, 'a'));
    const b = files(join(ROOT, 'b'));
    expect(b).toEqual(a);
    expect(a.length).toBeGreaterThan(70);
    const differing = a.filter((f) => !readFileSync(join(ROOT, 'a', f)).equals(readFileSync(join(ROOT, 'b', f))));
    expect(differing).toEqual([]);
  });
});
