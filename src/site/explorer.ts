/**
 * The catalogue explorer (browser only): loads `downloads/catalogue.arrow` with apache-arrow and
 * shows it as a virtualised table with sorting, id search, range filters, a flag and population
 * filter, a cone search, a column chooser, CSV export of the selection and the state in the URL.
 * Rows link to object pages through the slug mapping. Filtering and sorting only; no statistics.
 */
import { tableFromIPC } from 'apache-arrow';
import { slugOf } from '../lib/core/slug.ts';
import { angularSeparationDeg, parseAngleArcsec, parseCoordinate } from '../lib/core/sky.ts';
import { FLAG_INFO, describeFlags } from '../lib/core/flags.ts';

type Values = Float64Array | Float32Array | Int32Array | Int16Array | Uint8Array | string[] | number[];

interface Col {
  name: string;
  unit: string;
  numeric: boolean;
  values: Values;
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
}

const ROW_H = 28;
const OVERSCAN = 12;
const DEFAULT_COLS = ['id', 'ra', 'dec', 'redshift', 'population', 'flags'];

function el<K extends keyof HTMLElementTagNameMap>(tag: K, attrs: Record<string, string> = {}, text?: string): HTMLElementTagNameMap[K] {
  const e = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) e.setAttribute(k, v);
  if (text !== undefined) e.textContent = text;
  return e;
}

function fmt(v: unknown): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) return '';
    if (Number.isInteger(v)) return String(v);
    const a = Math.abs(v);
    return a !== 0 && (a < 1e-3 || a >= 1e6) ? v.toExponential(4) : String(Number(v.toPrecision(7)));
  }
  return String(v);
}

function csvCell(s: string): string {
  return /[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

function readState(): State {
  const p = new URLSearchParams(location.search);
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
  };
}

function writeState(s: State): void {
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
  const qs = p.toString();
  history.replaceState(null, '', qs ? `?${qs}` : location.pathname);
}

export async function startExplorer(root: HTMLElement): Promise<void> {
  const arrowUrl = root.dataset.arrow as string;
  const objectsBase = root.dataset.objects as string;
  const status = root.querySelector('.explorer-status') as HTMLElement;
  const t0 = performance.now();
  status.textContent = 'Loading the catalogue…';
  let table;
  try {
    const res = await fetch(arrowUrl);
    if (!res.ok) throw new Error(`HTTP ${res.status}`);
    table = tableFromIPC(new Uint8Array(await res.arrayBuffer()));
  } catch (e) {
    status.textContent = `The catalogue file could not be loaded (${(e as Error).message}); the static list below shows the first objects.`;
    return;
  }
  const cols: Col[] = table.schema.fields.map((f, i) => {
    const vec = table.getChildAt(i)!;
    const typeName = String(f.type);
    const numeric = /^(Float|Int|Uint)/.test(typeName);
    let values: Values;
    if (numeric) {
      const arr = vec.toArray() as ArrayLike<number | bigint>;
      if (arr instanceof BigInt64Array || arr instanceof BigUint64Array) values = Array.from(arr, (b) => Number(b));
      else values = arr as Values;
      if (vec.nullCount > 0) {
        const copy = Float64Array.from(values as ArrayLike<number>);
        for (let r = 0; r < copy.length; r++) if (!vec.isValid(r)) copy[r] = NaN;
        values = copy;
      }
    } else {
      values = Array.from({ length: vec.length }, (_, r) => {
        const v = vec.get(r);
        return v === null || v === undefined ? '' : String(v);
      });
    }
    return { name: f.name, unit: f.metadata.get('unit') ?? '', numeric, values };
  });
  const n = table.numRows;
  const byName = new Map(cols.map((c) => [c.name, c]));
  const ids = (byName.get('id')?.values ?? []) as string[];
  const slugs = ids.map((id) => slugOf(id));
  const state = readState();

  // an exact id from the header search box opens that object's page
  if (new URLSearchParams(location.search).get('go') === '1' && state.q) {
    const hit = ids.indexOf(state.q.trim());
    if (hit >= 0) {
      location.replace(`${objectsBase}${slugs[hit]}/`);
      return;
    }
  }

  const controls = root.querySelector('.explorer-controls') as HTMLElement;
  const chooser = root.querySelector('.columns-chooser') as HTMLElement;
  const viewport = root.querySelector('.explorer-viewport') as HTMLElement;
  controls.hidden = false;
  viewport.hidden = false;
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
  if (popCol) for (const v of [...new Set(popCol.values as string[])].sort()) pop.append(el('option', { value: v }, v));
  else pop.disabled = true;
  for (const c of cols) if (c.numeric) rangeCol.append(el('option', { value: c.name }, c.name));

  q.value = state.q;
  flag.value = state.flag;
  pop.value = state.pop;
  cone.value = state.cone;
  radius.value = state.radius;
  let visible = (state.cols ?? DEFAULT_COLS).filter((c) => byName.has(c));
  if (!visible.length) visible = cols.slice(0, 6).map((c) => c.name);

  // column chooser
  const boxes = el('div');
  for (const c of cols) {
    const label = el('label');
    const box = el('input', { type: 'checkbox', value: c.name });
    (box as HTMLInputElement).checked = visible.includes(c.name);
    box.addEventListener('change', () => {
      const chosen = [...boxes.querySelectorAll<HTMLInputElement>('input:checked')].map((b) => b.value);
      visible = cols.map((cc) => cc.name).filter((nm) => chosen.includes(nm));
      state.cols = visible.join(',') === DEFAULT_COLS.filter((d) => byName.has(d)).join(',') ? null : visible;
      renderHead();
      renderRows(true);
      writeState(state);
    });
    label.append(box, document.createTextNode(c.name));
    boxes.append(label);
  }
  chooser.append(boxes);

  let order = new Uint32Array(0);
  const tableEl = viewport.querySelector('table') as HTMLTableElement;
  const thead = tableEl.tHead as HTMLTableSectionElement;
  const tbody = tableEl.tBodies[0];

  function renderRanges(): void {
    rangeList.textContent = '';
    for (const k of Object.keys(state.ranges).sort()) {
      const [lo, hi] = state.ranges[k];
      const b = el('button', { type: 'button', title: `Remove the ${k} filter` }, `${lo || '−∞'} ≤ ${k} ≤ ${hi || '∞'} ✕`);
      b.addEventListener('click', () => {
        delete state.ranges[k];
        renderRanges();
        update();
      });
      rangeList.append(b);
    }
  }

  function compute(): string | null {
    const t = performance.now();
    const needle = state.q.trim().toLowerCase();
    const bit = state.flag === 'none' ? -1 : state.flag === 'any' ? -2 : state.flag ? Number(state.flag) : 0;
    const flags = byName.get('flags')?.values as ArrayLike<number> | undefined;
    const popValues = popCol?.values as string[] | undefined;
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
    const ra = byName.get('ra')?.values as ArrayLike<number> | undefined;
    const dec = byName.get('dec')?.values as ArrayLike<number> | undefined;
    const ranges = Object.entries(state.ranges)
      .filter(([k]) => byName.get(k)?.numeric)
      .map(([k, [lo, hi]]) => ({ v: byName.get(k)!.values as ArrayLike<number>, lo: lo === '' ? -Infinity : Number(lo), hi: hi === '' ? Infinity : Number(hi) }));
    const keep = new Uint32Array(n);
    let m = 0;
    for (let r = 0; r < n; r++) {
      if (needle && !ids[r].toLowerCase().includes(needle)) continue;
      if (flags && bit !== 0) {
        const f = flags[r];
        if (bit === -1 ? f !== 0 : bit === -2 ? f === 0 : (f & bit) === 0) continue;
      }
      if (popValues && state.pop && popValues[r] !== state.pop) continue;
      let ok = true;
      for (const g of ranges) {
        const x = g.v[r];
        if (!(x >= g.lo && x <= g.hi)) {
          ok = false;
          break;
        }
      }
      if (!ok) continue;
      if (coneCentre && ra && dec && !(angularSeparationDeg(coneCentre.raDeg, coneCentre.decDeg, ra[r], dec[r]) <= coneDeg)) continue;
      keep[m++] = r;
    }
    order = keep.slice(0, m);
    const sc = byName.get(state.sort);
    if (sc) {
      const v = sc.values;
      const dir = state.desc ? -1 : 1;
      if (sc.numeric) {
        const x = v as ArrayLike<number>;
        order.sort((a, b) => {
          const xa = x[a];
          const xb = x[b];
          const na = Number.isNaN(xa);
          const nb = Number.isNaN(xb);
          if (na || nb) return na === nb ? a - b : na ? 1 : -1; // missing values last
          return xa === xb ? a - b : (xa < xb ? -1 : 1) * dir;
        });
      } else {
        const s = v as string[];
        order.sort((a, b) => (s[a] === s[b] ? a - b : (s[a] < s[b] ? -1 : 1) * dir));
      }
    }
    root.dataset.lastFilterMs = (performance.now() - t).toFixed(1);
    return problem;
  }

  function renderHead(): void {
    thead.textContent = '';
    const tr = el('tr');
    for (const name of visible) {
      const c = byName.get(name)!;
      const th = el('th', { scope: 'col', class: c.numeric ? 'n' : '' });
      const sorted = state.sort === name;
      th.setAttribute('aria-sort', sorted ? (state.desc ? 'descending' : 'ascending') : 'none');
      const b = el('button', { type: 'button', title: `Sort by ${name}` }, `${name}${c.unit ? ` [${c.unit}]` : ''}${sorted ? (state.desc ? ' ▼' : ' ▲') : ''}`);
      b.addEventListener('click', () => {
        if (state.sort === name) state.desc = !state.desc;
        else {
          state.sort = name;
          state.desc = false;
        }
        renderHead();
        update();
      });
      th.append(b);
      tr.append(th);
    }
    thead.append(tr);
  }

  let lastStart = -1;
  let lastEnd = -1;
  function renderRows(force = false): void {
    const top = viewport.scrollTop;
    const height = viewport.clientHeight || 600;
    const start = Math.max(0, Math.floor(top / ROW_H) - OVERSCAN);
    const end = Math.min(order.length, Math.ceil((top + height) / ROW_H) + OVERSCAN);
    if (!force && start === lastStart && end === lastEnd) return;
    lastStart = start;
    lastEnd = end;
    const frag = document.createDocumentFragment();
    const spacer = (h: number) => {
      const tr = el('tr', { 'aria-hidden': 'true', class: 'spacer' });
      const td = el('td', { colspan: String(visible.length) });
      td.style.height = `${h}px`;
      td.style.padding = '0';
      td.style.border = '0';
      tr.append(td);
      return tr;
    };
    if (start > 0) frag.append(spacer(start * ROW_H));
    const shown = visible.map((nm) => byName.get(nm)!);
    for (let k = start; k < end; k++) {
      const r = order[k];
      const tr = el('tr');
      tr.style.height = `${ROW_H}px`;
      for (const c of shown) {
        const v = c.values[r];
        const td = el('td', { class: c.numeric ? 'n' : '' });
        if (c.name === 'id') {
          const a = el('a', { href: `${objectsBase}${slugs[r]}/` }, ids[r]);
          td.append(a);
        } else if (c.name === 'flags') {
          td.textContent = String(v);
          if (v) td.title = describeFlags(Number(v)).join(', ');
        } else td.textContent = fmt(v);
        tr.append(td);
      }
      frag.append(tr);
    }
    if (end < order.length) frag.append(spacer((order.length - end) * ROW_H));
    tbody.replaceChildren(frag);
  }

  function update(): void {
    const problem = compute();
    writeState(state);
    viewport.scrollTop = 0;
    renderRows(true);
    const exact = state.q.trim() ? ids.indexOf(state.q.trim()) : -1;
    status.textContent = '';
    status.append(`${order.length.toLocaleString('en')} of ${n.toLocaleString('en')} objects.`);
    if (exact >= 0) {
      status.append(' ');
      status.append(el('a', { href: `${objectsBase}${slugs[exact]}/` }, `Open ${ids[exact]}`));
    }
    if (problem) status.append(` ${problem}`);
  }

  let timer = 0;
  const later = (f: () => void) => {
    clearTimeout(timer);
    timer = window.setTimeout(f, 120);
  };
  q.addEventListener('input', () => later(() => { state.q = q.value; update(); }));
  flag.addEventListener('change', () => { state.flag = flag.value; update(); });
  pop.addEventListener('change', () => { state.pop = pop.value; update(); });
  const coneApply = () => later(() => { state.cone = cone.value; state.radius = radius.value; update(); });
  cone.addEventListener('input', coneApply);
  radius.addEventListener('input', coneApply);
  controls.querySelector('[name=rangeadd]')!.addEventListener('click', () => {
    if (!rangeCol.value || (rangeLo.value === '' && rangeHi.value === '')) return;
    state.ranges[rangeCol.value] = [rangeLo.value.trim(), rangeHi.value.trim()];
    rangeLo.value = '';
    rangeHi.value = '';
    renderRanges();
    update();
  });
  viewport.addEventListener('scroll', () => requestAnimationFrame(() => renderRows()), { passive: true });
  root.querySelector('[name=csv]')!.addEventListener('click', () => {
    const shown = visible.map((nm) => byName.get(nm)!);
    const lines = [shown.map((c) => csvCell(c.name)).join(',')];
    for (let k = 0; k < order.length; k++) {
      const r = order[k];
      lines.push(shown.map((c) => csvCell(c.numeric ? String(c.values[r]) : String(c.values[r]))).join(','));
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
    visible = DEFAULT_COLS.filter((c) => byName.has(c));
    for (const b of boxes.querySelectorAll<HTMLInputElement>('input')) b.checked = visible.includes(b.value);
    renderRanges();
    renderHead();
    update();
  });

  renderRanges();
  renderHead();
  update();
  root.dataset.ready = '1';
  root.dataset.loadMs = (performance.now() - t0).toFixed(0);
}
