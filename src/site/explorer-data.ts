/**
 * Build-time writer of the explorer's compact files (format in `explorer-format.ts`), from the
 * published `downloads/catalogue.arrow`; the static endpoint `src/pages/catalogue/data/[file].ts`
 * emits them into the site under `catalogue/data/`.
 *
 * Compaction: float64 columns become float32 unless they hold angles in degrees (ra, dec: a
 * float32 at RA 300 deg resolves only 0.07 arcsec) or values outside float32's normal range
 * (tiny p-values); integers take the smallest type that holds their range; text columns with
 * at most 255 distinct values (population) become one-byte codes.
 *
 * Chunks: `CHUNK_ROWS` = 32768 rows, about 2 MB of core columns (id, position, redshift,
 * flags, population, medians: ~65 bytes a row), under a second at 20 Mbit/s and around 1 MB
 * when the host compresses it. A catalogue below that is one file; above it the explorer shows
 * the first chunk at once and fetches the rest in the background, so the time to first rows does
 * not grow with the catalogue.
 */
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { tableFromIPC, type Table } from 'apache-arrow';
import { contentDir, loadSite } from './load.ts';
import { chunkFileName, encodeChunk, EXPLORER_FORMAT, type ExplorerColumn, type ExplorerManifest, type ExplorerType } from './explorer-format.ts';
import { columnDecimals } from './format.ts';

export const CHUNK_ROWS = 32768;

interface Prepared {
  manifest: ExplorerManifest;
  values: Map<string, ArrayLike<number> | string[]>;
}

const F32_MAX = 3.4e38;
const F32_MIN_NORMAL = 1.2e-38;

function numericType(name: string, unit: string, arrowType: string, v: ArrayLike<number>): ExplorerType {
  let lo = Infinity;
  let hi = -Infinity;
  let integral = true;
  let tinyOrHuge = false;
  for (let i = 0; i < v.length; i++) {
    const x = v[i];
    if (!Number.isFinite(x)) {
      if (!Number.isNaN(x) || /^Int|^Uint/.test(arrowType)) integral = false;
      continue;
    }
    if (x < lo) lo = x;
    if (x > hi) hi = x;
    if (integral && !Number.isInteger(x)) integral = false;
    const a = Math.abs(x);
    if (a !== 0 && (a < F32_MIN_NORMAL * 1e8 || a > F32_MAX)) tinyOrHuge = true;
  }
  if (/^(Int|Uint)/.test(arrowType) && integral) {
    if (lo >= 0 && hi <= 255) return 'u8';
    if (lo >= -32768 && hi <= 32767) return 'i16';
    if (lo >= -2147483648 && hi <= 2147483647) return 'i32';
    return 'f64';
  }
  if (unit === 'deg' || name === 'ra' || name === 'dec' || tinyOrHuge) return 'f64';
  return 'f32';
}

function prepare(table: Table): Prepared {
  const site = loadSite();
  const params = site.parameters.map((p) => p.name);
  const relations = site.relations.map((r) => r.name);
  const n = table.numRows;
  const groups: { name: string; columns: string[] }[] = [{ name: 'core', columns: [] }];
  const groupOf = (name: string): number => {
    let g = groups.findIndex((x) => x.name === name);
    if (g < 0) {
      groups.push({ name, columns: [] });
      g = groups.length - 1;
    }
    return g;
  };
  const coreNames = new Set(['id', 'ra', 'dec', 'redshift', 'flags', 'population', ...params.map((p) => `${p}_p50`)]);
  const columns: ExplorerColumn[] = [];
  const values = new Map<string, ArrayLike<number> | string[]>();
  for (let i = 0; i < table.schema.fields.length; i++) {
    const f = table.schema.fields[i];
    const vec = table.getChildAt(i)!;
    const unit = f.metadata.get('unit') ?? '';
    const description = f.metadata.get('description') ?? '';
    const typeName = String(f.type);
    let g: number;
    if (coreNames.has(f.name)) g = 0;
    else {
      const p = params.find((q) => f.name.startsWith(`${q}_`));
      const r = relations.find((q) => f.name.startsWith(`${q}_`));
      g = groupOf(p ?? r ?? (['n_samples', 'ess', 'chi2', 'chi2_pvalue'].includes(f.name) ? 'fit' : 'other'));
    }
    let type: ExplorerType;
    let categories: string[] | undefined;
    let vals: ArrayLike<number> | string[];
    if (/^(Float|Int|Uint)/.test(typeName)) {
      const raw = vec.toArray() as ArrayLike<number | bigint>;
      const num = new Float64Array(n);
      for (let r = 0; r < n; r++) num[r] = vec.isValid(r) ? Number(raw[r]) : NaN;
      type = numericType(f.name, unit, typeName, num);
      if (type === 'u8' || type === 'i16' || type === 'i32') {
        // integer columns with nulls cannot be integers here
        if (vec.nullCount > 0) type = 'f64';
      }
      vals = num;
    } else if (/^Bool/.test(typeName)) {
      type = 'u8';
      vals = Uint8Array.from({ length: n }, (_, r) => (vec.get(r) ? 1 : 0));
    } else {
      const strs = Array.from({ length: n }, (_, r) => {
        const v = vec.get(r);
        return v === null || v === undefined ? '' : String(v);
      });
      const distinct = [...new Set(strs)].sort();
      if (f.name !== 'id' && distinct.length <= 255) {
        type = 'cat';
        categories = distinct;
        const code = new Map(distinct.map((s, k) => [s, k]));
        vals = Uint8Array.from(strs, (s) => code.get(s) as number);
      } else {
        type = 'str';
        vals = strs;
      }
    }
    groups[g].columns.push(f.name);
    columns.push({ name: f.name, unit, description, type, group: g, ...(categories ? { categories } : {}) });
    values.set(f.name, vals);
  }
  decideDecimals(columns, values, params, site.relations);
  const manifest: ExplorerManifest = { format: EXPLORER_FORMAT, rows: n, chunkRows: CHUNK_ROWS, chunks: Math.max(1, Math.ceil(n / CHUNK_ROWS)), columns, groups };
  return { manifest, values };
}

/**
 * Decimals of every non-integer numeric column (`columnDecimals`): a parameter's columns
 * (`<p>_mean`, `_p16`, ..., `_true`) and a relation's offsets from the 68% half-widths of the
 * parameter (of y for offsets), so a value shows two significant digits of its typical
 * uncertainty; every other column from its values' own precision.
 */
function decideDecimals(columns: ExplorerColumn[], values: Map<string, ArrayLike<number> | string[]>, params: string[], relations: { name: string; y: string }[]): void {
  const spreads = new Map<string, Float64Array>();
  for (const p of params) {
    const lo = values.get(`${p}_p16`) as ArrayLike<number> | undefined;
    const mid = values.get(`${p}_p50`) as ArrayLike<number> | undefined;
    const hi = values.get(`${p}_p84`) as ArrayLike<number> | undefined;
    if (!lo || !mid || !hi) continue;
    spreads.set(p, Float64Array.from({ length: mid.length }, (_, i) => Math.min(hi[i]! - mid[i]!, mid[i]! - lo[i]!)));
  }
  for (const c of columns) {
    if (c.type !== 'f32' && c.type !== 'f64') continue;
    const p = params.find((q) => c.name.startsWith(`${q}_`));
    const r = relations.find((q) => c.name === `${q.name}_offset`);
    const sp = spreads.get(p ?? r?.y ?? '');
    c.decimals = columnDecimals(values.get(c.name) as ArrayLike<number>, { unit: c.unit, ...(sp ? { spreads: sp } : {}) });
  }
}

let cache: { dir: string; prepared: Prepared | null } | null = null;

function prepared(): Prepared | null {
  const dir = contentDir();
  if (cache?.dir === dir) return cache.prepared;
  const file = join(dir, 'downloads', 'catalogue.arrow');
  const p = existsSync(file) ? prepare(tableFromIPC(readFileSync(file))) : null;
  cache = { dir, prepared: p };
  return p;
}

/** Whether the release has a catalogue for the explorer. */
export function hasExplorerData(): boolean {
  return prepared() !== null;
}

/** Every file name under `catalogue/data/`. */
export function explorerFiles(): string[] {
  const p = prepared();
  if (!p) return [];
  const files = ['manifest.json'];
  for (let g = 0; g < p.manifest.groups.length; g++) for (let k = 0; k < p.manifest.chunks; k++) files.push(chunkFileName(g, k));
  return files;
}

/** Bytes of one file under `catalogue/data/`, or null for a name that is not one of them. */
export function explorerFile(name: string): Uint8Array | null {
  const p = prepared();
  if (!p) return null;
  if (name === 'manifest.json') return new TextEncoder().encode(JSON.stringify(p.manifest));
  const m = /^g(\d+)-(\d{6})\.bin$/.exec(name);
  if (!m) return null;
  const g = Number(m[1]);
  const k = Number(m[2]);
  const { manifest, values } = p;
  if (g >= manifest.groups.length || k >= manifest.chunks) return null;
  const start = k * manifest.chunkRows;
  const end = Math.min(manifest.rows, start + manifest.chunkRows);
  const cols = manifest.columns.filter((c) => c.group === g);
  return encodeChunk(
    end - start,
    cols.map((c) => {
      const v = values.get(c.name)!;
      return { name: c.name, type: c.type, values: Array.isArray(v) ? v.slice(start, end) : (v as Float64Array).subarray(start, end) };
    }),
  );
}
