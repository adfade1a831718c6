/**
 * The catalogue explorer (browser only). Loads the compact catalogue files under
 * `catalogue/data/` (format: `explorer-format.ts`; written by `explorer-data.ts`): the core
 * columns first, one chunk of rows at a time, showing the first rows as soon as the first chunk
 * has arrived; other columns are fetched when they are first shown, sorted or filtered on.
 *
 * A virtualised table with sorting, id search, range filters, flag and population filters, a
 * cone search, a column chooser, CSV export of the selection, keyboard navigation between rows
 * and the whole view in the URL. Sorting keeps one permutation per column and direction (a
 * radix sort for float32 and integer columns), so a filter is one pass over it.
 * Filtering and sorting only; no statistics.
 */
import { createPlot } from './explorer-plot.ts';
import { slugOf } from '../lib/core/slug.ts';
import { angularSeparationDeg, parseAngleArcsec, parseCoordinate } from '../lib/core/sky.ts';
import { FLAG_INFO, describeFlags } from '../lib/core/flags.ts';
import { chunkFileName, decodeChunk, type ChunkValues, type ExplorerColumn, type ExplorerManifest } from './explorer-format.ts';
import { cell } from './format.ts';

type Store = Float64Array | Float32Array | Int32Array | Int16Array | Uint8Array | string[];

interface Col extends ExplorerColumn {
  numeric: boolean;
  values: Store | null;
}

interface State {
  q: string;
  sort: string;
  desc: boolean;
  flag: string;
  pop: string;
  cone: string;
  radius: string;
  ranges: Record<string, [string, string]>;
  cols: string[] | null;
  /** Columns of the linked x-y view. */
  px?: string;
  py?: string;
}

const ROW_H = 28;
const OVERSCAN = 12;
/** Browsers cap an element's height (Chromium near 3.3e7 px); beyond this the scroll is scaled. */
const MAX_SCROLL_PX = 8_000_000;
const PARALLEL_FETCHES = 3;

function el<K extends keyof HTMLElementTagNameMap>(tag: K, attrs: Record<string, string> = {}, text?: string): HTMLElementTagNameMap[K] {
  const e = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) e.setAttribute(k, v);
  if (text !== undefined) e.textContent = text;
  return e;
}

/**
 * A cell's text. Non-integer numeric columns show every cell at the column's decimals (chosen
 * at build time from the values' uncertainties or precision, `columnDecimals`), so the column
 * aligns; without them, 5 significant digits for float32 (their stored precision is about 7)
 * and angles in degrees at 6 decimals (0.004 arcsec).
 */
function fmt(v: unknown, c?: ExplorerColumn): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) return '';
    if (c?.decimals !== undefined) return cell(v, c.decimals);
    if (Number.isInteger(v)) return String(v);
    // a true minus sign, as on the rest of the site (the CSV export keeps ASCII)
    if (c?.unit === 'deg') return v.toFixed(6).replace('-', '−');
    const a = Math.abs(v);
    if (a !== 0 && (a < 1e-3 || a >= 1e6)) return v.toExponential(c?.type === 'f32' ? 3 : 4).replace(/-/g, '−');
    return String(Number(v.toPrecision(c?.type === 'f32' ? 5 : 7))).replace('-', '−');
  }
  return String(v);
}

function csvCell(s: string): string {
  return /[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}


export function readState(search: string): State {
  const p = new URLSearchParams(search);
  const ranges: Record<string, [string, string]> = {};
  for (const [k, v] of p) {
    const m = /^r\.(.+)$/.exec(k);
    if (m) {
      const [lo = '', hi = ''] = v.split('~');
      ranges[m[1]] = [lo, hi];
    }
  }
  return {
    q: p.get('q') ?? '',
    sort: p.get('sort') ?? '',
    desc: p.get('desc') === '1',
    flag: p.get('flag') ?? '',
    pop: p.get('pop') ?? '',
    cone: p.get('cone') ?? '',
    radius: p.get('radius') ?? '',
    ranges,
    cols: p.get('cols') ? (p.get('cols') as string).split(',') : null,
    px: p.get('px') ?? undefined,
    py: p.get('py') ?? undefined,
  };
}

export function stateQuery(s: State): string {
  const p = new URLSearchParams();
  if (s.q) p.set('q', s.q);
  if (s.sort) p.set('sort', s.sort);
  if (s.desc) p.set('desc', '1');
  if (s.flag) p.set('flag', s.flag);
  if (s.pop) p.set('pop', s.pop);
  if (s.cone) p.set('cone', s.cone);
  if (s.radius) p.set('radius', s.radius);
  for (const k of Object.keys(s.ranges).sort()) {
    const [lo, hi] = s.ranges[k];
    if (lo || hi) p.set(`r.${k}`, `${lo}~${hi}`);
  }
  if (s.cols) p.set('cols', s.cols.join(','));
  if (s.px) p.set('px', s.px);
  if (s.py) p.set('py', s.py);
  return p.toString();
}

/**
 * Ascending permutation of rows by uint32 keys (stable): LSD radix sort in 16-bit passes,
 * over `lo` and then, for 64-bit keys, `hi`. Ties keep catalogue order.
 */
function radixOrder(n: number, lo: Uint32Array, hi?: Uint32Array): Uint32Array {
  let a = new Uint32Array(n);
  for (let i = 0; i < n; i++) a[i] = i;
  let b = new Uint32Array(n);
  const count = new Uint32Array(65536);
  for (const keys of hi ? [lo, hi] : [lo]) {
    for (const shift of [0, 16]) {
      count.fill(0);
      for (let i = 0; i < n; i++) count[(keys[i] >>> shift) & 0xffff]++;
      let sum = 0;
      for (let k = 0; k < 65536; k++) {
        const c = count[k];
        count[k] = sum;
        sum += c;
      }
      for (let i = 0; i < n; i++) {
        const r = a[i];
        b[count[(keys[r] >>> shift) & 0xffff]++] = r;
      }
      [a, b] = [b, a];
    }
  }
  return a;
}

/** Sortable 64-bit keys (as low and high words) of a float64 column; NaN always last. */
function sortKeys64(v: Float64Array, n: number, desc: boolean): { lo: Uint32Array; hi: Uint32Array } {
  const words = new Uint32Array(v.buffer, v.byteOffset, 2 * n); // little-endian: low word first
  const lo = new Uint32Array(n);
  const hi = new Uint32Array(n);
  for (let i = 0; i < n; i++) {
    if (v[i] !== v[i]) {
      lo[i] = hi[i] = 0xffffffff;
      continue;
    }
    let l = words[2 * i];
    let h = words[2 * i + 1];
    if (h === 0x80000000 && l === 0) h = 0; // -0 sorts with +0
    if (h & 0x80000000) {
      h = ~h >>> 0;
      l = ~l >>> 0;
    } else h = (h | 0x80000000) >>> 0;
    if (desc) {
      h = ~h >>> 0;
      l = ~l >>> 0;
    }
    lo[i] = l;
    hi[i] = h;
  }
  return { lo, hi };
}

/** Sortable uint32 keys of a float32 or integer column; NaN always last. */
function sortKeys(v: Float32Array | Int32Array | Int16Array | Uint8Array, n: number, desc: boolean): Uint32Array {
  const keys = new Uint32Array(n);
  if (v instanceof Float32Array) {
    const bits = new Uint32Array(v.buffer, v.byteOffset, n);
    for (let i = 0; i < n; i++) {
      const x = v[i];
      if (x !== x) {
        keys[i] = 0xffffffff;
        continue;
      }
      const u = bits[i] === 0x80000000 ? 0 : bits[i]; // -0 sorts with +0
      let k = u & 0x80000000 ? ~u >>> 0 : (u | 0x80000000) >>> 0;
      if (desc) k = ~k >>> 0;
      keys[i] = k === 0xffffffff ? 0xfffffffe : k;
    }
  } else {
    for (let i = 0; i < n; i++) {
      let k = (v[i] ^ 0x80000000) >>> 0;
      if (desc) k = ~k >>> 0;
      keys[i] = k;
    }
  }
  return keys;
}

/** Row order of a numeric column, ascending or descending, ties in catalogue order, NaN last (exported for tests). */
export function numericOrder(v: Float64Array | Float32Array | Int32Array | Int16Array | Uint8Array, desc: boolean, n = v.length): Uint32Array {
  if (v instanceof Float64Array) {
    const k = sortKeys64(v, n, desc);
    return radixOrder(n, k.lo, k.hi);
  }
  return radixOrder(n, sortKeys(v, n, desc));
}

export async function startExplorer(root: HTMLElement): Promise<void> {
  const manifestUrl = new URL(root.dataset.manifest as string, document.baseURI);
  const objectsBase = root.dataset.objects as string;
  const status = root.querySelector('.explorer-status') as HTMLElement;
  const t0 = performance.now();
  status.textContent = 'Loading the catalogue…';
  let manifest: ExplorerManifest;
  try {
    const res = await fetch(manifestUrl);
    if (!res.ok) throw new Error(`HTTP ${res.status}`);
    manifest = (await res.json()) as ExplorerManifest;
  } catch (e) {
    status.textContent = `The catalogue could not be loaded (${(e as Error).message}); the static list below shows the first objects.`;
    return;
  }
  const N = manifest.rows;
  const cols: Col[] = manifest.columns.map((c) => ({ ...c, numeric: c.type !== 'str' && c.type !== 'cat', values: null }));
  const byName = new Map(cols.map((c) => [c.name, c]));
  const groupLoaded: (Promise<void> | null)[] = manifest.groups.map(() => null);
  /** Rows loaded of the core group (chunks arrive in order). */
  let loaded = 0;

  function allocate(c: Col): Store {
    switch (c.type) {
      case 'f64': return new Float64Array(N);
      case 'f32': return new Float32Array(N);
      case 'i32': return new Int32Array(N);
      case 'i16': return new Int16Array(N);
      case 'u8':
      case 'cat': return new Uint8Array(N);
      default: return new Array<string>(N).fill('');
    }
  }
  function insert(g: number, k: number, buf: ArrayBuffer): number {
    const { rows, columns } = decodeChunk(buf);
    const start = k * manifest.chunkRows;
    for (const c of cols) {
      if (c.group !== g) continue;
      const part = columns.get(c.name) as ChunkValues | undefined;
      if (!part) continue;
      if (!c.values) c.values = allocate(c);
      if (Array.isArray(c.values)) for (let i = 0; i < rows; i++) (c.values as string[])[start + i] = (part as string[])[i];
      else (c.values as Float64Array).set(part as Float64Array, start);
    }
    return rows;
  }
  async function fetchChunk(g: number, k: number): Promise<ArrayBuffer> {
    const res = await fetch(new URL(chunkFileName(g, k), manifestUrl));
    if (!res.ok) throw new Error(`${chunkFileName(g, k)}: HTTP ${res.status}`);
    return res.arrayBuffer();
  }
  /** Fetch chunks [from, chunks) of a group, a few at a time, inserting each in order. */
  async function fetchRest(g: number, from: number, onChunk: (k: number, rows: number) => void): Promise<void> {
    const pending = new Map<number, Promise<ArrayBuffer>>();
    let next = from;
    const launch = () => {
      while (pending.size < PARALLEL_FETCHES && next < manifest.chunks) {
        pending.set(next, fetchChunk(g, next));
        next++;
      }
    };
    launch();
    for (let k = from; k < manifest.chunks; k++) {
      const buf = await (pending.get(k) as Promise<ArrayBuffer>);
      pending.delete(k);
      launch();
      onChunk(k, insert(g, k, buf));
    }
  }
  /** Load a whole group of columns (not the core) once; resolves when every chunk is in. */
  function ensureGroup(g: number): Promise<void> {
    if (g === 0) return Promise.resolve();
    if (!groupLoaded[g]) {
      groupLoaded[g] = fetchRest(g, 0, () => {}).then(() => {
        sortCache.clear();
      });
    }
    return groupLoaded[g] as Promise<void>;
  }
  const isReady = (c: Col | undefined): c is Col => !!c && c.values !== null;

  // first chunk of the core columns
  try {
    loaded = insert(0, 0, await fetchChunk(0, 0));
  } catch (e) {
    status.textContent = `The catalogue could not be loaded (${(e as Error).message}); the static list below shows the first objects.`;
    return;
  }

  const ids = byName.get('id')?.values as string[];
  const state = readState(location.search);
  const go = new URLSearchParams(location.search).get('go') === '1' && state.q.trim() !== '' ? state.q.trim() : null;
  const goTo = (r: number) => location.replace(`${objectsBase}${slugOf(ids[r])}/`);
  if (go) {
    const hit = ids.indexOf(go);
    if (hit >= 0 && hit < loaded) {
      goTo(hit);
      return;
    }
  }

  const controls = root.querySelector('.explorer-controls') as HTMLElement;
  const chooser = root.querySelector('.chooser-groups') as HTMLElement;
  const viewport = root.querySelector('.explorer-viewport') as HTMLElement;
  controls.hidden = false;
  viewport.hidden = false;
  (root.querySelector('.explorer-help') as HTMLElement).hidden = false;
  (root.querySelector('.explorer-actions') as HTMLElement).hidden = false;
  const fallback = document.getElementById('catalogue-fallback');
  if (fallback) fallback.hidden = true;

  const q = controls.querySelector<HTMLInputElement>('[name=q]')!;
  const flag = controls.querySelector<HTMLSelectElement>('[name=flag]')!;
  const pop = controls.querySelector<HTMLSelectElement>('[name=pop]')!;
  const cone = controls.querySelector<HTMLInputElement>('[name=cone]')!;
  const radius = controls.querySelector<HTMLInputElement>('[name=radius]')!;
  const rangeCol = controls.querySelector<HTMLSelectElement>('[name=rangecol]')!;
  const rangeLo = controls.querySelector<HTMLInputElement>('[name=rangelo]')!;
  const rangeHi = controls.querySelector<HTMLInputElement>('[name=rangehi]')!;
  const rangeList = root.querySelector('.range-list') as HTMLElement;

  for (const f of FLAG_INFO) flag.append(el('option', { value: String(f.bit) }, `has: ${f.label}`));
  const popCol = byName.get('population');
  if (popCol?.categories) for (const v of popCol.categories) pop.append(el('option', { value: v }, v));
  else pop.disabled = true;
  for (const c of cols) if (c.numeric) rangeCol.append(el('option', { value: c.name }, c.unit ? `${c.name} [${c.unit}]` : c.name));

  q.value = state.q;
  flag.value = state.flag;
  pop.value = state.pop;
  cone.value = state.cone;
  radius.value = state.radius;
  const params = cols.filter((c) => c.group === 0 && c.name.endsWith('_p50')).map((c) => c.name);
  const defaults = ['id', 'ra', 'dec', 'redshift', ...params.slice(0, 2), 'population', 'flags'].filter((c) => byName.has(c));
  let visible = (state.cols ?? defaults).filter((c) => byName.has(c));
  if (!visible.length) visible = defaults;

  // linked x-y view above the table
  const numericNames = cols.filter((c) => c.numeric).map((c) => c.name);
  let plotX = state.px && byName.has(state.px) ? state.px : params[0] ?? numericNames[0];
  let plotY = state.py && byName.has(state.py) ? state.py : params[1] ?? numericNames[1] ?? numericNames[0];
  const plotFig = el('figure', { class: 'explorer-plot' });
  const plotBar = el('div', { class: 'plot-bar' });
  const xSel = el('select', { name: 'plotx', 'aria-label': 'Plot x column' });
  const ySel = el('select', { name: 'ploty', 'aria-label': 'Plot y column' });
  for (const nm of numericNames) {
    xSel.append(el('option', { value: nm }, nm));
    ySel.append(el('option', { value: nm }, nm));
  }
  xSel.value = plotX;
  ySel.value = plotY;
  const clearBox = el('button', { type: 'button' }, 'Clear box');
  const xl = el('label', {}, 'x ');
  xl.append(xSel);
  const yl = el('label', {}, ' y ');
  yl.append(ySel);
  plotBar.append(xl, yl, document.createTextNode(' '), clearBox);
  const canvas = el('canvas', { role: 'img', 'aria-label': 'Density of the loaded objects in the chosen x-y plane, with the current selection in blue' });
  const tip = el('p', { class: 'plot-tip', 'aria-live': 'polite' });
  tip.hidden = true;
  const plotCap = el('figcaption', {}, 'All loaded objects in grey, the current selection in blue. Drag a box to filter the table to it (the box becomes two range filters); filters of the table redraw the selection; hover a point for its values, click it to open its page.');
  plotFig.append(plotBar, canvas, tip, plotCap);
  viewport.parentElement!.insertBefore(plotFig, root.querySelector('.explorer-actions') ?? viewport);
  const fmtN = (v: number) => (Number.isFinite(v) ? Number(v.toPrecision(4)).toString() : '—');
  const drawPlot = createPlot(canvas, tip, {
    onBrush(xr, yr) {
      state.ranges[plotX] = [String(Number(xr[0].toPrecision(5))), String(Number(xr[1].toPrecision(5)))];
      state.ranges[plotY] = [String(Number(yr[0].toPrecision(5))), String(Number(yr[1].toPrecision(5)))];
      renderRanges();
      void refresh();
    },
    onOpen: (r) => goTo(r),
    describe: (r) => `${ids[r]}: ${plotX} ${fmtN((byName.get(plotX)!.values as ArrayLike<number>)[r])}, ${plotY} ${fmtN((byName.get(plotY)!.values as ArrayLike<number>)[r])}`,
  });
  const redrawPlot = () => {
    const cx = byName.get(plotX), cy = byName.get(plotY);
    if (!isReady(cx) || !isReady(cy)) return;
    const rng = (k: string): [number, number] | null => {
      const v = state.ranges[k];
      if (!v) return null;
      const lo = v[0] === '' ? NaN : Number(v[0]), hi = v[1] === '' ? NaN : Number(v[1]);
      return Number.isFinite(lo) && Number.isFinite(hi) ? [lo, hi] : null;
    };
    drawPlot({ n: loaded, x: cx.values as ArrayLike<number>, y: cy.values as ArrayLike<number>, selection: order, xRange: rng(plotX), yRange: rng(plotY), xLabel: cx.unit ? `${plotX} [${cx.unit}]` : plotX, yLabel: cy.unit ? `${plotY} [${cy.unit}]` : plotY });
  };
  xSel.addEventListener('change', () => { plotX = xSel.value; state.px = plotX; void refresh(); });
  ySel.addEventListener('change', () => { plotY = ySel.value; state.py = plotY; void refresh(); });
  clearBox.addEventListener('click', () => {
    delete state.ranges[plotX];
    delete state.ranges[plotY];
    renderRanges();
    void refresh();
  });

  // column chooser, one fieldset a group
  const boxes: HTMLInputElement[] = [];
  manifest.groups.forEach((g, gi) => {
    const fs = el('fieldset');
    fs.append(el('legend', {}, gi === 0 ? 'Loaded at once' : g.name));
    for (const name of g.columns) {
      const c = byName.get(name)!;
      const label = el('label', { title: c.description || name });
      const box = el('input', { type: 'checkbox', value: name });
      box.checked = visible.includes(name);
      box.addEventListener('change', () => {
        const chosen = new Set(boxes.filter((b) => b.checked).map((b) => b.value));
        visible = cols.map((cc) => cc.name).filter((nm) => chosen.has(nm));
        state.cols = visible.join(',') === defaults.join(',') ? null : visible;
        void refresh();
      });
      boxes.push(box);
      label.append(box, document.createTextNode(name));
      fs.append(label);
    }
    chooser.append(fs);
  });

  let order = new Uint32Array(0);
  const sortCache = new Map<string, Uint32Array>();
  const tableEl = viewport.querySelector('table') as HTMLTableElement;
  const thead = tableEl.tHead as HTMLTableSectionElement;
  const tbody = tableEl.tBodies[0];
  let active = 0; // position in `order` of the row with the keyboard focus stop
  let lowerIds: string[] | null = null;

  function renderRanges(): void {
    rangeList.textContent = '';
    for (const k of Object.keys(state.ranges).sort()) {
      const [lo, hi] = state.ranges[k];
      const b = el('button', { type: 'button', 'aria-label': `Remove the filter ${lo || '−∞'} ≤ ${k} ≤ ${hi || '∞'}` }, `${lo || '−∞'} ≤ ${k} ≤ ${hi || '∞'} ✕`);
      b.addEventListener('click', () => {
        delete state.ranges[k];
        renderRanges();
        void refresh();
      });
      rangeList.append(b);
    }
  }

  /** The row order of a column over the loaded rows, ascending or descending, missing values last. */
  function sortedBy(c: Col, desc: boolean): Uint32Array {
    const key = `${c.name}:${desc ? 1 : 0}`;
    const hit = sortCache.get(key);
    if (hit && hit.length === loaded) return hit;
    const n = loaded;
    let perm: Uint32Array;
    const v = c.values as Store;
    if (c.type === 'f32' || c.type === 'i32' || c.type === 'i16' || c.type === 'u8' || c.type === 'cat') {
      // categories are stored sorted, so their codes sort like their text
      perm = numericOrder(v as Float32Array, desc, n);
    } else if (c.type === 'f64') {
      perm = numericOrder(v as Float64Array, desc, n);
    } else {
      perm = new Uint32Array(n);
      for (let i = 0; i < n; i++) perm[i] = i;
      const dir = desc ? -1 : 1;
      const t = v as string[];
      perm.sort((a, b) => (t[a] === t[b] ? a - b : (t[a] < t[b] ? -1 : 1) * dir));
    }
    sortCache.set(key, perm);
    return perm;
  }

  function compute(): string | null {
    const t = performance.now();
    const n = loaded;
    const needle = state.q.trim().toLowerCase();
    if (needle && !lowerIds) lowerIds = ids.map((s) => s.toLowerCase());
    const bit = state.flag === 'none' ? -1 : state.flag === 'any' ? -2 : state.flag ? Number(state.flag) : 0;
    const flags = byName.get('flags')?.values as ArrayLike<number> | undefined;
    const popCodes = popCol?.values as Uint8Array | undefined;
    const popCode = state.pop && popCol?.categories ? popCol.categories.indexOf(state.pop) : -1;
    let coneCentre: { raDeg: number; decDeg: number } | null = null;
    let coneDeg = 0;
    let problem: string | null = null;
    if (state.cone.trim()) {
      coneCentre = parseCoordinate(state.cone);
      const r = parseAngleArcsec(state.radius || '10');
      if (!coneCentre) problem = 'The cone centre is not a readable position (e.g. "150.1 2.2" or "10:00:27 +02:12:18").';
      else if (r === null) problem = 'The cone radius is not readable (e.g. 5", 2\', 0.1deg).';
      else coneDeg = r / 3600;
      if (problem) coneCentre = null;
    }
    const ra = byName.get('ra')?.values as Float64Array | undefined;
    const dec = byName.get('dec')?.values as Float64Array | undefined;
    const ranges = Object.entries(state.ranges)
      .map(([k, [lo, hi]]) => ({ c: byName.get(k), lo: lo === '' ? -Infinity : Number(lo), hi: hi === '' ? Infinity : Number(hi) }))
      .filter((g) => g.c?.numeric && g.c.values)
      .map((g) => ({ v: g.c!.values as ArrayLike<number>, lo: g.lo, hi: g.hi }));
    const sc = byName.get(state.sort);
    const base = isReady(sc) ? sortedBy(sc, state.desc) : null;
    const keep = new Uint32Array(n);
    let m = 0;
    const filtering = needle || bit !== 0 || popCode >= 0 || ranges.length || coneCentre;
    for (let k = 0; k < n; k++) {
      const r = base ? base[k] : k;
      if (filtering) {
        if (needle && !(lowerIds as string[])[r].includes(needle)) continue;
        if (flags && bit !== 0) {
          const f = flags[r];
          if (bit === -1 ? f !== 0 : bit === -2 ? f === 0 : (f & bit) === 0) continue;
        }
        if (popCodes && popCode >= 0 && popCodes[r] !== popCode) continue;
        let ok = true;
        for (const g of ranges) {
          const x = g.v[r];
          if (!(x >= g.lo && x <= g.hi)) {
            ok = false;
            break;
          }
        }
        if (!ok) continue;
        if (coneCentre && ra && dec) {
          if (Math.abs(dec[r] - coneCentre.decDeg) > coneDeg) continue;
          if (!(angularSeparationDeg(coneCentre.raDeg, coneCentre.decDeg, ra[r], dec[r]) <= coneDeg)) continue;
        }
      }
      keep[m++] = r;
    }
    order = keep.subarray(0, m);
    root.dataset.lastComputeMs = (performance.now() - t).toFixed(1);
    return problem;
  }

  function renderHead(): void {
    thead.textContent = '';
    const tr = el('tr', { 'aria-rowindex': '1' });
    for (const name of visible) {
      const c = byName.get(name)!;
      const th = el('th', { scope: 'col', class: c.numeric ? 'n' : '' });
      const sorted = state.sort === name;
      th.setAttribute('aria-sort', sorted ? (state.desc ? 'descending' : 'ascending') : 'none');
      const b = el('button', { type: 'button', title: `Sort by ${name}${c.description ? `: ${c.description}` : ''}` }, `${name}${c.unit ? ` [${c.unit}]` : ''}${sorted ? (state.desc ? ' ▼' : ' ▲') : ''}`);
      b.addEventListener('click', () => {
        const t = performance.now();
        if (state.sort === name) state.desc = !state.desc;
        else {
          state.sort = name;
          state.desc = false;
        }
        void refresh().then(() => {
          root.dataset.lastSortMs = (performance.now() - t).toFixed(1);
        });
      });
      th.append(b);
      tr.append(th);
    }
    thead.append(tr);
  }

  // scroll geometry: rows map to scroll pixels through `scale` when the table would be too tall
  const fullHeight = () => order.length * ROW_H;
  const scale = () => Math.max(1, fullHeight() / MAX_SCROLL_PX);
  let lastStart = -1;
  let lastEnd = -1;
  function renderRows(force = false): void {
    const s = scale();
    const top = viewport.scrollTop * s;
    const height = viewport.clientHeight || 600;
    const first = Math.floor(top / ROW_H);
    const start = Math.max(0, first - OVERSCAN);
    const end = Math.min(order.length, Math.ceil((top + height) / ROW_H) + OVERSCAN);
    if (!force && start === lastStart && end === lastEnd) return;
    lastStart = start;
    lastEnd = end;
    if (active < start || active >= end) active = Math.min(Math.max(first, 0), Math.max(0, order.length - 1));
    const frag = document.createDocumentFragment();
    const spacer = (hpx: number) => {
      const tr = el('tr', { 'aria-hidden': 'true', class: 'spacer' });
      const td = el('td', { colspan: String(visible.length) });
      td.style.height = `${hpx}px`;
      td.style.padding = '0';
      td.style.border = '0';
      tr.append(td);
      return tr;
    };
    const total = fullHeight() / s;
    const above = start * ROW_H / s;
    const rowsPx = (end - start) * ROW_H;
    if (above > 0) frag.append(spacer(above));
    const shown = visible.map((nm) => byName.get(nm)!);
    for (let k = start; k < end; k++) {
      const r = order[k];
      const tr = el('tr', { 'aria-rowindex': String(k + 2) });
      tr.style.height = `${ROW_H}px`;
      if (k === active) tr.className = 'active';
      for (const c of shown) {
        const td = el('td', { class: c.numeric ? 'n' : '' });
        if (!c.values) {
          td.textContent = '…';
        } else if (c.name === 'id') {
          const a = el('a', { href: `${objectsBase}${slugOf(ids[r])}/`, tabindex: k === active ? '0' : '-1', 'data-pos': String(k) }, ids[r]);
          td.append(a);
        } else if (c.type === 'cat') {
          td.textContent = c.categories?.[(c.values as Uint8Array)[r]] ?? '';
        } else if (c.name === 'flags') {
          const v = (c.values as Int32Array)[r];
          td.textContent = String(v);
          if (v) td.title = describeFlags(Number(v)).join(', ');
        } else td.textContent = fmt((c.values as ArrayLike<unknown>)[r], c);
        tr.append(td);
      }
      frag.append(tr);
    }
    const below = total - above - rowsPx;
    if (end < order.length && below > 0) frag.append(spacer(below));
    // the row with the keyboard focus is redrawn: keep the focus on it
    const hadFocus = tbody.contains(document.activeElement);
    tbody.replaceChildren(frag);
    tableEl.setAttribute('aria-rowcount', String(order.length + 1));
    if (hadFocus) focusActive();
  }

  function focusActive(): void {
    tbody.querySelector<HTMLAnchorElement>(`a[data-pos="${active}"]`)?.focus({ preventScroll: true });
  }

  function moveTo(pos: number): void {
    if (!order.length) return;
    active = Math.max(0, Math.min(order.length - 1, pos));
    const rowY = tableEl.offsetTop + tbody.offsetTop + (active * ROW_H) / scale();
    const headH = thead.getBoundingClientRect().height;
    if (rowY < viewport.scrollTop + headH) viewport.scrollTop = rowY - headH;
    else if (rowY + ROW_H > viewport.scrollTop + viewport.clientHeight) viewport.scrollTop = rowY + ROW_H - viewport.clientHeight;
    renderRows(true);
    focusActive();
  }

  tbody.addEventListener('keydown', (ev) => {
    const t = ev.target as HTMLElement;
    if (!t.matches('a[data-pos]')) return;
    const pos = Number(t.dataset.pos);
    const page = Math.max(1, Math.floor((viewport.clientHeight || 600) / ROW_H) - 2);
    const to = { ArrowDown: pos + 1, ArrowUp: pos - 1, PageDown: pos + page, PageUp: pos - page, Home: 0, End: order.length - 1 }[ev.key];
    if (to === undefined) return;
    ev.preventDefault();
    moveTo(to);
  });
  tbody.addEventListener('focusin', (ev) => {
    const t = ev.target as HTMLElement;
    if (t.matches('a[data-pos]')) active = Number(t.dataset.pos);
  });

  /** Load what the view needs (columns shown, sorted or filtered on), then compute and draw. */
  async function refresh(keepScroll = false): Promise<void> {
    const need = new Set<number>();
    for (const nm of [...visible, state.sort, ...Object.keys(state.ranges), plotX, plotY]) {
      const c = byName.get(nm);
      if (c && !c.values && c.group !== 0) need.add(c.group);
    }
    if (need.size) {
      status.textContent = 'Loading columns…';
      renderHead();
      renderRows(true);
      try {
        await Promise.all([...need].map(ensureGroup));
      } catch (e) {
        status.textContent = `Some columns could not be loaded (${(e as Error).message}).`;
        return;
      }
    }
    update(keepScroll);
  }

  function update(keepScroll = false): void {
    const t = performance.now();
    const problem = compute();
    const qs = stateQuery(state);
    history.replaceState(null, '', qs ? `?${qs}` : location.pathname);
    renderHead();
    if (!keepScroll) {
      viewport.scrollTop = 0;
      active = 0;
    }
    renderRows(true);
    const exact = state.q.trim() ? ids.indexOf(state.q.trim()) : -1;
    status.textContent = '';
    status.append(`${order.length.toLocaleString('en')} of ${N.toLocaleString('en')} objects${loaded < N ? ` (${loaded.toLocaleString('en')} loaded so far)` : ''}.`);
    if (exact >= 0 && exact < loaded) {
      status.append(' ');
      status.append(el('a', { href: `${objectsBase}${slugOf(ids[exact])}/` }, `Open ${ids[exact]}`));
    }
    if (problem) status.append(` ${problem}`);
    redrawPlot();
    root.dataset.lastUpdateMs = (performance.now() - t).toFixed(1);
    root.dataset.rows = String(order.length);
  }

  let timer = 0;
  const later = (f: () => void) => {
    clearTimeout(timer);
    timer = window.setTimeout(f, 120);
  };
  q.addEventListener('input', () => later(() => { state.q = q.value; void refresh(); }));
  flag.addEventListener('change', () => { state.flag = flag.value; void refresh(); });
  pop.addEventListener('change', () => { state.pop = pop.value; void refresh(); });
  const coneApply = () => later(() => { state.cone = cone.value; state.radius = radius.value; void refresh(); });
  cone.addEventListener('input', coneApply);
  radius.addEventListener('input', coneApply);
  const addRange = () => {
    if (!rangeCol.value || (rangeLo.value === '' && rangeHi.value === '')) return;
    state.ranges[rangeCol.value] = [rangeLo.value.trim(), rangeHi.value.trim()];
    rangeLo.value = '';
    rangeHi.value = '';
    renderRanges();
    void refresh();
  };
  controls.querySelector('[name=rangeadd]')!.addEventListener('click', addRange);
  for (const inp of [rangeLo, rangeHi]) inp.addEventListener('keydown', (ev) => { if (ev.key === 'Enter') { ev.preventDefault(); addRange(); } });
  viewport.addEventListener('scroll', () => requestAnimationFrame(() => renderRows()), { passive: true });
  new ResizeObserver(() => renderRows()).observe(viewport);
  /** CSV text of a cell: float32 values to the 7 digits they hold, not their binary expansion. */
  const cellText = (c: Col, r: number): string => {
    const v = (c.values as ArrayLike<unknown>)[r];
    if (c.type === 'cat') return c.categories?.[v as number] ?? '';
    if (c.type === 'f32') return Number.isFinite(v as number) ? String(Number((v as number).toPrecision(7))) : '';
    if (typeof v === 'number' && !Number.isFinite(v)) return '';
    return String(v);
  };
  root.querySelector('[name=csv]')!.addEventListener('click', () => {
    const shown = visible.map((nm) => byName.get(nm)!).filter((c) => c.values);
    const lines = [shown.map((c) => csvCell(c.name)).join(',')];
    for (let k = 0; k < order.length; k++) {
      const r = order[k];
      lines.push(shown.map((c) => csvCell(cellText(c, r))).join(','));
    }
    const blob = new Blob([lines.join('\n') + '\n'], { type: 'text/csv' });
    const a = el('a', { href: URL.createObjectURL(blob), download: 'catalogue-selection.csv' });
    document.body.append(a);
    a.click();
    a.remove();
    setTimeout(() => URL.revokeObjectURL(a.href), 1000);
  });
  root.querySelector('[name=reset]')!.addEventListener('click', () => {
    Object.assign(state, { q: '', sort: '', desc: false, flag: '', pop: '', cone: '', radius: '', ranges: {}, cols: null });
    q.value = flag.value = pop.value = cone.value = radius.value = '';
    visible = defaults.slice();
    for (const b of boxes) b.checked = visible.includes(b.value);
    renderRanges();
    void refresh();
  });

  renderRanges();
  await refresh();
  root.dataset.firstRowsMs = (performance.now() - t0).toFixed(0);

  // the rest of the core chunks, in the background; the view is recomputed as they arrive
  if (manifest.chunks > 1) {
    let last = performance.now();
    try {
      await fetchRest(0, 1, (k, rows) => {
        loaded += rows;
        sortCache.clear();
        if (go) {
          const hit = ids.indexOf(go, k * manifest.chunkRows);
          if (hit >= 0 && hit < loaded) goTo(hit);
        }
        // recompute at most a few times a second while loading, and once at the end
        if (loaded === N || performance.now() - last > 250) {
          last = performance.now();
          update(true);
        }
      });
    } catch (e) {
      status.append(` The rest of the catalogue could not be loaded (${(e as Error).message}).`);
    }
  }
  if (go && ids.indexOf(go) < 0) status.append(` No object has the id “${go}”.`);
  root.dataset.ready = '1';
  root.dataset.loadMs = (performance.now() - t0).toFixed(0);
}
