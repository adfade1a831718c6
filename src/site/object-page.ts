/**
 * The body of an object page as one HTML string, from the object's content and its figures:
 * the one renderer of object pages, used by the prerendered page (`pages/objects/[slug].astro`,
 * figures from the prerender) and by the browser viewer (figures drawn in the page). Links are
 * relative to `here`, the root-absolute path the page's relative URLs resolve against.
 */
import type { ObjectContent, ParamRow } from '../lib/pipeline/content.ts';
import type { ObjectFigures } from '../lib/charts/figures.ts';
import type { PreviousObject } from '../lib/pipeline/changes-content.ts';
import { describeFlags } from '../lib/core/flags.ts';
import { html, raw, type Html } from './html.ts';
import { interval, num, paramDecimals, range, sig } from './format.ts';
import { PATHS, rel } from './paths.ts';

export interface ObjectPageOptions {
  /** Root-absolute path that relative links start from (the page's own, or the viewer's). */
  here: string;
  /** Objects in the release. */
  total: number;
  /** The release's prior-edge threshold (fraction of posterior mass near a bound). */
  priorEdgeMass: number;
  figures: ObjectFigures;
  /** The object's values in the earlier release it was compared with, when it was in it. */
  earlier?: EarlierValues | null;
}

export interface EarlierValues {
  values: PreviousObject;
  /** Its page in the earlier release (a URL relative to this page or absolute), when that release's address is known. */
  page: string | null;
  /** The changes page, relative to this page. */
  changesPage: string;
  /** Shifts beyond this many sigma are marked. */
  threshold: number;
}

const pct = (f: number) => `${(f * 100).toFixed(f >= 0.1 ? 0 : 1)}%`;

function paramTable(o: ObjectContent, priorEdgeMass: number): Html {
  const atEdge = (p: ParamRow) => p.priorEdgeMass !== undefined && p.priorEdgeMass > priorEdgeMass;
  const showTruth = o.params.some((p) => p.truth !== undefined);
  const so = o.summariesOnly;
  // one count of decimals for the whole table, so its columns align: enough for the best-measured parameter
  const d = Math.max(0, ...o.params.map(paramDecimals));
  const rows = o.params.map((p) => {
    const notes = [
      p.multimodal && html`<span class="badge flag">multimodal</span>`,
      atEdge(p) && html`<span class="badge flag" title="${`More than ${pct(priorEdgeMass)} of the posterior lies near a bound of the prior`}">${pct(p.priorEdgeMass as number)} at prior edge</span>`,
      !p.multimodal && !atEdge(p) && html`<span class="none">—</span>`,
    ];
    return html`<tr><th scope="row">${p.label}</th><td>${p.unit || '—'}</td><td class="n">${interval(p.p50, p.p16, p.p84, d)}</td><td class="n">${range(p.p025, p.p975, d)}</td><td class="n">${so ? '—' : num(p.mean, d)}</td><td class="n">${so ? '—' : num(p.std, d)}</td><td class="n">${so ? '—' : range(p.hdi68[0], p.hdi68[1], d)}</td><td class="n">${so ? '—' : range(p.hdi95[0], p.hdi95[1], d)}</td>${showTruth ? html`<td class="n">${p.truth !== undefined ? num(p.truth, d) : '—'}</td>` : ''}<td>${notes}</td></tr>`;
  });
  return html`<div class="table-wrap"><table class="params"><caption>Parameters of ${o.id}<span class="sub">Notes flag a posterior piled against a bound of the prior (more than ${pct(priorEdgeMass)} of its mass near the bound) or with more than one mode. Median with the central 68% (16th–84th percentile) and 95% (2.5th–97.5th) credible intervals of the weighted posterior; HDI is the highest-density interval.${so ? ' Only percentile summaries were supplied for this object, so mean, standard deviation and HDIs are not from draws.' : ''}</span></caption><thead><tr><th scope="col">Parameter</th><th scope="col">Unit</th><th scope="col" class="n">Median ± 68%</th><th scope="col" class="n">95% interval</th><th scope="col" class="n">Mean</th><th scope="col" class="n">Std</th><th scope="col" class="n">68% HDI</th><th scope="col" class="n">95% HDI</th>${showTruth ? html`<th scope="col" class="n">True value</th>` : ''}<th scope="col">Notes</th></tr></thead><tbody>${rows}</tbody></table></div>`;
}

/** Posterior medians in the earlier release beside this release's, with the shift in units of the combined uncertainty. */
function earlierSection(o: ObjectContent, e: EarlierValues): Html {
  const v = e.values;
  const flags = describeFlags(v.flags);
  const rows = v.params
    .map((p) => ({ p, now: o.params.find((q) => q.name === p.name) }))
    .filter((r) => r.now)
    .map(({ p, now }) => {
      const shift = p.shiftSigma === null ? '—' : Math.abs(p.shiftSigma) > e.threshold ? html`<span class="badge flag">${num(p.shiftSigma, 1)}σ</span>` : `${num(p.shiftSigma, 1)}σ`;
      return html`<tr><th scope="row">${now!.label}</th><td class="n">${p.previous ? interval(p.previous.median, p.previous.lo, p.previous.hi) : '—'}</td><td class="n">${interval(now!.median, now!.lo, now!.hi)}</td><td class="n">${shift}</td></tr>`;
    });
  const where = v.renamed ? html`In ${v.version} this object was <span class="mono">${v.id}</span> (matched by position).` : html`This object was in release ${v.version} under the same id.`;
  const page = e.page ? html`<a href="${e.page}">Its page in ${v.version}</a>` : html`The ${v.version} values are below`;
  return html`<section aria-labelledby="h-earlier"><h2 id="h-earlier">Values in release ${v.version}</h2><p>${where} ${page}; <a href="${e.changesPage}">what changed in the whole release</a>. Flags in ${v.version}: ${flags.length ? flags.join(', ') : 'none'}.</p><div class="table-wrap"><table><caption>${o.id}: ${v.version} against this release <span class="sub">Posterior medians with 68% intervals; the shift is in units of the combined uncertainty, marked beyond ±${e.threshold}σ.</span></caption><thead><tr><th scope="col">Parameter</th><th scope="col" class="n">In ${v.version}</th><th scope="col" class="n">Now</th><th scope="col" class="n">Shift</th></tr></thead><tbody>${rows}</tbody></table></div></section>`;
}

function figure(svg: string | null, caption: string): Html {
  const body = svg ? html`<div class="svg">${raw(svg)}</div>` : html`<p class="unavailable">This figure was not drawn for this build.</p>`;
  return html`<figure class="fig fig-object">${body}<figcaption>${caption}</figcaption></figure>`;
}

/** The page's main content (everything inside `<main>`). */
export function objectMainHtml(o: ObjectContent, opts: ObjectPageOptions): string {
  const here = opts.here;
  const to = (p: string) => rel(here, p);
  const nLimits = o.photometry.filter((p) => p.upperLimit).length;
  const hasSed = o.photometry.length > 0 || o.spectra.length > 0 || o.model !== null;
  const flags =
    o.flagReasons.length === 0
      ? html`<p><span class="badge ok">No quality flags</span> None of the release's quality checks raised a warning for this object.</p>`
      : html`<ul class="flags">${o.flagReasons.map((r) => html`<li><span class="badge flag">${r.label}</span> ${r.text}</li>`)}</ul>`;
  const fact = (k: string, v: Html | string) => html`<dt>${k}</dt><dd>${v}</dd>`;
  const sedCaption = `Observed photometry (filled circles with 1σ error bars)${nLimits ? ', upper limits (downward arrows at their stated significance)' : ''}, model photometry (open squares) and the model SED (line), in microjansky${o.spectra.length ? '; spectra with error band, masked ranges shaded' : ''}. Lower panel: residuals in units of the error.`;
  const sed = hasSed
    ? html`<div class="sed-units"><input type="radio" name="sed-units" id="sed-flux" value="flux" checked><label class="opt" for="sed-flux">Flux density</label><input type="radio" name="sed-units" id="sed-mag" value="mag"><label class="opt" for="sed-mag">AB magnitude</label><div class="panels"><div class="panel-flux">${figure(opts.figures.sed, sedCaption)}</div><div class="panel-mag">${figure(opts.figures.sedMag, 'The same in AB magnitudes; non-positive forced fluxes are shown as 3σ upper limits.')}</div></div></div>`
    : html`<p>No photometry is available for this object.</p>`;
  const matrix = o.marginals.length
    ? figure(
        opts.figures.posterior,
        `Posterior matrix. Diagonal: each parameter's marginal density (kernel density estimate over the weighted histogram) with the central 68% and 95% credible intervals shaded and the median marked. Below the diagonal: the 68% and 95% highest-density credible regions of each pair. Above it: the weighted correlation coefficient ρ of each pair.${o.params.some((p) => p.truth !== undefined) ? ' Diamonds: the true values of this mock object.' : ''} Summary values are in the table above. These summaries depend on the fit's priors (see the release page).`,
      )
    : html`<p>No posterior draws were supplied for this object, so there is no posterior matrix.</p>`;
  const relations = o.relations.length
    ? html`<h2 id="relations">Place on the population relations</h2><div class="table-wrap"><table><caption>Offsets from the fitted relations <span class="sub">Offset in the relation's y quantity; tension is the offset over the combined intrinsic scatter and this object's posterior spread.</span></caption><thead><tr><th scope="col">Relation</th><th scope="col" class="n">Offset</th><th scope="col" class="n">Tension</th><th scope="col">Outlier</th></tr></thead><tbody>${o.relations.map(
        (r) => html`<tr><th scope="row"><a href="${to(PATHS.relation(r.name))}">${r.title}</a></th><td class="n">${num(r.offset, 3)}</td><td class="n">${num(r.tension, 2)}</td><td>${r.outlier ? html`<span class="badge flag">outlier</span>` : 'no'}</td></tr>`,
      )}</tbody></table></div>`
    : '';
  const draws = o.downloads.draws ? html`<li><a href="${to(PATHS.file(o.downloads.draws))}" download>Posterior draws</a> (FITS table: weights, parameters and interim prior)</li>` : html`<li>Posterior draws: in the release's samples table (downloads)</li>`;
  const phot = o.downloads.photometry ? html`<li><a href="${to(PATHS.file(o.downloads.photometry))}" download>Photometry</a></li>` : html`<li>Photometry: in the release's photometry table (downloads)</li>`;
  const extra = o.extra.length ? html`<h3>Other catalogue columns</h3><dl class="facts">${o.extra.map((e) => fact(e.name, e.value))}</dl>` : '';
  const neighbours = o.neighbours.length
    ? html`<ul>${o.neighbours.map((n) => html`<li><a href="${to(PATHS.object(n.slug))}">${n.id}</a> at ${num(n.sepArcsec, 1)}″</li>`)}</ul>`
    : html`<p>No other catalogue object nearby.</p>`;
  return html`<nav class="breadcrumbs" aria-label="Breadcrumbs"><ol><li><a href="${to(PATHS.home)}">Release</a></li><li><a href="${to(PATHS.catalogue)}">Catalogue</a></li><li aria-current="page">${o.id}</li></ol></nav><h1>${o.id}</h1><nav class="prevnext" aria-label="Neighbouring objects in the catalogue"><span>${o.prev ? html`<a href="${to(PATHS.object(o.prev.slug))}" rel="prev">← ${o.prev.id}</a>` : html`<span aria-hidden="true"></span>`}</span><span>Object ${o.index + 1} of ${opts.total}</span><span>${o.next ? html`<a href="${to(PATHS.object(o.next.slug))}" rel="next">${o.next.id} →</a>` : html`<span aria-hidden="true"></span>`}</span></nav><div class="grid2"><section aria-labelledby="h-where"><h2 id="h-where">Position and fit</h2><dl class="facts">${[
    fact('Right ascension', html`${num(o.ra, 6)}° <span class="mono">(${o.raHms})</span>`),
    fact('Declination', html`${num(o.dec, 6)}° <span class="mono">(${o.decDms})</span>`),
    fact('Redshift', num(o.redshift, 4)),
    fact('Population', `${o.population}${o.pStarForming !== null ? ` (probability of being on the main sequence ${num(o.pStarForming, 2)})` : ''}`),
    fact('Posterior draws', o.summariesOnly ? 'none (summaries only)' : String(o.nSamples)),
    fact('Effective sample size', o.summariesOnly ? '—' : `${num(o.ess, 1)} (${o.essKind === 'kish' ? 'Kish, from weights' : 'autocorrelation, from chains'})`),
    fact('Best-fit χ²', o.chi2 === null ? '—' : `${num(o.chi2, 2)}${o.dof !== null ? ` for ${o.dof} degrees of freedom` : ''}`),
    fact('χ² probability', o.chi2Pvalue === null ? '—' : sig(o.chi2Pvalue, 3)),
    fact('Flags', o.flags === 0 ? 'none' : `bitmask ${o.flags}`),
  ]}</dl></section><section aria-labelledby="h-flags"><h2 id="h-flags">Diagnostics</h2>${flags}${o.summariesOnly ? html`<p class="note">This object has percentile summaries only; there is no posterior matrix and its mean, spread and effective sample size are not computed from draws.</p>` : ''}</section></div><h2 id="params">Posterior summaries</h2>${paramTable(o, opts.priorEdgeMass)}${opts.earlier ? earlierSection(o, opts.earlier) : ''}<h2 id="sed">Spectral energy distribution</h2>${sed}<h2 id="posterior">Posterior distribution</h2>${matrix}${relations}<div class="grid2"><section aria-labelledby="h-nb"><h2 id="h-nb">Neighbours on the sky</h2>${neighbours}</section><section aria-labelledby="h-dl"><h2 id="h-dl">Data for this object</h2><ul>${draws}${phot}<li><a href="${to(PATHS.downloads)}">Whole-catalogue downloads</a></li></ul>${extra}</section></div>`.text;
}
