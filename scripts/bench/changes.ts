/**
 * Bench task: release against release at scale. Two synthetic catalogues of n objects and 8
 * parameters (the earlier one written as a downloads folder: catalogue.arrow and release.json;
 * 1% of objects removed, 1% added, 0.5% renamed, every median moved a little), compared by
 * `compareWithPrevious`, against the floor of decoding the same columns of the same file.
 */
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { writeArrow } from '../../src/lib/io/arrow.ts';
import { readTableBatches } from '../../src/lib/io/read.ts';
import type { Column, Table } from '../../src/lib/io/table.ts';
import { makeRng } from '../../src/lib/core/random.ts';
import { FLAG_INFO } from '../../src/lib/core/flags.ts';
import { compareWithPrevious, openPrevious } from '../../src/lib/pipeline/changes.ts';
import { sha256File } from '../../src/lib/pipeline/downloads.ts';
import type { ReleaseConfig } from '../../src/lib/bundle/schema.ts';

const now = () => performance.now() / 1000;
const PARAMS = ['log_mstar', 'log_sfr', 'av', 'log_age', 'metallicity', 'log_tau', 'dust_slope', 'log_u'];

function catalogue(n: number, seed: number, idOf: (i: number) => string): Table {
  const r = makeRng(seed);
  const cols: Column[] = [
    { name: 'id', kind: 'string', values: Array.from({ length: n }, (_, i) => idOf(i)) },
    { name: 'ra', kind: 'float64', values: Float64Array.from({ length: n }, (_, i) => 150 + (i % 1000) * 0.001), unit: 'deg' },
    { name: 'dec', kind: 'float64', values: Float64Array.from({ length: n }, (_, i) => 2 + Math.floor(i / 1000) * 0.001), unit: 'deg' },
    { name: 'flags', kind: 'int32', values: Int32Array.from({ length: n }, () => (r.next() < 0.1 ? 1 : 0)) },
  ];
  for (const p of PARAMS) {
    const mid = Float64Array.from({ length: n }, (_, i) => 10 + Math.sin(i) + 0.01 * r.normal());
    cols.push({ name: `${p}_p16`, kind: 'float64', values: mid.map((v) => v - 0.1) }, { name: `${p}_p50`, kind: 'float64', values: mid }, { name: `${p}_p84`, kind: 'float64', values: mid.map((v) => v + 0.1) });
  }
  return { columns: cols, numRows: n };
}

export async function changes(nText: string): Promise<Record<string, unknown>> {
  const n = Number(nText);
  const dir = await mkdtemp(join(tmpdir(), 'posterity-bench-changes-'));
  try {
    const id = (i: number) => `OBJ-${String(i).padStart(7, '0')}`;
    // earlier: objects 0 .. n-1, except every 200th renamed; now: objects n/100 .. n + n/100 - 1
    const shift = Math.round(n / 100);
    const before = catalogue(n, 1, (i) => (i % 200 === 7 ? `OLD-${i}` : id(i)));
    const nowCat = catalogue(n, 2, (i) => id(i + shift));
    for (const c of nowCat.columns) if (c.name === 'ra' || c.name === 'dec') {
        // the same object at the same place; the added ones in a field of their own
        const a = before.columns.find((b) => b.name === c.name)!.values as Float64Array;
        c.values = Float64Array.from({ length: n }, (_, i) => (i + shift < n ? a[i + shift] : c.name === 'dec' ? 40 + i * 1e-3 : a[i]));
      }
    const config = {
      title: 'Bench survey',
      version: '2.0.0',
      releaseDate: '2030-01-01',
      survey: { name: 'Bench survey', areaDeg2: 1 },
      parameters: PARAMS.map((p) => ({ name: p, label: p, unit: '', description: p, role: 'other' })),
      relations: [],
    } as unknown as ReleaseConfig;
    await writeArrow(join(dir, 'catalogue.arrow'), before);
    await writeFile(
      join(dir, 'release.json'),
      JSON.stringify({ title: 'Bench survey', version: '1.0.0', releaseDate: '2029-01-01', configuration: { survey: config.survey, parameters: config.parameters }, columns: before.columns.map((c) => ({ name: c.name, unit: c.unit ?? '' })), flags: FLAG_INFO.map((f) => ({ bit: f.bit, name: f.name })) }),
    );
    const want = before.columns.map((c) => c.name);
    // the floor: decode the compared columns of the earlier catalogue and touch every value
    const t0 = now();
    let acc = 0;
    for await (const b of readTableBatches(join(dir, 'catalogue.arrow'), { columns: want }))
      for (const c of b.columns) {
        const v = c.values;
        if (Array.isArray(v)) for (const s of v) acc += s.length;
        else for (let i = 0; i < v.length; i++) acc += Number(v[i]);
      }
    const scanSeconds = now() - t0;
    const t1 = now();
    const prev = openPrevious({ path: dir }, config);
    const { changes: c } = await compareWithPrevious(prev, { config, catalogue: nowCat, relations: [], objectLookup: false }, sha256File);
    const seconds = now() - t1;
    return { n, seconds, scanSeconds, ratio: seconds / scanSeconds, checksum: acc, counts: c.counts };
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}
