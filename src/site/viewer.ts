/**
 * The object viewer (browser only, viewer mode): finds one object's shard through the slug
 * lookup (`viewer-data.ts`), then renders the object page in the browser: position and fit,
 * flags in words, the posterior table, the SED and corner plots drawn with Vega from the same
 * spec builders the prerendered pages use, relation offsets and neighbours.
 *
 * The object comes from `?id=<id>` or from the path `…/objects/<slug>/` (the not-found page
 * serves those URLs in viewer mode and loads this page into itself; see 404.astro). All data
 * URLs resolve against `document.baseURI`, which is this page's folder in both cases.
 */
import type { ObjectContent, ParamRow } from '../lib/pipeline/content.ts';
import { compile, type TopLevelSpec } from 'vega-lite';
import { parse, View } from 'vega';
import { idOfSlug, slugOf } from '../lib/core/slug.ts';
import { sedSpec } from '../lib/charts/sed.ts';
import { cornerSpec } from '../lib/charts/corner.ts';
import { PATHS, rel } from './paths.ts';
import { interval, num, paramDecimals, range, sig } from './format.ts';
import type { ViewerLookup } from './viewer-data.ts';

const HERE = '/objects/view/';

type Child = Node | string | null | undefined | false;

function h<K extends keyof HTMLElementTagNameMap>(tag: K, attrs: Record<string, string | undefined> | null, ...children: (Child | Child[])[]): HTMLElementTagNameMap[K] {
  const e = document.createElement(tag);
  if (attrs) for (const [k, v] of Object.entries(attrs)) if (v !== undefined) e.setAttribute(k, v);
  for (const c of children.flat()) if (c !== null && c !== undefined && c !== false) e.append(c);
  return e;
}

const link = (to: string, text: string, attrs: Record<string, string> = {}) => h('a', { href: rel(HERE, to), ...attrs }, text);

async function getJson<T>(url: string): Promise<T> {
  const res = await fetch(new URL(url, document.baseURI));
  if (!res.ok) throw new Error(`${url}: HTTP ${res.status}`);
  return (await res.json()) as T;
}

/** Last index i with heads[i] <= key (code-unit order), or -1. */
function floorSearch(heads: string[], key: string): number {
  let lo = 0;
  let hi = heads.length - 1;
  let best = -1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (heads[mid] <= key) {
      best = mid;
      lo = mid + 1;
    } else hi = mid - 1;
  }
  return best;
}

/** The catalogue index of `slug`, or null when the release has no such object. */
export async function findObject(slug: string): Promise<{ index: number; shardSize: number } | null> {
  const lookup = await getJson<ViewerLookup>('lookup.json');
  const page = floorSearch(lookup.heads, slug);
  if (page < 0) return null;
  const entries = await getJson<[string, number][]>(`lookup-${String(page).padStart(6, '0')}.json`);
  let lo = 0;
  let hi = entries.length - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    const s = entries[mid][0];
    if (s === slug) return { index: entries[mid][1], shardSize: lookup.shardSize };
    if (s < slug) lo = mid + 1;
    else hi = mid - 1;
  }
  return null;
}

/** Which object this page shows: `?id=` first, else the slug in the path (`objects/<slug>/`). */
export function requestedSlug(loc: Location): string | null {
  const id = new URLSearchParams(loc.search).get('id');
  if (id !== null && id.trim() !== '') return slugOf(id.trim());
  const m = /\/objects\/([^/]+)\/?(?:index\.html)?$/.exec(loc.pathname);
  if (!m) return null;
  let s: string;
  try {
    s = decodeURIComponent(m[1]);
  } catch {
    return null;
  }
  return s;
}

function escapeXml(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

/** Draw a Vega-Lite spec into `box` as an SVG with a title and a description (its text alternative). */
async function drawChart(box: HTMLElement, spec: TopLevelSpec): Promise<void> {
  const vg = compile(spec).spec;
  const view = new View(parse(vg), { renderer: 'none', logLevel: 0 });
  try {
    let svg = await view.toSVG();
    const meta = spec as { title?: unknown; description?: string };
    const t = meta.title as { text?: string } | string | undefined;
    const title = typeof t === 'string' ? t : t?.text ?? '';
    const desc = meta.description ?? '';
    svg = svg.replace(/ (aria-label|aria-roledescription|role|aria-hidden)="[^"]*"/g, '');
    svg = svg.replace(/^<svg([^>]*)>/, (_m, a: string) => `<svg${a.replace(' class="marks"', '')} role="img" aria-label="${escapeXml(desc || title)}" class="chart"><title>${escapeXml(title)}</title><desc>${escapeXml(desc)}</desc>`);
    box.innerHTML = svg;
  } finally {
    view.finalize();
  }
}

function figure(caption: string): { fig: HTMLElement; box: HTMLElement } {
  const box = h('div', { class: 'svg' }, h('p', { class: 'chart-loading' }, 'Drawing the chart…'));
  const fig = h('figure', { class: 'fig' }, box, h('figcaption', null, caption));
  return { fig, box };
}

function paramTable(o: ObjectContent, priorEdgeMass: number): HTMLElement {
  const atEdge = (p: ParamRow) => p.priorEdgeMass !== undefined && p.priorEdgeMass > priorEdgeMass;
  const pct = (f: number) => `${(f * 100).toFixed(f >= 0.1 ? 0 : 1)}%`;
  const showTruth = o.params.some((p) => p.truth !== undefined);
  const so = o.summariesOnly;
  const row = (p: ParamRow) => {
    const d = paramDecimals(p);
    return h(
      'tr',
      null,
      h('th', { scope: 'row' }, p.label),
      h('td', null, p.unit || '—'),
      h('td', { class: 'n' }, interval(p.p50, p.p16, p.p84, d)),
      h('td', { class: 'n' }, range(p.p025, p.p975, d)),
      h('td', { class: 'n' }, so ? '—' : num(p.mean, d)),
      h('td', { class: 'n' }, so ? '—' : num(p.std, d)),
      h('td', { class: 'n' }, so ? '—' : range(p.hdi68[0], p.hdi68[1], d)),
      h('td', { class: 'n' }, so ? '—' : range(p.hdi95[0], p.hdi95[1], d)),
      showTruth && h('td', { class: 'n' }, p.truth !== undefined ? num(p.truth, d) : '—'),
      h(
        'td',
        null,
        p.multimodal && h('span', { class: 'badge flag' }, 'multimodal'),
        atEdge(p) && h('span', { class: 'badge flag', title: `More than ${pct(priorEdgeMass)} of the posterior lies near a bound of the prior` }, `${pct(p.priorEdgeMass as number)} at prior edge`),
        !p.multimodal && !atEdge(p) && h('span', { class: 'none' }, '—'),
      ),
    );
  };
  const heads = ['Parameter', 'Unit', 'Median ± 68%', '95% interval', 'Mean', 'Std', '68% HDI', '95% HDI', ...(showTruth ? ['True value'] : []), 'Notes'];
  return h(
    'div',
    { class: 'table-wrap' },
    h(
      'table',
      { class: 'params' },
      h(
        'caption',
        null,
        `Parameters of ${o.id}`,
        h('span', { class: 'sub' }, `Notes flag a posterior piled against a bound of the prior (more than ${pct(priorEdgeMass)} of its mass near the bound) or with more than one mode. Median with the central 68% (16th–84th percentile) and 95% (2.5th–97.5th) credible intervals of the weighted posterior; HDI is the highest-density interval.${so ? ' Only percentile summaries were supplied for this object, so mean, standard deviation and HDIs are not from draws.' : ''}`),
      ),
      h('thead', null, h('tr', null, heads.map((t, i) => h('th', { scope: 'col', class: i >= 2 && t !== 'Notes' ? 'n' : undefined }, t)))),
      h('tbody', null, o.params.map(row)),
    ),
  );
}

function facts(pairs: [string, Child | Child[]][]): HTMLElement {
  return h('dl', { class: 'facts' }, pairs.flatMap(([k, v]) => [h('dt', null, k), h('dd', null, ...(Array.isArray(v) ? v : [v]))]));
}

/** The object page, in the same order and words as the prerendered one. */
export function renderObject(main: HTMLElement, o: ObjectContent, total: number, priorEdgeMass = 0): { charts: Promise<void> } {
  const nLimits = o.photometry.filter((p) => p.upperLimit).length;
  const flags =
    o.flagReasons.length === 0
      ? h('p', null, h('span', { class: 'badge ok' }, 'No quality flags'), " None of the release's quality checks raised a warning for this object.")
      : h('ul', { class: 'flags' }, o.flagReasons.map((r) => h('li', null, h('span', { class: 'badge flag' }, r.label), ` ${r.text}`)));
  const sedFlux = figure(`Observed photometry (filled circles with 1σ error bars)${nLimits ? ', upper limits (downward arrows at their stated significance)' : ''}, model photometry (open squares) and the model SED (line), in microjansky${o.spectra.length ? '; spectra with error band, masked ranges shaded' : ''}. Lower panel: residuals in units of the error.`);
  const sedMag = figure('The same in AB magnitudes; non-positive forced fluxes are shown as 3σ upper limits.');
  const corner = figure('One-dimensional marginals (histogram and kernel density estimate, with median and 68% interval) and two-dimensional contours enclosing 68% and 95% of the posterior mass.');
  const hasSed = o.photometry.length > 0 || o.spectra.length > 0 || o.model !== null;
  const sedBlock = hasSed
    ? h(
        'div',
        { class: 'sed-units' },
        h('input', { type: 'radio', name: 'sed-units', id: 'sed-flux', value: 'flux', checked: '' }),
        h('label', { class: 'opt', for: 'sed-flux' }, 'Flux density'),
        h('input', { type: 'radio', name: 'sed-units', id: 'sed-mag', value: 'mag' }),
        h('label', { class: 'opt', for: 'sed-mag' }, 'AB magnitude'),
        h('div', { class: 'panels' }, h('div', { class: 'panel-flux' }, sedFlux.fig), h('div', { class: 'panel-mag' }, sedMag.fig)),
      )
    : h('p', null, 'No photometry is available for this object.');

  const parts: Child[] = [
    h('nav', { class: 'breadcrumbs', 'aria-label': 'Breadcrumbs' }, h('ol', null, h('li', null, link(PATHS.home, 'Release')), h('li', null, link(PATHS.catalogue, 'Catalogue')), h('li', { 'aria-current': 'page' }, o.id))),
    h('h1', null, o.id),
    h(
      'nav',
      { class: 'prevnext', 'aria-label': 'Neighbouring objects in the catalogue' },
      h('span', null, o.prev ? link(PATHS.object(o.prev.slug), `← ${o.prev.id}`, { rel: 'prev' }) : ''),
      h('span', null, `Object ${o.index + 1} of ${total}`),
      h('span', null, o.next ? link(PATHS.object(o.next.slug), `${o.next.id} →`, { rel: 'next' }) : ''),
    ),
    h(
      'div',
      { class: 'grid2' },
      h(
        'section',
        { 'aria-labelledby': 'h-where' },
        h('h2', { id: 'h-where' }, 'Position and fit'),
        facts([
          ['Right ascension', [`${num(o.ra, 6)}° `, h('span', { class: 'mono' }, `(${o.raHms})`)]],
          ['Declination', [`${num(o.dec, 6)}° `, h('span', { class: 'mono' }, `(${o.decDms})`)]],
          ['Redshift', num(o.redshift, 4)],
          ['Population', `${o.population}${o.pStarForming !== null ? ` (probability of being on the main sequence ${num(o.pStarForming, 2)})` : ''}`],
          ['Posterior draws', o.summariesOnly ? 'none (summaries only)' : String(o.nSamples)],
          ['Effective sample size', o.summariesOnly ? '—' : `${num(o.ess, 1)} (${o.essKind === 'kish' ? 'Kish, from weights' : 'autocorrelation, from chains'})`],
          ['Best-fit χ²', o.chi2 === null ? '—' : `${num(o.chi2, 2)}${o.dof !== null ? ` for ${o.dof} degrees of freedom` : ''}`],
          ['χ² probability', o.chi2Pvalue === null ? '—' : sig(o.chi2Pvalue, 3)],
          ['Flags', o.flags === 0 ? 'none' : `bitmask ${o.flags}`],
        ]),
      ),
      h(
        'section',
        { 'aria-labelledby': 'h-flags' },
        h('h2', { id: 'h-flags' }, 'Diagnostics'),
        flags,
        o.summariesOnly && h('p', { class: 'note' }, 'This object has percentile summaries only; there is no corner plot and its mean, spread and effective sample size are not computed from draws.'),
      ),
    ),
    h('h2', { id: 'params' }, 'Posterior summaries'),
    paramTable(o, priorEdgeMass),
    h('h2', { id: 'sed' }, 'Spectral energy distribution'),
    sedBlock,
    h('h2', { id: 'posterior' }, 'Posterior distribution'),
    o.marginals.length ? corner.fig : h('p', null, 'No posterior draws were supplied for this object, so there is no corner plot.'),
    o.relations.length > 0 && h('h2', { id: 'relations' }, 'Place on the population relations'),
    o.relations.length > 0 &&
      h(
        'div',
        { class: 'table-wrap' },
        h(
          'table',
          null,
          h('caption', null, 'Offsets from the fitted relations ', h('span', { class: 'sub' }, "Offset in the relation's y quantity; tension is the offset over the combined intrinsic scatter and this object's posterior spread.")),
          h('thead', null, h('tr', null, h('th', { scope: 'col' }, 'Relation'), h('th', { scope: 'col', class: 'n' }, 'Offset'), h('th', { scope: 'col', class: 'n' }, 'Tension'), h('th', { scope: 'col' }, 'Outlier'))),
          h(
            'tbody',
            null,
            o.relations.map((r) =>
              h('tr', null, h('th', { scope: 'row' }, link(PATHS.relation(r.name), r.title)), h('td', { class: 'n' }, num(r.offset, 3)), h('td', { class: 'n' }, num(r.tension, 2)), h('td', null, r.outlier ? h('span', { class: 'badge flag' }, 'outlier') : 'no')),
            ),
          ),
        ),
      ),
    h(
      'div',
      { class: 'grid2' },
      h(
        'section',
        { 'aria-labelledby': 'h-nb' },
        h('h2', { id: 'h-nb' }, 'Neighbours on the sky'),
        o.neighbours.length ? h('ul', null, o.neighbours.map((n) => h('li', null, link(PATHS.object(n.slug), n.id), ` at ${num(n.sepArcsec, 1)}″`))) : h('p', null, 'No other catalogue object nearby.'),
      ),
      h(
        'section',
        { 'aria-labelledby': 'h-dl' },
        h('h2', { id: 'h-dl' }, 'Data for this object'),
        h(
          'ul',
          null,
          o.downloads.draws ? h('li', null, h('a', { href: rel(HERE, PATHS.file(o.downloads.draws)), download: '' }, 'Posterior draws'), ' (weights and interim prior)') : h('li', null, "Posterior draws: in the release's samples table (downloads)"),
          o.downloads.photometry ? h('li', null, h('a', { href: rel(HERE, PATHS.file(o.downloads.photometry)), download: '' }, 'Photometry')) : h('li', null, "Photometry: in the release's photometry table (downloads)"),
          h('li', null, link(PATHS.downloads, 'Whole-catalogue downloads')),
        ),
        o.extra.length > 0 && h('h3', null, 'Other catalogue columns'),
        o.extra.length > 0 && h('dl', { class: 'facts' }, o.extra.flatMap((e) => [h('dt', null, e.name), h('dd', null, e.value)])),
      ),
    ),
  ];
  main.replaceChildren(...(parts.filter((x) => x !== null && x !== undefined && x !== false) as (Node | string)[]));

  const jobs: Promise<void>[] = [];
  if (hasSed) {
    jobs.push(drawChart(sedFlux.box, sedSpec(o, { units: 'flux' })));
    jobs.push(drawChart(sedMag.box, sedSpec(o, { units: 'mag' })));
  }
  if (o.marginals.length) jobs.push(drawChart(corner.box, cornerSpec(o)));
  return { charts: Promise.all(jobs).then(() => undefined) };
}

function notFound(main: HTMLElement, what: string): void {
  main.replaceChildren(
    h('h1', null, 'Object not found'),
    h('p', null, what),
    h('ul', null, h('li', null, link(PATHS.catalogue, 'Search the catalogue')), h('li', null, link(PATHS.home, 'Release page'))),
  );
}

export async function startViewer(root: HTMLElement): Promise<void> {
  const status = root.querySelector('.viewer-status') as HTMLElement;
  const main = root.querySelector('.viewer-object') as HTMLElement;
  const total = Number(root.dataset.total ?? '0');
  const siteTitle = root.dataset.siteTitle ?? '';
  const slug = requestedSlug(location);
  const t0 = performance.now();
  try {
    if (slug === null) {
      status.textContent = 'Give an object id, e.g. objects/view/?id=<id>, or find the object in the catalogue.';
      return;
    }
    const id = idOfSlug(slug);
    if (id === null) {
      notFound(main, 'This address does not name an object of this release.');
      status.textContent = '';
      root.dataset.state = 'missing';
      return;
    }
    status.textContent = `Loading ${id}…`;
    const where = await findObject(slug);
    if (!where) {
      if (slug === 'view' && !new URLSearchParams(location.search).has('id')) {
        status.textContent = 'Give an object id, e.g. objects/view/?id=<id>, or find the object in the catalogue.';
        return;
      }
      notFound(main, `There is no object with id “${id}” in this release.`);
      status.textContent = '';
      root.dataset.state = 'missing';
      document.title = `Object not found · ${siteTitle}`;
      return;
    }
    const shard = Math.floor(where.index / where.shardSize);
    const objects = await getJson<ObjectContent[]>(`shard-${String(shard).padStart(6, '0')}.json`);
    const o = objects[where.index - shard * where.shardSize];
    if (!o || o.slug !== slug) throw new Error(`shard ${shard} does not hold object ${where.index}`);
    document.title = `${o.id} · ${siteTitle}`;
    status.textContent = '';
    const { charts } = renderObject(main, o, total, Number(root.dataset.priorEdgeMass ?? '0'));
    root.dataset.state = 'shown';
    await charts;
    root.dataset.state = 'ready';
    root.dataset.loadMs = (performance.now() - t0).toFixed(0);
  } catch (e) {
    status.textContent = `The object could not be loaded (${(e as Error).message}).`;
    root.dataset.state = 'error';
  }
}
