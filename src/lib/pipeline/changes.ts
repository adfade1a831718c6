/**
 * Release against release: this build compared with an earlier release's downloads
 * (`release.json`, `catalogue.arrow` or `catalogue.fits`, `relations.json`).
 *
 * `openPrevious` checks, before anything expensive runs, that the earlier release can be
 * compared: the same survey (its `survey.name`, else its title), an older version, and the
 * columns this comparison reads present with the same units. `compareWithPrevious` then
 * streams the earlier catalogue in batches, matching each row to this release by id through a
 * hash map of ids (only ids and the few compared columns of matched rows are kept), matches
 * the leftovers by position within a radius (renamed objects), and measures the shift of
 * every compared parameter's median, the flags raised and cleared, and the relation fits per
 * bin and method. The arithmetic is in `core/changes.ts`.
 */
import { parseUnit, unitLabel } from '../io/units.ts';
import { existsSync, readFileSync } from 'node:fs';
import { basename, join } from 'node:path';
import type { ReleaseConfig } from '../bundle/schema.ts';
import { FLAG_INFO } from '../core/flags.ts';
import { PosterityError, type Problem } from '../core/problems.ts';
import { slugOf } from '../core/slug.ts';
import { compareVersions, draftChangelog, flagChange, matchByPosition, shiftHistogram, shiftSigma, summariseShifts } from '../core/changes.ts';
import { readTableBatches } from '../io/read.ts';
import { column, numberAt, stringAt, type Column, type Table } from '../io/table.ts';
import type { Estimate, RelationContent } from './content.ts';
import type { ChangesContent, EstimateChange, FlagChange, MethodChange, MovedObject, ParameterChange, PreviousObject, RelationChange } from './changes-content.ts';

export interface PreviousOptions {
  /** A built site of the earlier release, or its downloads folder. */
  path: string;
  /** |shift| in units of the combined uncertainty above which an object counts as moved (default 2). */
  thresholdSigma?: number;
  /** Radius for matching objects whose id changed, in arcseconds; 0 turns it off (default 1). */
  matchRadiusArcsec?: number;
  /** Where the earlier release's site is published (default: its release.json `url`). */
  url?: string;
}

export const DEFAULT_THRESHOLD_SIGMA = 2;
export const DEFAULT_MATCH_RADIUS_ARCSEC = 1;

const SHIFT_TEXT =
  '(median now - median before) / sqrt(w_now^2 + w_before^2), each w the half-width of that release\'s 68% interval (16th to 84th percentile, or the fit\'s 68% credible interval) on the side facing the other median; the releases are treated as independent';

interface PreviousParam {
  name: string;
  label: string;
  unit: string;
}

/** An earlier release found and checked, ready to be compared. */
export interface PreviousRelease {
  /** Its downloads folder, and the files read, as the user named them. */
  downloads: string;
  releaseFile: string;
  catalogueFile: string;
  relationsFile: string | null;
  title: string;
  version: string;
  releaseDate: string;
  doi?: string;
  url?: string;
  /** Parameters in both releases (in this release's order), and those in only one. */
  params: PreviousParam[];
  newParameters: string[];
  droppedParameters: string[];
  /** The columns read from its catalogue, with the unit each must have. */
  columns: { name: string; unit: string }[];
  options: Required<Omit<PreviousOptions, 'url'>> & { url?: string };
}

interface PreviousReleaseJson {
  title?: string;
  version?: string;
  releaseDate?: string;
  doi?: string;
  configuration?: { survey?: { name?: string }; title?: string; url?: string; parameters?: { name: string; label?: string; unit?: string }[] };
  columns?: { name: string; unit?: string }[];
  flags?: { bit: number; name: string }[];
}

/** What identifies a survey across releases: `survey.name` when both releases give one, else the title. */
export function surveyIdentity(a: { title?: string; survey?: { name?: string } }, b: { title?: string; survey?: { name?: string } }): { field: string; a: string; b: string } {
  if (a.survey?.name && b.survey?.name) return { field: 'configuration.survey.name', a: a.survey.name, b: b.survey.name };
  return { field: 'title', a: a.title ?? '', b: b.title ?? '' };
}

/** Find the earlier release's downloads and check that it can be compared with `config`; every problem at once. */
/** A unit in its canonical form (io/units.ts), so releases that spell one unit differently (log(solMass), dex(solMass)) compare equal. */
function canonicalUnit(text: string): string {
  const r = parseUnit(text);
  return r.ok ? unitLabel(r.unit) : text.trim();
}

export function openPrevious(opts: PreviousOptions, config: ReleaseConfig): PreviousRelease {
  const given = opts.path;
  const downloads = existsSync(join(given, 'downloads', 'release.json')) ? join(given, 'downloads') : existsSync(join(given, 'release.json')) ? given : null;
  if (!downloads)
    throw new PosterityError({ severity: 'error', file: given, message: 'not an earlier release', expected: 'a built release site (with downloads/release.json) or its downloads folder (release.json and catalogue.arrow or catalogue.fits)' });
  const releaseFile = join(downloads, 'release.json');
  let rel: PreviousReleaseJson;
  try {
    rel = JSON.parse(readFileSync(releaseFile, 'utf8')) as PreviousReleaseJson;
  } catch (e) {
    throw new PosterityError({ severity: 'error', file: releaseFile, message: `not readable JSON (${(e as Error).message})` });
  }
  const problems: Problem[] = [];
  const need = (v: unknown, field: string) => {
    if (typeof v !== 'string' || !v) problems.push({ severity: 'error', file: releaseFile, field, message: 'required field is missing', expected: 'a string' });
  };
  need(rel.title, 'title');
  need(rel.version, 'version');
  need(rel.releaseDate, 'releaseDate');
  const prevConfig = rel.configuration;
  if (!prevConfig || !Array.isArray(prevConfig.parameters)) problems.push({ severity: 'error', file: releaseFile, field: 'configuration.parameters', message: 'required field is missing', expected: 'the configuration the earlier release was built with' });
  if (!Array.isArray(rel.columns)) problems.push({ severity: 'error', file: releaseFile, field: 'columns', message: 'required field is missing', expected: 'the column dictionary of the catalogue' });
  if (problems.length) throw new PosterityError(problems);

  // the same survey
  const who = surveyIdentity({ title: config.title, survey: config.survey }, { title: rel.title, survey: prevConfig!.survey });
  if (who.a !== who.b) problems.push({ severity: 'error', file: releaseFile, field: who.field, message: 'the earlier release is of another survey', expected: JSON.stringify(who.a), got: JSON.stringify(who.b) });
  // an older version
  const order = compareVersions(rel.version!, config.version);
  if (rel.version === config.version || order === 0)
    problems.push({ severity: 'error', file: releaseFile, field: 'version', message: 'the earlier release has the same version as this build; give this release a new version', expected: `a version before ${config.version}`, got: rel.version });
  else if (order !== null && order > 0) problems.push({ severity: 'error', file: releaseFile, field: 'version', message: 'the earlier release is newer than this build', expected: `a version before ${config.version}`, got: rel.version });
  else if (order === null && rel.releaseDate! > config.releaseDate)
    problems.push({ severity: 'error', file: releaseFile, field: 'releaseDate', message: 'the versions are not Semantic Versions and the earlier release is dated after this one', expected: `a date up to ${config.releaseDate}`, got: rel.releaseDate });

  // the columns compared: present, with the same units
  const docs = new Map(rel.columns!.map((c) => [c.name, canonicalUnit(c.unit ?? '')]));
  const prevParams = new Map(prevConfig!.parameters!.map((p) => [p.name, p]));
  const params: PreviousParam[] = [];
  const newParameters: string[] = [];
  for (const p of config.parameters) {
    const old = prevParams.get(p.name);
    if (!old) {
      newParameters.push(p.name);
      continue;
    }
    params.push({ name: p.name, label: p.label, unit: canonicalUnit(p.unit) });
  }
  const droppedParameters = [...prevParams.keys()].filter((n) => !config.parameters.some((p) => p.name === n));
  const columns = [
    { name: 'id', unit: '' },
    { name: 'ra', unit: 'deg' },
    { name: 'dec', unit: 'deg' },
    { name: 'flags', unit: '' },
    ...params.flatMap((p) => ['p16', 'p50', 'p84'].map((s) => ({ name: `${p.name}_${s}`, unit: p.unit }))),
  ];
  for (const c of columns) {
    const unit = docs.get(c.name);
    if (unit === undefined) problems.push({ severity: 'error', file: releaseFile, field: 'columns', column: c.name, message: 'the earlier catalogue has no such column', expected: `column ${c.name}` });
    else if (unit !== c.unit) problems.push({ severity: 'error', file: releaseFile, field: 'columns', column: c.name, message: 'the unit of this column changed; the releases cannot be compared', expected: JSON.stringify(c.unit), got: JSON.stringify(unit) });
  }
  // the flag bits mean the same
  for (const f of rel.flags ?? []) {
    const now = FLAG_INFO.find((x) => x.bit === f.bit);
    if (now && now.name !== f.name) problems.push({ severity: 'error', file: releaseFile, field: `flags (bit ${f.bit})`, message: 'the flag bit means something else in the earlier release', expected: now.name, got: f.name });
  }
  const arrow = join(downloads, 'catalogue.arrow');
  const fits = join(downloads, 'catalogue.fits');
  const catalogueFile = existsSync(arrow) ? arrow : existsSync(fits) ? fits : null;
  if (!catalogueFile) problems.push({ severity: 'error', file: downloads, message: 'the earlier release has no catalogue to compare', expected: 'catalogue.arrow or catalogue.fits' });
  if (problems.length) throw new PosterityError(problems);
  const relationsFile = existsSync(join(downloads, 'relations.json')) ? join(downloads, 'relations.json') : null;
  return {
    downloads,
    releaseFile,
    catalogueFile: catalogueFile!,
    relationsFile,
    title: rel.title!,
    version: rel.version!,
    releaseDate: rel.releaseDate!,
    ...(rel.doi ? { doi: rel.doi } : {}),
    ...((opts.url ?? prevConfig!.url) ? { url: opts.url ?? prevConfig!.url } : {}),
    params,
    newParameters,
    droppedParameters,
    columns,
    options: {
      path: opts.path,
      thresholdSigma: opts.thresholdSigma ?? DEFAULT_THRESHOLD_SIGMA,
      matchRadiusArcsec: opts.matchRadiusArcsec ?? DEFAULT_MATCH_RADIUS_ARCSEC,
      ...(opts.url ? { url: opts.url } : {}),
    },
  };
}

export interface CurrentRelease {
  config: ReleaseConfig;
  /** This build's catalogue (the published column model). */
  catalogue: Table;
  relations: RelationContent[];
  /** Write each object's earlier values for its page (static object pages only). */
  objectLookup: boolean;
}

export interface ComparisonResult {
  changes: ChangesContent;
  /** Earlier values by slug (objects in both releases), or null. */
  objects: Record<string, PreviousObject> | null;
}

interface OldRow {
  row: number;
  id: string;
  ra: number;
  dec: number;
  flags: number;
  /** p16, p50, p84 of each compared parameter, in order. */
  values: Float64Array;
}

/** Compare this release with the earlier one, streaming the earlier catalogue. */
export async function compareWithPrevious(prev: PreviousRelease, now: CurrentRelease, sha256: (path: string) => Promise<string>): Promise<ComparisonResult> {
  const cat = now.catalogue;
  const n = cat.numRows;
  const col = (name: string) => column(cat, name)!;
  const ids = col('id').values as string[];
  const ra = col('ra').values as Float64Array;
  const dec = col('dec').values as Float64Array;
  const flags = col('flags');
  const k = prev.params.length;
  const byId = new Map<string, number>();
  for (let i = 0; i < n; i++) byId.set(ids[i], i);

  // earlier values of the objects of this release, filled as the earlier catalogue streams past
  const oldRow = new Int32Array(n).fill(-1);
  const oldFlags = new Int32Array(n);
  const oldId: (string | null)[] = new Array(n).fill(null);
  const oldVals = new Float64Array(n * k * 3).fill(NaN);
  const leftovers: OldRow[] = [];
  const seen = new Set<string>();
  const file = prev.catalogueFile;
  const want = prev.columns.map((c) => c.name);
  let rows = 0;
  let checked = false;
  for await (const batch of readTableBatches(file, { file, columns: want, batchRows: 65536 })) {
    const cols = new Map<string, Column>();
    for (const c of batch.columns) if (want.includes(c.name)) cols.set(c.name, c);
    if (!checked) {
      checked = true;
      const problems: Problem[] = [];
      for (const c of prev.columns) {
        const got = cols.get(c.name);
        if (!got) problems.push({ severity: 'error', file, column: c.name, message: 'the earlier catalogue has no such column', expected: `column ${c.name}` });
        else if (got.unit !== undefined && canonicalUnit(got.unit ?? '') !== c.unit) problems.push({ severity: 'error', file, column: c.name, message: 'the unit of this column changed; the releases cannot be compared', expected: JSON.stringify(c.unit), got: JSON.stringify(got.unit) });
      }
      if (problems.length) throw new PosterityError(problems);
    }
    const cId = cols.get('id')!;
    const cRa = cols.get('ra')!;
    const cDec = cols.get('dec')!;
    const cFlags = cols.get('flags')!;
    const cVals = prev.params.flatMap((p) => ['p16', 'p50', 'p84'].map((s) => cols.get(`${p.name}_${s}`)!));
    for (let r = 0; r < batch.numRows; r++, rows++) {
      const id = stringAt(cId, r);
      if (seen.has(id)) throw new PosterityError({ severity: 'error', file, row: rows + 1, column: 'id', object: id, message: 'the earlier catalogue has this id twice' });
      seen.add(id);
      const f = numberAt(cFlags, r);
      const fl = Number.isFinite(f) ? f | 0 : 0;
      const i = byId.get(id);
      if (i !== undefined) {
        oldRow[i] = rows;
        oldFlags[i] = fl;
        for (let q = 0; q < 3 * k; q++) oldVals[i * 3 * k + q] = numberAt(cVals[q], r);
      } else {
        const values = new Float64Array(3 * k);
        for (let q = 0; q < 3 * k; q++) values[q] = numberAt(cVals[q], r);
        leftovers.push({ row: rows, id, ra: numberAt(cRa, r), dec: numberAt(cDec, r), flags: fl, values });
      }
    }
  }
  const sameId = n - countMissing(oldRow);

  // renamed: objects of each release without a partner by id, matched by position
  const unmatchedNew: number[] = [];
  for (let i = 0; i < n; i++) if (oldRow[i] < 0) unmatchedNew.push(i);
  const radius = prev.options.matchRadiusArcsec;
  const match = matchByPosition(
    leftovers.map((o) => o.ra),
    leftovers.map((o) => o.dec),
    unmatchedNew.map((i) => ra[i]),
    unmatchedNew.map((i) => dec[i]),
    radius / 3600,
  );
  const renamedOld = new Set<number>();
  const renamed: ChangesContent['renamed'] = [];
  for (let m = 0; m < match.a.length; m++) {
    const o = leftovers[match.a[m]];
    const i = unmatchedNew[match.b[m]];
    renamedOld.add(match.a[m]);
    oldRow[i] = o.row;
    oldFlags[i] = o.flags;
    oldId[i] = o.id;
    oldVals.set(o.values, i * 3 * k);
    renamed.push({ previousId: o.id, id: ids[i], slug: slugOf(ids[i]), separationArcsec: round(match.sepDeg[m] * 3600, 4) });
  }
  renamed.sort((x, y) => byId.get(x.id)! - byId.get(y.id)!);
  const removed = leftovers.filter((_, j) => !renamedOld.has(j)).map((o) => ({ id: o.id, ra: o.ra, dec: o.dec }));
  const added: ChangesContent['added'] = [];
  for (let i = 0; i < n; i++) if (oldRow[i] < 0) added.push({ id: ids[i], slug: slugOf(ids[i]) });

  // shifts of the medians
  const threshold = prev.options.thresholdSigma;
  const shifts = prev.params.map(() => new Float64Array(n).fill(NaN));
  const parameters: ParameterChange[] = prev.params.map((p, j) => {
    const cur = ['p16', 'p50', 'p84'].map((s) => col(`${p.name}_${s}`).values as Float64Array);
    const z = shifts[j];
    const moved: MovedObject[] = [];
    let compared = 0;
    for (let i = 0; i < n; i++) {
      if (oldRow[i] < 0) continue;
      const b = i * 3 * k + 3 * j;
      const v = shiftSigma(oldVals[b + 1], oldVals[b], oldVals[b + 2], cur[1][i], cur[0][i], cur[2][i]);
      z[i] = v;
      if (Number.isNaN(v)) continue;
      compared++;
      if (Math.abs(v) > threshold)
        moved.push({ id: ids[i], slug: slugOf(ids[i]), previous: est(oldVals[b + 1], oldVals[b], oldVals[b + 2]), current: est(cur[1][i], cur[0][i], cur[2][i]), shiftSigma: round(v, 4) });
    }
    moved.sort((x, y) => Math.abs(y.shiftSigma) - Math.abs(x.shiftSigma) || byId.get(x.id)! - byId.get(y.id)!);
    const compact = new Float64Array(compared);
    let c = 0;
    for (let i = 0; i < n; i++) if (oldRow[i] >= 0 && !Number.isNaN(z[i])) compact[c++] = z[i];
    const summary = summariseShifts(compact);
    return {
      name: p.name,
      label: p.label,
      unit: p.unit,
      compared,
      moved,
      nMoved: moved.length,
      summary: { ...summary, median: round(summary.median, 4), p16: round(summary.p16, 4), p84: round(summary.p84, 4) },
      histogram: shiftHistogram(compact),
    };
  });

  // flags raised and cleared
  const flagChanges: FlagChange[] = FLAG_INFO.map((f) => ({ bit: f.bit, name: f.name, label: f.label, raised: 0, cleared: 0, raisedIds: [], clearedIds: [] }));
  let flagsRaised = 0;
  let flagsCleared = 0;
  for (let i = 0; i < n; i++) {
    if (oldRow[i] < 0) continue;
    const c = flagChange(oldFlags[i], numberAt(flags, i) | 0);
    if (c.raised) flagsRaised++;
    if (c.cleared) flagsCleared++;
    for (const f of flagChanges) {
      if (c.raised & f.bit) (f.raised++, f.raisedIds.push(ids[i]));
      if (c.cleared & f.bit) (f.cleared++, f.clearedIds.push(ids[i]));
    }
  }

  const relations = compareRelations(prev, now.relations);
  const changes: ChangesContent = {
    release: { title: now.config.title, version: now.config.version, releaseDate: now.config.releaseDate, ...(now.config.doi ? { doi: now.config.doi } : {}), ...(now.config.url ? { url: now.config.url } : {}) },
    previous: {
      title: prev.title,
      version: prev.version,
      releaseDate: prev.releaseDate,
      ...(prev.doi ? { doi: prev.doi } : {}),
      ...(prev.url ? { url: prev.url } : {}),
      catalogue: { file: basename(prev.catalogueFile), sha256: await sha256(prev.catalogueFile) },
    },
    settings: {
      thresholdSigma: threshold,
      matchRadiusArcsec: radius,
      shift: SHIFT_TEXT,
      renamed: radius > 0 ? `an object of each release without a partner by id, closest pairs first, within ${radius} arcsec; each object at most once` : 'not matched by position (radius 0)',
    },
    counts: { previous: rows, current: n, sameId, added: added.length, removed: removed.length, renamed: renamed.length, compared: sameId + renamed.length, flagsRaised, flagsCleared },
    added,
    removed,
    renamed,
    parameters,
    newParameters: prev.newParameters,
    droppedParameters: prev.droppedParameters,
    flags: flagChanges,
    relations,
    changelog: { version: now.config.version, date: now.config.releaseDate, notes: '' },
  };
  changes.changelog.notes = draftChangelog({
    previousVersion: prev.version,
    previousObjects: rows,
    objects: n,
    added: added.length,
    removed: removed.length,
    renamed: renamed.length,
    matchRadiusArcsec: radius,
    thresholdSigma: threshold,
    moved: parameters.map((p) => ({ label: p.label, n: p.nMoved, compared: p.compared })),
    newParameters: prev.newParameters,
    droppedParameters: prev.droppedParameters,
    flags: flagChanges.map((f) => ({ label: f.label, raised: f.raised, cleared: f.cleared })),
    relations: relations.map((r) => ({ title: r.title, status: r.status, maxSigma: r.maxSigma, where: r.where })),
  });

  let objects: Record<string, PreviousObject> | null = null;
  if (now.objectLookup) {
    objects = {};
    for (let i = 0; i < n; i++) {
      if (oldRow[i] < 0) continue;
      objects[slugOf(ids[i])] = {
        version: prev.version,
        id: oldId[i] ?? ids[i],
        renamed: oldId[i] !== null,
        flags: oldFlags[i],
        params: prev.params.map((p, j) => {
          const b = i * 3 * k + 3 * j;
          const e = est(oldVals[b + 1], oldVals[b], oldVals[b + 2]);
          const z = shifts[j][i];
          return { name: p.name, previous: Number.isFinite(e.median) ? e : null, shiftSigma: Number.isNaN(z) ? null : round(z, 3) };
        }),
      };
    }
  }
  return { changes, objects };
}

/** The site's copy: long lists cut to their first `limit` entries, full lengths kept. */
export function siteChanges(c: ChangesContent, limit = 200, perParameter = 50): ChangesContent {
  return {
    ...c,
    added: c.added.slice(0, limit),
    removed: c.removed.slice(0, limit),
    renamed: c.renamed.slice(0, limit),
    parameters: c.parameters.map((p) => ({ ...p, moved: p.moved.slice(0, perParameter) })),
    flags: c.flags.map((f) => ({ ...f, raisedIds: f.raisedIds.slice(0, perParameter), clearedIds: f.clearedIds.slice(0, perParameter) })),
    truncated: { added: c.added.length, removed: c.removed.length, renamed: c.renamed.length },
  };
}

interface PrevRelationsJson {
  relations?: { name: string; title?: string; bins?: { zLo: number; zHi: number; fits?: { method: string; n?: number; a?: Estimate; b?: Estimate; s?: Estimate }[] }[] }[];
}

function compareRelations(prev: PreviousRelease, current: RelationContent[]): RelationChange[] {
  let old: NonNullable<PrevRelationsJson['relations']> = [];
  if (prev.relationsFile) {
    try {
      old = (JSON.parse(readFileSync(prev.relationsFile, 'utf8')) as PrevRelationsJson).relations ?? [];
    } catch (e) {
      throw new PosterityError({ severity: 'error', file: prev.relationsFile, message: `not readable JSON (${(e as Error).message})` });
    }
  }
  const out: RelationChange[] = [];
  for (const r of current) {
    const o = old.find((x) => x.name === r.name);
    if (!o) {
      out.push({ name: r.name, title: r.title, status: 'new', bins: r.bins.map((b) => ({ zLo: b.zLo, zHi: b.zHi, status: 'new', methods: [] })), maxSigma: null, where: null });
      continue;
    }
    let maxSigma: number | null = null;
    let where: string | null = null;
    const bins: RelationChange['bins'] = [];
    for (const b of r.bins) {
      const ob = o.bins?.find((x) => x.zLo === b.zLo && x.zHi === b.zHi);
      if (!ob) {
        bins.push({ zLo: b.zLo, zHi: b.zHi, status: 'new', methods: [] });
        continue;
      }
      const methods: MethodChange[] = [];
      for (const f of b.fits) {
        const of = ob.fits?.find((x) => x.method === f.method);
        if (!of) {
          methods.push({ method: f.method, status: 'new', n: { previous: null, current: f.n }, a: null, b: null, s: null });
          continue;
        }
        const m: MethodChange = { method: f.method, status: 'compared', n: { previous: of.n ?? null, current: f.n }, a: estimateChange(of.a, f.a), b: estimateChange(of.b, f.b), s: estimateChange(of.s, f.s) };
        for (const key of ['a', 'b', 's'] as const) {
          const c = m[key];
          if (c && Number.isFinite(c.sigma) && (maxSigma === null || Math.abs(c.sigma) > Math.abs(maxSigma))) {
            maxSigma = Math.abs(c.sigma);
            where = `${key === 'a' ? 'intercept a' : key === 'b' ? 'slope b' : 'scatter s'} at ${b.zLo} < z < ${b.zHi}, ${f.method}`;
          }
        }
        methods.push(m);
      }
      for (const of of ob.fits ?? []) if (!b.fits.some((f) => f.method === of.method)) methods.push({ method: of.method, status: 'dropped', n: { previous: of.n ?? null, current: null }, a: null, b: null, s: null });
      bins.push({ zLo: b.zLo, zHi: b.zHi, status: 'compared', methods });
    }
    for (const ob of o.bins ?? []) if (!r.bins.some((b) => b.zLo === ob.zLo && b.zHi === ob.zHi)) bins.push({ zLo: ob.zLo, zHi: ob.zHi, status: 'dropped', methods: [] });
    out.push({ name: r.name, title: r.title, status: 'compared', bins, maxSigma: maxSigma === null ? null : round(maxSigma, 3), where });
  }
  for (const o of old) if (!current.some((r) => r.name === o.name)) out.push({ name: o.name, title: o.title ?? o.name, status: 'dropped', bins: [], maxSigma: null, where: null });
  return out;
}

function estimateChange(previous: Estimate | undefined, current: Estimate): EstimateChange | null {
  if (!previous || !Number.isFinite(previous.median) || !Number.isFinite(current.median)) return null;
  return {
    previous,
    current,
    difference: round(current.median - previous.median, 6),
    sigma: round(shiftSigma(previous.median, previous.lo, previous.hi, current.median, current.lo, current.hi), 3),
  };
}

function est(median: number, lo: number, hi: number): Estimate {
  return { median, lo, hi };
}

function countMissing(a: Int32Array): number {
  let c = 0;
  for (const v of a) if (v < 0) c++;
  return c;
}

function round(x: number, d: number): number {
  if (!Number.isFinite(x)) return x;
  const f = 10 ** d;
  return Math.round(x * f) / f;
}
