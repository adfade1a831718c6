/**
 * The summaries, run every way they can be run, against the implementation they replaced
 * (`reference-summarise.ts`, a frozen copy): samples in memory or streamed from the file,
 * grouped or shuffled (spilled), one worker thread or two, and split into partitions then
 * merged. Every way must give the same SummaryTable, population draws and corner data; the
 * reference is the only source of the expected values.
 */
import { cp, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { loadBundle, type Bundle } from '../../src/lib/bundle/load.ts';
import { PosterityError } from '../../src/lib/core/problems.ts';
import { readTable } from '../../src/lib/io/read.ts';
import * as arrow from 'apache-arrow';
import { toArrowTable, writeArrow } from '../../src/lib/io/arrow.ts';
import type { Table } from '../../src/lib/io/table.ts';
import { summariseAll, type StreamInfo } from '../../src/lib/pipeline/summarise.ts';
import { fnv1a32, mergePartials, summaryMeta, summarisePartition, writeMerged } from '../../src/lib/pipeline/summarise-partition.ts';
import { TOOL } from '../../src/lib/pipeline/run.ts';
import { referenceSummariseAll } from './reference-summarise.ts';

let root: string;
let dir: string;
let bundle: Bundle;
let lite: Bundle;
let ref: Awaited<ReturnType<typeof referenceSummariseAll>>;
let refCharts: Map<number, string>;
/** The release's seed, which `summarisePartition` uses. */
let SEED: number;

/** Corner data by catalogue index, as JSON text. */
function collector() {
  const byIndex = new Map<number, string>();
  const order: number[] = [];
  return { byIndex, order, on: (i: number, c: unknown) => { byIndex.set(i, JSON.stringify(c)); order.push(i); } };
}

/** A copy of the bundle whose samples file is `transform` of the original. */
async function variant(name: string, transform: (t: Table) => Table): Promise<string> {
  const out = join(root, name);
  await cp(dir, out, { recursive: true });
  const t = await readTable(join(dir, 'samples.arrow'));
  await writeArrow(join(out, 'samples.arrow'), transform(t));
  return out;
}

function permuteRows(t: Table, perm: Int32Array): Table {
  return {
    numRows: t.numRows,
    columns: t.columns.map((c) => {
      const src = c.values as unknown as ArrayLike<unknown>;
      const values = Array.isArray(c.values) ? Array.from(perm, (i) => src[i]) : new (c.values.constructor as Float64ArrayConstructor)(perm.length).map((_, k) => src[perm[k]] as number);
      return { ...c, values: values as never };
    }),
  };
}

beforeAll(async () => {
  root = await mkdtemp(join(tmpdir(), 'posterity-summarise-'));
  dir = join(root, 'bundle');
  // 8 parameters, unequal draw counts (so batches and spill files hold objects of different lengths)
  await generateDemoBundle(dir, { nObjects: 36, drawsRange: [80, 400], params: 8, seed: 11 });
  bundle = await loadBundle(dir);
  lite = await loadBundle(dir, { samples: false });
  SEED = bundle.config.seed;
  const c = collector();
  ref = await referenceSummariseAll(bundle, { seed: SEED, onCharts: c.on });
  refCharts = c.byIndex;
});

afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

describe('summariseAll', () => {
  it('matches the previous implementation with the samples in memory, for one worker and two', async () => {
    for (const workers of [1, 2]) {
      const c = collector();
      const r = await summariseAll(bundle, { seed: SEED, onCharts: c.on, workers });
      expect(r.table).toStrictEqual(ref.table);
      expect(r.pop).toStrictEqual(ref.pop);
      expect(c.byIndex).toStrictEqual(refCharts);
      // in memory: corner data arrives in catalogue order
      expect(c.order).toStrictEqual([...c.order].sort((a, b) => a - b));
    }
  });

  it('matches it when streaming the samples file, for one worker and two, in the same order', async () => {
    const orders: number[][] = [];
    for (const workers of [1, 2]) {
      const c = collector();
      let info: StreamInfo | undefined;
      const r = await summariseAll(lite, { seed: SEED, onCharts: c.on, workers, batchRows: 700, onStream: (s) => (info = s) });
      expect(info?.mode).toBe('grouped');
      expect(r.table).toStrictEqual(ref.table);
      expect(r.pop).toStrictEqual(ref.pop);
      expect(c.byIndex).toStrictEqual(refCharts);
      orders.push(c.order);
    }
    expect(orders[1]).toStrictEqual(orders[0]);
  });

  it('spills shuffled samples to temporary files and still matches the loader-grouped result', async () => {
    // a fixed shuffle of every row (a 32-bit LCG, Numerical Recipes constants)
    const shuffled = await variant('shuffled', (t) => {
      const perm = Int32Array.from({ length: t.numRows }, (_, i) => i);
      let s = 12345;
      for (let i = perm.length - 1; i > 0; i--) {
        s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
        const j = s % (i + 1);
        [perm[i], perm[j]] = [perm[j], perm[i]];
      }
      return permuteRows(t, perm);
    });
    const full = await loadBundle(shuffled);
    const c0 = collector();
    const expected = await referenceSummariseAll(full, { seed: SEED, onCharts: c0.on });
    const streamed = await loadBundle(shuffled, { samples: false });
    for (const workers of [1, 2]) {
      const c = collector();
      let info: StreamInfo | undefined;
      let restarts = 0;
      const r = await summariseAll(streamed, {
        seed: SEED,
        onCharts: c.on,
        onRestart: () => void restarts++,
        workers,
        spillBudgetBytes: 64 * 1024, // several spill files
        onStream: (s) => (info = s),
      });
      expect(info?.mode).toBe('spilled');
      expect(info?.spill?.partitions).toBeGreaterThan(1);
      expect(restarts).toBe(1);
      expect(r.table).toStrictEqual(expected.table);
      expect(r.pop).toStrictEqual(expected.pop);
      expect(c.byIndex).toStrictEqual(c0.byIndex);
    }
  });

  it('reads Arrow IPC zero-copy across record batches and blocks that cut objects, for one worker and two', async () => {
    // record batches of 997 rows and blocks of 300: many objects start in one and end in the next
    const out = join(root, 'batched');
    await cp(dir, out, { recursive: true });
    const t = toArrowTable(await readTable(join(dir, 'samples.arrow')));
    const parts: arrow.RecordBatch[] = [];
    for (let a = 0; a < t.numRows; a += 997) parts.push(...t.slice(a, Math.min(t.numRows, a + 997)).batches);
    await writeFile(join(out, 'samples.arrow'), arrow.tableToIPC(new arrow.Table(parts), 'file'));
    const b = await loadBundle(out, { samples: false });
    for (const workers of [1, 2]) {
      const c = collector();
      let info: StreamInfo | undefined;
      const r = await summariseAll(b, { seed: SEED, onCharts: c.on, workers, batchRows: 300, onStream: (s) => (info = s) });
      expect(info?.mode).toBe('grouped');
      expect(r.table).toStrictEqual(ref.table);
      expect(r.pop).toStrictEqual(ref.pop);
      expect(c.byIndex).toStrictEqual(refCharts);
    }
  });

  it('reports every kind of bad row of a zero-copy Arrow read with file, row and column, as the loader words them', async () => {
    const broken = await variant('broken-many', (t) => {
      const col = (name: string) => t.columns.find((c) => c.name === name)!.values as Float64Array | Float32Array | string[];
      const ids = col('id') as string[];
      const first = ids[0];
      const second = ids.findIndex((v) => v !== first);
      const third = ids.findIndex((v, i) => i > second && v !== ids[second]);
      (col('log_mstar') as Float32Array)[3] = NaN; // row 4 (the first object)
      for (let r = second; r < third; r++) (col('w_imp') as Float64Array)[r] = 0; // the second object: every weight zero
      ids[ids.length - 1] = 'no-such-galaxy'; // the last row: an unknown id (at the end, so the rows stay grouped)
      return t;
    });
    const b = await loadBundle(broken, { samples: false });
    const err = await summariseAll(b, { seed: SEED, workers: 2, batchRows: 200 }).catch((e) => e);
    expect(err).toBeInstanceOf(PosterityError);
    const ps = (err as PosterityError).problems;
    const ids = (await readTable(join(broken, 'samples.arrow'))).columns.find((c) => c.name === 'id')!.values as string[];
    const second = ids.findIndex((v) => v !== ids[0]);
    expect(ps).toHaveLength(3);
    expect(ps).toEqual(
      expect.arrayContaining([
        expect.objectContaining({ file: 'samples.arrow', row: 4, column: 'log_mstar', message: 'value of log_mstar is missing or NaN' }),
        expect.objectContaining({ file: 'samples.arrow', row: second + 1, column: 'w_imp', object: ids[second], message: 'every draw of this object has zero weight' }),
        expect.objectContaining({ file: 'samples.arrow', row: ids.length, column: 'id', message: 'id not in the objects table', got: '"no-such-galaxy"' }),
      ]),
    );
  });

  it('reports bad draws with file, row and column when streaming', async () => {
    const broken = await variant('broken', (t) => {
      const w = t.columns.find((c) => c.name === 'w_imp')!;
      (w.values as Float64Array)[5] = -1;
      return t;
    });
    const b = await loadBundle(broken, { samples: false });
    const err = await summariseAll(b, { seed: SEED, workers: 1 }).catch((e) => e);
    expect(err).toBeInstanceOf(PosterityError);
    expect((err as PosterityError).problems[0]).toMatchObject({ file: 'samples.arrow', row: 6, column: 'w_imp', message: 'weight is negative' });
  });
});

describe('summarisePartition and mergePartials', () => {
  let parts: string[];
  let single: string;

  beforeAll(async () => {
    const out = join(root, 'partials');
    parts = [];
    for (let part = 0; part < 3; part++) parts.push((await summarisePartition(dir, { part, of: 3, outDir: out, workers: part === 1 ? 2 : 1 })).file);
    single = (await summarisePartition(dir, { part: 0, of: 1, outDir: join(root, 'single'), workers: 1 })).file;
  });

  it('hashes ids with FNV-1a 32 over UTF-8 (published test vectors)', () => {
    // FNV test vectors (Fowler/Noll/Vo reference test suite): "" -> 0x811c9dc5, "a" -> 0xe40c292c, "foobar" -> 0xbf9cf968
    expect(fnv1a32('')).toBe(0x811c9dc5);
    expect(fnv1a32('a')).toBe(0xe40c292c);
    expect(fnv1a32('foobar')).toBe(0xbf9cf968);
  });

  it('merges three parts into the bytes of one pass, and into the in-memory result', async () => {
    const merged = await mergePartials([parts[2], parts[0], parts[1]]);
    expect(merged.table).toStrictEqual(ref.table);
    expect(merged.pop).toStrictEqual(ref.pop);
    const mergedFile = join(root, 'merged.partial');
    await writeMerged(mergedFile, merged);
    expect(Buffer.compare(await readFile(mergedFile), await readFile(single))).toBe(0);
    // and the same bytes from the reference result held in memory
    const charts = Array.from({ length: bundle.objects.n }, (_, i) => (refCharts.has(i) ? JSON.parse(refCharts.get(i)!) : null));
    const refFile = join(root, 'reference.partial');
    await writeMerged(refFile, { table: ref.table as never, pop: ref.pop, charts, meta: summaryMeta(lite) });
    expect(Buffer.compare(await readFile(refFile), await readFile(single))).toBe(0);
  });

  it('refuses a missing part, a duplicated part, another bundle and another tool version', async () => {
    const problemOf = async (files: string[]) => {
      const e = await mergePartials(files).catch((x) => x);
      expect(e).toBeInstanceOf(PosterityError);
      return (e as PosterityError).problems[0];
    };
    expect((await problemOf([parts[0], parts[2]])).message).toBe('missing part 1 of 3');
    expect((await problemOf([parts[0], parts[1], parts[1], parts[2]])).message).toMatch(/^part 1 of 3 is given twice/);

    const other = join(root, 'other');
    await cp(dir, other, { recursive: true });
    const cfg = JSON.parse(await readFile(join(other, 'release.json'), 'utf8'));
    cfg.title += ' (changed)';
    await writeFile(join(other, 'release.json'), JSON.stringify(cfg, null, 2));
    const foreign = (await summarisePartition(other, { part: 1, of: 3, outDir: join(root, 'other-partials'), workers: 1 })).file;
    const p = await problemOf([parts[0], foreign, parts[2]]);
    expect(p.message).toMatch(/different bundle.*release\.json differs/);
    expect(p.file).toBe(foreign);

    // the same partial, as if written by another version (header edited in place, same length)
    const bytes = await readFile(parts[1]);
    const text = bytes.toString('latin1');
    const mine = `"version":"${TOOL.version}"`;
    const at = text.indexOf(mine);
    expect(at).toBeGreaterThan(0);
    const theirs = `"version":"${'9'.repeat(TOOL.version.length)}"`;
    bytes.write(theirs, at, 'latin1');
    const old = join(root, 'old-version.partial');
    await writeFile(old, bytes);
    const v = await problemOf([parts[0], old, parts[2]]);
    expect(v).toMatchObject({ file: old, message: expect.stringMatching(/another version/), got: `${TOOL.name} ${'9'.repeat(TOOL.version.length)}` });

    await writeFile(join(root, 'junk.partial'), 'not a partial');
    expect((await problemOf([join(root, 'junk.partial')])).message).toBe('not a partial summary file');
  });
});
