/**
 * The demo's earlier release, 0.9.0: the internal preview the 1.0.0 bundle replaced, derived
 * from the 1.0.0 bundle by stated rules so that the comparison of the two has known answers.
 * By catalogue index i of the 1.0.0 objects (0-based):
 *
 * - added in 1.0.0 (absent from 0.9.0): i % 40 === 9;
 * - renamed: i % 100 === 23; 0.9.0 called them `VDF-PRE-<i+1>`, at a position 0.2″ north;
 * - removed in 1.0.0 (only in 0.9.0): spurious duplicates of objects i % 120 === 61, id
 *   `VDF-X<i+1>`, 8″ north of their source, with its draws and photometry;
 * - the shallow field corners (|u| > 0.75 and |v| > 0.75 in the field's box coordinates):
 *   0.9.0 had photometric errors 0.6 times too small (flux errors x 0.6, chi-square / 0.36)
 *   and log SFR draws shifted by 4 times the posterior's weighted standard deviation (upwards,
 *   or downwards where that would leave the prior), so their log SFR medians move;
 * - every object with i % 10 === 4 had another importance-sampling run: weights multiplied by
 *   exp(0.3 N(0, 1)), a small shift well inside the errors.
 *
 * 0.9.0 has no spectra and no model SEDs, fits only the main sequence (deconvolved, naive and
 * running-median), and was published in viewer mode (one viewer page for every object), which
 * keeps its build short.
 */
import { mkdir, readFile, writeFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { deriveSeed, makeRng } from '../../src/lib/core/random.ts';
import { readTable, readTableBatches } from '../../src/lib/io/read.ts';
import { writeCsv } from '../../src/lib/io/csv.ts';
import { column, numberAt, type Column, type Table } from '../../src/lib/io/table.ts';
import type { ReleaseConfig } from '../../src/lib/bundle/schema.ts';
import { ArrowChunkWriter } from './writers.ts';
import type { DemoTruth } from './generate.ts';

export const PREVIOUS_VERSION = '0.9.0';
export const PREVIOUS_DATE = '2026-06-15';

export const RULES = {
  added: (i: number) => i % 40 === 9,
  renamed: (i: number) => i % 100 === 23 && i % 40 !== 9,
  spurious: (i: number) => i % 120 === 61 && i % 40 !== 9,
  reseeded: (i: number) => i % 10 === 4 && i % 40 !== 9,
  renamedId: (i: number) => `VDF-PRE-${String(i + 1).padStart(6, '0')}`,
  spuriousId: (i: number) => `VDF-X${String(i + 1).padStart(6, '0')}`,
  renamedOffsetArcsec: 0.2,
  spuriousOffsetArcsec: 8,
  cornerErrorFactor: 0.6,
  cornerShiftStd: 4,
  corner: 0.75,
} as const;

/** Which 1.0.0 objects each rule touched (ids as in 1.0.0), for tests and the description. */
export interface PreviousPlan {
  added: string[];
  renamed: { previousId: string; id: string }[];
  removed: string[];
  corners: string[];
  reseeded: string[];
}

function takeRows(c: Column, rows: number[]): Column {
  const v = c.values;
  let values: Column['values'];
  if (Array.isArray(v)) values = rows.map((r) => v[r]);
  else {
    const Ctor = (v as Float64Array).constructor as new (n: number) => typeof v;
    const out = new Ctor(rows.length);
    rows.forEach((r, k) => ((out as Float64Array)[k] = (v as Float64Array)[r]));
    values = out;
  }
  const out: Column = { ...c, values };
  if (c.valid) out.valid = Uint8Array.from(rows, (r) => c.valid![r]);
  return out;
}

export async function derivePreviousBundle(currentDir: string, outDir: string): Promise<PreviousPlan> {
  const src = resolve(currentDir);
  const dir = resolve(outDir);
  await mkdir(dir, { recursive: true });
  const release = JSON.parse(await readFile(join(src, 'release.json'), 'utf8')) as ReleaseConfig;
  const truth = JSON.parse(await readFile(join(src, 'truth.json'), 'utf8')) as DemoTruth;
  const map = release.tables.objects.columns;
  const objects = await readTable(join(src, release.tables.objects.path));
  const ids = column(objects, 'id')!.values as string[];
  const num = (t: Table, name: string) => {
    const c = column(t, name)!;
    return Float64Array.from({ length: t.numRows }, (_, i) => numberAt(c, i));
  };
  const ra = num(objects, map.ra);
  const dec = num(objects, map.dec);
  const chi2 = num(objects, 'chi2');
  const index = new Map(ids.map((id, i) => [id, i]));
  const f = truth.field;
  const isCorner = (i: number) => Math.abs((ra[i] - f.raDeg) / (f.raWidthDeg / 2)) > RULES.corner && Math.abs((dec[i] - f.decDeg) / (f.decWidthDeg / 2)) > RULES.corner;
  const plan: PreviousPlan = { added: [], renamed: [], removed: [], corners: [], reseeded: [] };
  const idOf = new Map<string, string>();
  const copies = new Map<string, string>();
  const rows: number[] = [];
  const newIds: string[] = [];
  const newDec: number[] = [];
  const newChi2: number[] = [];
  ids.forEach((id, i) => {
    if (RULES.added(i)) {
      plan.added.push(id);
      return;
    }
    const renamed = RULES.renamed(i);
    const prevId = renamed ? RULES.renamedId(i) : id;
    idOf.set(id, prevId);
    if (renamed) plan.renamed.push({ previousId: prevId, id });
    if (isCorner(i)) plan.corners.push(id);
    if (RULES.reseeded(i)) plan.reseeded.push(id);
    const c2 = isCorner(i) ? Number((chi2[i] / RULES.cornerErrorFactor ** 2).toPrecision(6)) : chi2[i];
    rows.push(i);
    newIds.push(prevId);
    newDec.push(renamed ? Number((dec[i] + RULES.renamedOffsetArcsec / 3600).toFixed(7)) : dec[i]);
    newChi2.push(c2);
    if (RULES.spurious(i)) {
      const sid = RULES.spuriousId(i);
      copies.set(id, sid);
      plan.removed.push(sid);
      rows.push(i);
      newIds.push(sid);
      newDec.push(Number((dec[i] + RULES.spuriousOffsetArcsec / 3600).toFixed(7)));
      newChi2.push(c2);
    }
  });
  const prevObjects: Table = {
    numRows: rows.length,
    columns: objects.columns.map((c) => {
      if (c.name === 'id') return { ...c, values: newIds };
      if (c.name === map.dec) return { ...c, values: Float64Array.from(newDec) };
      if (c.name === 'chi2') return { ...c, values: Float64Array.from(newChi2) };
      return takeRows(c, rows);
    }),
  };
  await writeCsv(join(dir, 'objects.csv'), prevObjects);

  // photometry: the corners' errors too small; ids renamed; spurious copies after their source
  const phot = await readTable(join(src, release.tables.photometry!.path));
  const pId = column(phot, 'id')!.values as string[];
  const errName = release.tables.photometry!.columns.flux_err;
  const pErr = num(phot, errName);
  const corners = new Set(plan.corners);
  const pRows: number[] = [];
  const pIds: string[] = [];
  const pErrs: number[] = [];
  const pending: number[] = [];
  const flushCopies = () => {
    for (const r of pending) {
      pRows.push(r);
      pIds.push(copies.get(pId[r])!);
      pErrs.push(corners.has(pId[r]) ? Number((pErr[r] * RULES.cornerErrorFactor).toPrecision(6)) : pErr[r]);
    }
    pending.length = 0;
  };
  for (let r = 0; r < phot.numRows; r++) {
    if (pending.length && pId[pending[0]] !== pId[r]) flushCopies();
    const prevId = idOf.get(pId[r]);
    if (prevId === undefined) continue;
    pRows.push(r);
    pIds.push(prevId);
    pErrs.push(corners.has(pId[r]) ? Number((pErr[r] * RULES.cornerErrorFactor).toPrecision(6)) : pErr[r]);
    if (copies.has(pId[r])) pending.push(r);
  }
  flushCopies();
  await writeCsv(join(dir, 'photometry.csv'), {
    numRows: pRows.length,
    columns: phot.columns.map((c) => (c.name === 'id' ? { ...c, values: pIds } : c.name === errName ? { ...c, values: Float64Array.from(pErrs) } : takeRows(c, pRows))),
  });
  await writeFile(join(dir, 'bands.csv'), await readFile(join(src, release.tables.bands!.path)));

  // samples: two passes, the first for the corners' log SFR spread
  const samplesPath = join(src, release.tables.samples!.path);
  const sfr = release.parameters.find((p) => p.role === 'log_sfr')!;
  const sfrCol = sfr.column ?? sfr.name;
  const wCol = release.tables.samples!.columns.weight ?? 'weight';
  const moments = new Map<string, [number, number, number]>();
  for await (const b of readTableBatches(samplesPath, { columns: ['id', sfrCol, wCol] })) {
    const bid = column(b, 'id')!.values as string[];
    const x = column(b, sfrCol)!.values as Float32Array | Float64Array;
    const w = column(b, wCol)!.values as Float64Array;
    for (let r = 0; r < b.numRows; r++) {
      if (!corners.has(bid[r])) continue;
      const m = moments.get(bid[r]) ?? [0, 0, 0];
      m[0] += w[r];
      m[1] += w[r] * x[r];
      m[2] += w[r] * x[r] * x[r];
      moments.set(bid[r], m);
    }
  }
  const shift = new Map<string, number>();
  for (const [id, [sw, sx, sxx]] of moments) {
    const mean = sx / sw;
    const std = Math.sqrt(Math.max(0, sxx / sw - mean * mean));
    const max = sfr.prior && sfr.prior.kind === 'uniform' ? sfr.prior.max : Infinity;
    shift.set(id, (mean + (RULES.cornerShiftStd + 3) * std <= max ? 1 : -1) * RULES.cornerShiftStd * std);
  }
  const writer = new ArrowChunkWriter(join(dir, 'samples.arrow'));
  for await (const b of readTableBatches(samplesPath, {})) {
    const bid = column(b, 'id')!.values as string[];
    const keep: number[] = [];
    const outIds: string[] = [];
    const copyRows: number[] = [];
    for (let r = 0; r < b.numRows; r++) {
      const prevId = idOf.get(bid[r]);
      if (prevId === undefined) continue;
      keep.push(r);
      outIds.push(prevId);
      if (copies.has(bid[r])) copyRows.push(r);
    }
    const all = [...keep, ...copyRows];
    const allIds = [...outIds, ...copyRows.map((r) => copies.get(bid[r])!)];
    const srcIds = all.map((r) => bid[r]);
    writer.write({
      numRows: all.length,
      columns: b.columns.map((c) => {
        if (c.name === 'id') return { ...c, values: allIds };
        const t = takeRows(c, all);
        if (c.name === sfrCol) {
          const v = t.values as Float32Array;
          srcIds.forEach((id, k) => {
            const s = shift.get(id);
            if (s !== undefined) v[k] = v[k] + s;
          });
        }
        if (c.name === wCol) {
          const v = t.values as Float64Array;
          const rngs = new Map<string, ReturnType<typeof makeRng>>();
          srcIds.forEach((id, k) => {
            const i = index.get(id)!;
            if (!RULES.reseeded(i)) return;
            // one stream per object and output id, so a spurious copy is reseeded like its source
            const key = allIds[k];
            let g = rngs.get(key);
            if (!g) rngs.set(key, (g = makeRng(deriveSeed(release.seed, 'demo-0.9.0-reseed', key))));
            v[k] = v[k] * Math.exp(0.3 * g.normal());
          });
        }
        return t;
      }),
    });
  }
  writer.close();

  const prev: ReleaseConfig = {
    ...release,
    version: PREVIOUS_VERSION,
    releaseDate: PREVIOUS_DATE,
    description: `**Internal preview (version ${PREVIOUS_VERSION}).** Objects, posterior draws and photometry only; version 1.0.0 replaced it.\n\n${release.description}`,
    citation: {
      text: release.citation.text.replace(`version ${release.version}`, `version ${PREVIOUS_VERSION}`),
      bibtex: release.citation.bibtex.replace(`version = {${release.version}}`, `version = {${PREVIOUS_VERSION}}`).replace('month = dec', 'month = jun'),
    },
    changelog: release.changelog.filter((e) => e.version === PREVIOUS_VERSION),
    tables: { objects: release.tables.objects, samples: release.tables.samples, photometry: release.tables.photometry, bands: release.tables.bands },
    relations: release.relations.filter((r) => r.name === 'main_sequence').map((r) => ({ ...r, methods: ['deconvolved', 'naive', 'running-median'] })),
    site: { ...release.site, objectPageLimit: 1000 },
  };
  await writeFile(join(dir, 'release.json'), JSON.stringify(prev, null, 2) + '\n');
  await writeFile(join(dir, 'plan.json'), JSON.stringify(plan, null, 1) + '\n');
  return plan;
}
