/**
 * The golden summaries of a small demo bundle (`test/fixtures/golden/summaries.json`): what
 * `summariseAll` gave for it when recorded, checked by summarise-golden.test.ts. Re-record
 * (only when a change of a published statistic is meant, and said why) with
 *   node --import tsx test/pipeline/golden-summaries.ts <source root> test/fixtures/golden/summaries.json
 * where <source root> is the checkout whose summaries are recorded.
 */
import { createHash } from 'node:crypto';
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

/** The bundle: the demo generator at these settings (unequal draw counts, some below 64, 8 parameters). */
export const GOLDEN_BUNDLE = { nObjects: 40, drawsRange: [40, 700] as [number, number], params: 8 as const, seed: 5 };

export interface Golden {
  bundle: typeof GOLDEN_BUNDLE;
  /** SHA-256 of the generated samples file: a different one means the generator changed. */
  samplesSha256: string;
  ids: string[];
  stats: Record<string, number[][]>;
  multimodal: number[][];
  flags: number[];
  ess: number[];
  nSamples: number[];
  cov: number[];
}

const STATS = ['mean', 'std', 'p025', 'p16', 'p50', 'p84', 'p975', 'hdi68lo', 'hdi68hi', 'hdi95lo', 'hdi95hi', 'edgeMass'] as const;

/** Generate the golden bundle into `dir` with the generator of `root`. */
export async function makeGoldenBundle(root: string, dir: string): Promise<string> {
  const { generateDemoBundle } = await import(join(root, 'scripts/demo/generate.ts'));
  await generateDemoBundle(dir, GOLDEN_BUNDLE);
  return createHash('sha256').update(await readFile(join(dir, 'samples.arrow'))).digest('hex');
}

/** The summaries of the golden bundle by the code of `root` (streamed, one worker). */
export async function goldenOf(root: string, dir: string, sha: string): Promise<Golden> {
  const { loadBundle } = await import(join(root, 'src/lib/bundle/load.ts'));
  const { summariseAll } = await import(join(root, 'src/lib/pipeline/summarise.ts'));
  const b = await loadBundle(dir, { samples: false });
  const { table: t } = await summariseAll(b, { seed: b.config.seed, workers: 1 });
  const rows = (a: ArrayLike<number>[]) => a.map((x) => Array.from(x));
  return {
    bundle: GOLDEN_BUNDLE,
    samplesSha256: sha,
    ids: b.objects.id,
    stats: Object.fromEntries(STATS.map((k) => [k, rows(t[k])])),
    multimodal: rows(t.multimodal),
    flags: Array.from(t.flags),
    ess: Array.from(t.ess),
    nSamples: Array.from(t.nSamples),
    cov: Array.from(t.cov),
  };
}

if (process.argv[1]?.endsWith('golden-summaries.ts')) {
  const [root, out] = process.argv.slice(2);
  const dir = await mkdtemp(join(tmpdir(), 'posterity-golden-'));
  try {
    const sha = await makeGoldenBundle(root, join(dir, 'bundle'));
    const g = await goldenOf(root, join(dir, 'bundle'), sha);
    // NaN (no uniform prior: no edge mass) is written as null
    await writeFile(out, JSON.stringify(g) + '\n');
    console.log(`wrote ${out}`);
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}
