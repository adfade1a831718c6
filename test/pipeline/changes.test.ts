/**
 * Release against release: two small demo releases, 0.9.0 derived from 1.0.0 by the stated
 * rules of scripts/demo/previous.ts (objects added, removed and renamed, the field corners'
 * photometry and log SFR draws edited, some weights reseeded), built by the pipeline and
 * compared. The answers are known by construction; flag changes and relation differences are
 * recomputed here straight from the two releases' published files.
 */
import { beforeAll, afterAll, describe, expect, it } from 'vitest';
import { cpSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { derivePreviousBundle, type PreviousPlan } from '../../scripts/demo/previous.ts';
import { runPipeline } from '../../src/lib/pipeline/run.ts';
import { compareWithPrevious, openPrevious } from '../../src/lib/pipeline/changes.ts';
import { sha256File } from '../../src/lib/pipeline/downloads.ts';
import { Release } from '../../src/lib/bundle/schema.ts';
import { readTable } from '../../src/lib/io/read.ts';
import { column, numberAt } from '../../src/lib/io/table.ts';
import { PosterityError } from '../../src/lib/core/problems.ts';
import type { ChangesContent } from '../../src/lib/pipeline/changes-content.ts';

let tmp: string;
let plan: PreviousPlan;
let changes: ChangesContent;
const N = 300;

const dirs = () => ({ cur: join(tmp, 'bundle'), prev: join(tmp, 'bundle-0.9.0'), prevOut: join(tmp, 'out-0.9.0'), curOut: join(tmp, 'out-1.0.0') });

beforeAll(async () => {
  tmp = mkdtempSync(join(tmpdir(), 'posterity-changes-'));
  const d = dirs();
  await generateDemoBundle(d.cur, { nObjects: N, drawsRange: [128, 256] });
  plan = await derivePreviousBundle(d.cur, d.prev);
  await runPipeline(d.prev, { contentDir: join(d.prevOut, 'content'), downloadsDir: join(d.prevOut, 'downloads') });
  await runPipeline(d.cur, { contentDir: join(d.curOut, 'content'), downloadsDir: join(d.curOut, 'downloads'), previous: { path: join(d.prevOut, 'downloads') } });
  changes = JSON.parse(readFileSync(join(d.curOut, 'downloads', 'changes.json'), 'utf8'));
}, 900_000);
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

async function catalogue(dir: string) {
  const t = await readTable(join(dir, 'downloads', 'catalogue.csv'));
  const ids = column(t, 'id')!.values as string[];
  const flags = new Map(ids.map((id, i) => [id, numberAt(column(t, 'flags')!, i)]));
  return { t, ids, flags };
}

describe('the comparison of two demo releases', () => {
  it('finds the objects added, removed and renamed', () => {
    expect(plan.added.length).toBe(8); // i % 40 === 9 for i < 300
    expect(changes.added.map((a) => a.id)).toEqual(plan.added);
    expect(changes.removed.map((r) => r.id)).toEqual(plan.removed);
    expect(changes.renamed.map((r) => [r.previousId, r.id])).toEqual(plan.renamed.map((r) => [r.previousId, r.id]));
    for (const r of changes.renamed) expect(r.separationArcsec).toBeCloseTo(0.2, 3); // the rule's offset
    expect(changes.counts).toMatchObject({ previous: N - plan.added.length + plan.removed.length, current: N, added: plan.added.length, removed: plan.removed.length, renamed: plan.renamed.length, compared: N - plan.added.length });
  });

  it('names exactly the edited corners as moved in log SFR, and nothing else as moved', () => {
    const sfr = changes.parameters.find((p) => p.name === 'log_sfr')!;
    expect(plan.corners.length).toBeGreaterThan(5);
    expect(sfr.moved.map((m) => m.id).sort()).toEqual(plan.corners.slice().sort());
    // a shift of 4 standard deviations against a combined width of about sqrt(2) of them
    for (const m of sfr.moved) expect(Math.abs(m.shiftSigma)).toBeGreaterThan(2);
    for (const p of changes.parameters.filter((q) => q.name !== 'log_sfr')) expect(p.nMoved, p.name).toBe(0);
    expect(sfr.histogram.counts.reduce((s, c) => s + c, 0) + sfr.histogram.below + sfr.histogram.above).toBe(sfr.compared);
  });

  it('gives zero shift to objects whose draws did not change, and small ones to the reseeded', async () => {
    const d = dirs();
    const { objects } = await compareWithPrevious(openPrevious({ path: join(d.prevOut, 'downloads') }, config(d.cur)), await current(), sha256File);
    const edited = new Set([...plan.corners, ...plan.reseeded]);
    let unchanged = 0;
    for (const [slug, o] of Object.entries(objects!)) {
      const id = o.renamed ? plan.renamed.find((r) => r.previousId === o.id)!.id : o.id;
      void slug;
      if (edited.has(id)) continue;
      unchanged++;
      for (const p of o.params) expect(p.shiftSigma, `${id} ${p.name}`).toBe(0);
    }
    expect(unchanged).toBeGreaterThan(200);
    const reseeded = plan.reseeded.filter((id) => !plan.corners.includes(id));
    const shifts = reseeded.flatMap((id) => objects![Object.keys(objects!).find((s) => objects![s].id === id || plan.renamed.some((r) => r.id === id && r.previousId === objects![s].id))!].params.map((p) => p.shiftSigma!));
    expect(shifts.some((z) => z !== 0)).toBe(true);
    expect(Math.max(...shifts.map(Math.abs))).toBeLessThan(2);
  });

  it('counts the flags raised and cleared as the two catalogues give them', async () => {
    const d = dirs();
    const before = await catalogue(d.prevOut);
    const now = await catalogue(d.curOut);
    const prevIdOf = new Map(plan.renamed.map((r) => [r.id, r.previousId]));
    for (const f of changes.flags) {
      const raised: string[] = [];
      const cleared: string[] = [];
      for (const id of now.ids) {
        const old = before.flags.get(prevIdOf.get(id) ?? id);
        if (old === undefined) continue;
        const cur = now.flags.get(id)!;
        if (cur & f.bit && !(old & f.bit)) raised.push(id);
        if (old & f.bit && !(cur & f.bit)) cleared.push(id);
      }
      expect(f.raisedIds, f.name).toEqual(raised);
      expect(f.clearedIds, f.name).toEqual(cleared);
    }
    // the corners' chi-square was 1/0.36 times larger in 0.9.0: poor fits there are cleared, none raised
    const poor = changes.flags.find((f) => f.name === 'POOR_FIT')!;
    expect(poor.cleared).toBeGreaterThan(0);
    expect(poor.raised).toBe(0);
    for (const id of poor.clearedIds) expect(plan.corners).toContain(id);
  });

  it('compares the relation fits bin by bin and method by method', () => {
    const d = dirs();
    const old = JSON.parse(readFileSync(join(d.prevOut, 'downloads', 'relations.json'), 'utf8'));
    const cur = JSON.parse(readFileSync(join(d.curOut, 'downloads', 'relations.json'), 'utf8'));
    const ms = changes.relations.find((r) => r.name === 'main_sequence')!;
    expect(ms.status).toBe('compared');
    expect(changes.relations.find((r) => r.name === 'dust_mass')!.status).toBe('new');
    const oldMs = old.relations.find((r: { name: string }) => r.name === 'main_sequence');
    const curMs = cur.relations.find((r: { name: string }) => r.name === 'main_sequence');
    let checked = 0;
    ms.bins.forEach((b, i) => {
      for (const m of b.methods) {
        const o = oldMs.bins[i].fits.find((f: { method: string }) => f.method === m.method);
        const c = curMs.bins[i].fits.find((f: { method: string }) => f.method === m.method);
        if (!o) {
          expect(m.status).toBe('new');
          continue;
        }
        for (const k of ['a', 'b', 's'] as const) {
          // side-facing half-widths combined in quadrature, as stated in changes.json's settings
          const up = c[k].median > o[k].median;
          const w = Math.hypot(up ? c[k].median - c[k].lo : c[k].hi - c[k].median, up ? o[k].hi - o[k].median : o[k].median - o[k].lo);
          expect(m[k]!.sigma).toBeCloseTo((c[k].median - o[k].median) / w, 2);
          checked++;
        }
      }
    });
    expect(checked).toBeGreaterThanOrEqual(2 * 3 * ms.bins.length - 6); // deconvolved and naive in every populated bin
    expect(ms.bins.flatMap((b) => b.methods.filter((m) => m.status === 'new').map((m) => m.method))).toContain('hierarchical');
  });

  it('drafts a changelog entry from the counts', () => {
    expect(changes.changelog.version).toBe('1.0.0');
    expect(changes.changelog.notes).toContain(`${plan.added.length} added, ${plan.removed.length} removed, ${plan.renamed.length} renamed`);
    expect(changes.changelog.notes).toMatch(new RegExp(`log SFR \\[M☉/yr\\] for ${plan.corners.length} objects`));
    expect(changes.changelog.notes).toContain('New relation: Dust attenuation versus stellar mass.');
  });

  it('writes the same bytes from the same inputs', async () => {
    const d = dirs();
    const cfg = config(d.cur);
    const a = await compareWithPrevious(openPrevious({ path: join(d.prevOut, 'downloads') }, cfg), await current(), sha256File);
    const b = await compareWithPrevious(openPrevious({ path: d.prevOut.replace(/$/, '/downloads') }, cfg), await current(), sha256File);
    expect(JSON.stringify(a.changes)).toBe(JSON.stringify(b.changes));
    expect(JSON.stringify(a.changes) + '\n').toBe(JSON.stringify(changes) + '\n');
  });
});

const config = (dir: string) => Release.parse(JSON.parse(readFileSync(join(dir, 'release.json'), 'utf8')));

/** This release as the comparison sees it, read back from its own downloads. */
async function current() {
  const d = dirs();
  const cfg = config(d.cur);
  const t = await readTable(join(d.curOut, 'downloads', 'catalogue.arrow'));
  const rel = JSON.parse(readFileSync(join(d.curOut, 'downloads', 'relations.json'), 'utf8'));
  return { config: cfg, catalogue: t, relations: rel.relations, objectLookup: true };
}

describe('an earlier release that cannot be compared is refused, naming the file and field', () => {
  const refused = async (edit: (r: Record<string, any>) => void) => {
    const d = dirs();
    const copy = join(tmp, `bad-${Math.random().toString(36).slice(2)}`);
    cpSync(join(d.prevOut, 'downloads'), copy, { recursive: true });
    const r = JSON.parse(readFileSync(join(copy, 'release.json'), 'utf8'));
    edit(r);
    writeFileSync(join(copy, 'release.json'), JSON.stringify(r));
    const cfg = config(d.cur);
    try {
      openPrevious({ path: copy }, cfg);
    } catch (e) {
      expect(e).toBeInstanceOf(PosterityError);
      return (e as PosterityError).problems.map((p) => ({ ...p, file: p.file?.replace(copy, '<prev>') }));
    }
    throw new Error('not refused');
  };

  it('another survey', async () => {
    const p = await refused((r) => (r.configuration.survey.name = 'Another Deep Field'));
    expect(p).toContainEqual(expect.objectContaining({ file: '<prev>/release.json', field: 'configuration.survey.name', message: 'the earlier release is of another survey' }));
  });
  it('a column whose unit changed, and one missing', async () => {
    const p = await refused((r) => {
      r.columns.find((c: { name: string }) => c.name === 'log_sfr_p50').unit = 'solMass/yr';
      r.columns = r.columns.filter((c: { name: string }) => c.name !== 'log_mstar_p16');
    });
    expect(p).toContainEqual(expect.objectContaining({ file: '<prev>/release.json', column: 'log_sfr_p50', expected: '"dex(solMass/yr)"', got: '"solMass/yr"' }));
    expect(p).toContainEqual(expect.objectContaining({ column: 'log_mstar_p16', message: 'the earlier catalogue has no such column' }));
  });
  it('the same version, and a newer one', async () => {
    expect(await refused((r) => (r.version = '1.0.0'))).toContainEqual(expect.objectContaining({ field: 'version', got: '1.0.0', message: expect.stringContaining('same version') }));
    expect(await refused((r) => (r.version = '1.0.1-rc.1'))).toContainEqual(expect.objectContaining({ field: 'version', message: 'the earlier release is newer than this build' }));
  });
  it('a folder that is no release', () => {
    expect(() => openPrevious({ path: tmp }, {} as never)).toThrow(/not an earlier release/);
  });
});
