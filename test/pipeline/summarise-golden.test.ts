/**
 * The summaries of a small demo bundle against their recorded values (golden-summaries.ts
 * recorded them from the implementation before the SIMD kernel and the zero-copy reader): every
 * published statistic within rounding (1e-12 relative), every flag, multimodality bit and draw
 * count exactly, for one worker thread and two.
 */
import { mkdtemp, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { makeGoldenBundle, type Golden } from './golden-summaries.ts';

let dir: string;
let golden: Golden;
let sha: string;

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'posterity-golden-test-'));
  golden = JSON.parse(await readFile(join(PROJECT_ROOT, 'test/fixtures/golden/summaries.json'), 'utf8'));
  sha = await makeGoldenBundle(PROJECT_ROOT, join(dir, 'bundle'));
}, 120_000);

afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** Largest relative difference (NaN/null must match NaN). */
function maxRelative(a: (number | null)[], b: number[]): number {
  let worst = 0;
  for (let i = 0; i < a.length; i++) {
    const x = a[i] === null ? NaN : (a[i] as number);
    const y = b[i];
    if (Number.isNaN(x) || Number.isNaN(y)) {
      if (Number.isNaN(x) !== Number.isNaN(y)) return Infinity;
      continue;
    }
    if (x === y) continue;
    worst = Math.max(worst, Math.abs(x - y) / Math.max(Math.abs(x), Math.abs(y)));
  }
  return worst;
}

describe('summaries of the golden demo bundle', () => {
  it('is the bundle the golden values were recorded from', () => {
    // a different checksum means the demo generator changed: re-record (see golden-summaries.ts)
    expect(sha).toBe(golden.samplesSha256);
  });

  for (const workers of [1, 2]) {
    it(`gives the recorded statistics within rounding and the recorded flags exactly (${workers} worker${workers > 1 ? 's' : ''})`, async () => {
      const { summariseAll } = await import('../../src/lib/pipeline/summarise.ts');
      const { loadBundle } = await import('../../src/lib/bundle/load.ts');
      const b = await loadBundle(join(dir, 'bundle'), { samples: false });
      const { table: t } = await summariseAll(b, { seed: b.config.seed, workers });
      expect(b.objects.id).toEqual(golden.ids);
      expect(Array.from(t.flags)).toEqual(golden.flags);
      expect(t.multimodal.map((m) => Array.from(m))).toEqual(golden.multimodal);
      expect(Array.from(t.nSamples)).toEqual(golden.nSamples);
      for (const [key, rows] of Object.entries(golden.stats)) {
        const got = (t as unknown as Record<string, Float64Array[]>)[key];
        for (let j = 0; j < rows.length; j++) expect(maxRelative(rows[j], Array.from(got[j])), `${key}[${j}]`).toBeLessThanOrEqual(1e-12);
      }
      expect(maxRelative(golden.ess, Array.from(t.ess))).toBeLessThanOrEqual(1e-12);
      expect(maxRelative(golden.cov, Array.from(t.cov))).toBeLessThanOrEqual(1e-12);
    }, 120_000);
  }
});
