/**
 * One object's page content: its summaries, photometry converted to microjansky at the
 * bands' pivot wavelengths, model SED, spectra, flags in words, relation offsets and
 * its nearest neighbours on the sky.
 */
import type { Bundle } from '../bundle/load.ts';
import type { SummaryTable, ObjectCharts } from './summarise.ts';
import type { ObjectContent, ObjectIndexEntry, PhotPoint, SpectrumData } from './content.ts';
import type { PopulationResult } from './population.ts';
import { slugOf } from '../core/slug.ts';
import { stringAt } from '../io/table.ts';
import { FLAG_INFO } from '../core/flags.ts';
import { toMicroJy } from '../core/photometry.ts';
import { formatRaHms, formatDecDms, angularSeparationDeg } from '../core/sky.ts';

const r = (v: number, d = 5) => (Number.isFinite(v) ? Number(v.toPrecision(d)) : null);
const rn = (v: number, d = 5) => (Number.isFinite(v) ? Number(v.toPrecision(d)) : NaN);

/** Wavelength in micron from the release's unit. */
export function toMicron(v: number, unit: 'um' | 'Angstrom'): number {
  return unit === 'um' ? v : v / 1e4;
}

/** Nearest neighbours on the sky through a grid of cells (fast at any catalogue size). */
export function nearestNeighbours(ra: Float64Array, dec: Float64Array, count: number, radiusDeg: number): Int32Array[] {
  const n = ra.length;
  const cell = radiusDeg;
  const grid = new Map<string, number[]>();
  const key = (i: number, j: number) => `${i},${j}`;
  const cx = new Int32Array(n), cy = new Int32Array(n);
  for (let i = 0; i < n; i++) {
    cy[i] = Math.floor((dec[i] + 90) / cell);
    const cosd = Math.max(Math.cos((dec[i] * Math.PI) / 180), 1e-3);
    cx[i] = Math.floor((ra[i] * cosd) / cell);
    const k = key(cx[i], cy[i]);
    if (!grid.has(k)) grid.set(k, []);
    grid.get(k)!.push(i);
  }
  const out: Int32Array[] = [];
  for (let i = 0; i < n; i++) {
    const cand: [number, number][] = [];
    for (let a = -1; a <= 1; a++)
      for (let b = -1; b <= 1; b++)
        for (const j of grid.get(key(cx[i] + a, cy[i] + b)) ?? []) {
          if (j === i) continue;
          const s = angularSeparationDeg(ra[i], dec[i], ra[j], dec[j]);
          if (s <= radiusDeg) cand.push([s, j]);
        }
    cand.sort((p, q) => p[0] - q[0] || p[1] - q[1]);
    out.push(Int32Array.from(cand.slice(0, count), (c) => c[1]));
  }
  return out;
}

export interface ObjectContext {
  bundle: Bundle;
  summary: SummaryTable;
  popResult: PopulationResult;
  neighbours: Int32Array[];
  pStarForming: Float64Array | null;
  downloads: (i: number) => ObjectContent['downloads'];
}

export function objectIndexEntries(bundle: Bundle, summary: SummaryTable, population: string[]): ObjectIndexEntry[] {
  const o = bundle.objects;
  return o.id.map((id, i) => ({
    id,
    slug: slugOf(id),
    index: i,
    ra: o.ra[i],
    dec: o.dec[i],
    redshift: rn(o.redshift[i], 6),
    flags: summary.flags[i],
    population: population[i],
  }));
}

export function objectContent(ctx: ObjectContext, i: number, charts: ObjectCharts | null): ObjectContent {
  const { bundle, summary, popResult } = ctx;
  const { config, objects, photometry, bands, spectra, models } = bundle;
  const id = objects.id[i];
  const q = config.quality;
  const units = config.units;

  const params = config.parameters.map((p, j) => ({
    name: p.name,
    label: p.label,
    unit: p.unit,
    median: rn(summary.p50[j][i]),
    lo: rn(summary.p16[j][i]),
    hi: rn(summary.p84[j][i]),
    mean: rn(summary.mean[j][i]),
    std: rn(summary.std[j][i]),
    p025: rn(summary.p025[j][i]),
    p16: rn(summary.p16[j][i]),
    p50: rn(summary.p50[j][i]),
    p84: rn(summary.p84[j][i]),
    p975: rn(summary.p975[j][i]),
    hdi68: [rn(summary.hdi68lo[j][i]), rn(summary.hdi68hi[j][i])] as [number, number],
    hdi95: [rn(summary.hdi95lo[j][i]), rn(summary.hdi95hi[j][i])] as [number, number],
    truth: objects.truth[p.name] ? rn(objects.truth[p.name][i]) : undefined,
    multimodal: summary.multimodal[j][i] === 1,
    priorEdgeMass: Number.isFinite(summary.edgeMass[j][i]) ? rn(summary.edgeMass[j][i], 3) : undefined,
  }));

  const flags = summary.flags[i];
  const flagReasons: ObjectContent['flagReasons'] = [];
  for (const f of FLAG_INFO) {
    if (!(flags & f.bit)) continue;
    let text = '';
    switch (f.name) {
      case 'LOW_ESS':
        text = f.explain(String(q.minEss)) + ` Here the ESS is ${summary.ess[i].toFixed(1)}.`;
        break;
      case 'POOR_FIT':
        text = f.explain(String(q.minChi2Pvalue)) + ` Here chi-square = ${summary.chi2[i].toFixed(2)} for ${summary.dof[i]} degrees of freedom (p = ${summary.chi2Pvalue[i].toExponential(2)}).`;
        break;
      case 'PRIOR_EDGE': {
        const which = params.filter((p) => (p.priorEdgeMass ?? 0) > q.priorEdgeMass).map((p) => `${p.label} (${((p.priorEdgeMass ?? 0) * 100).toFixed(0)}% of the mass within ${(q.priorEdgeWidth * 100).toFixed(0)}% of the prior range of a bound)`);
        text = f.explain(`${(q.priorEdgeMass * 100).toFixed(0)}%`) + (which.length ? ` Affected: ${which.join('; ')}.` : '');
        break;
      }
      case 'MULTIMODAL': {
        const which = params.filter((p) => p.multimodal).map((p) => p.label);
        text = f.explain(`${(q.multimodalMinMass * 100).toFixed(0)}%`) + ` Affected: ${which.join(', ')}.`;
        break;
      }
      case 'RELATION_OUTLIER': {
        const which = popResult.offsets.filter((o) => Math.abs(o.tension[i]) > q.outlierTension).map((o) => `${o.name} (tension ${o.tension[i].toFixed(1)})`);
        text = f.explain(String(q.outlierTension)) + ` Relations: ${which.join(', ')}.`;
        break;
      }
      default:
        text = f.explain();
    }
    flagReasons.push({ label: f.label, text });
  }

  // photometry
  const phot: PhotPoint[] = [];
  if (photometry && bands) {
    const bandIndex = new Map(bands.band.map((b, j) => [b, j]));
    for (let rr = photometry.offsets[i]; rr < photometry.offsets[i + 1]; rr++) {
      const row = photometry.order[rr];
      const bj = bandIndex.get(photometry.band[row]);
      if (bj === undefined) continue;
      const wlUm = toMicron(bands.wavelength[bj], units.wavelength);
      const wlA = wlUm * 1e4;
      const conv = (v: number) => toMicroJy(v, units.flux, wlA);
      let flux: number, err: number;
      if (units.flux === 'ABmag') {
        flux = conv(photometry.flux[row]);
        // a magnitude error dm maps to df = f ln(10)/2.5 dm
        err = flux * (Math.LN10 / 2.5) * photometry.fluxErr[row];
      } else {
        flux = conv(photometry.flux[row]);
        err = conv(photometry.fluxErr[row]);
      }
      const model = photometry.modelFlux ? conv(photometry.modelFlux[row]) : NaN;
      const isLimit = photometry.upperLimit ? photometry.upperLimit[row] === 1 : false;
      const nsig = photometry.limitNsigma ? photometry.limitNsigma[row] : NaN;
      phot.push({
        band: photometry.band[row],
        label: bands.label?.[bj] || photometry.band[row],
        wavelengthUm: rn(wlUm, 6),
        fluxUJy: rn(flux),
        errUJy: rn(err),
        modelUJy: r(model),
        upperLimit: isLimit,
        limitUJy: isLimit ? r((Number.isFinite(nsig) ? nsig : 3) * err) : null,
        limitNsigma: isLimit ? (Number.isFinite(nsig) ? nsig : 3) : null,
        residualSigma: !isLimit && Number.isFinite(model) && err > 0 ? r((flux - model) / err, 3) : null,
      });
    }
    phot.sort((a, b) => a.wavelengthUm - b.wavelengthUm || (a.band < b.band ? -1 : 1));
  }

  // model SED
  let model: ObjectContent['model'] = null;
  if (models && models.offsets[i + 1] > models.offsets[i]) {
    const rows = Array.from(models.order.subarray(models.offsets[i], models.offsets[i + 1]));
    rows.sort((a, b) => models.wavelength[a] - models.wavelength[b]);
    const frame = models.frame?.[rows[0]] === 'rest' ? 'rest' : 'observed';
    model = {
      frame,
      wavelengthUm: rows.map((row) => rn(toMicron(models.wavelength[row], units.wavelength), 5)),
      fluxUJy: rows.map((row) => rn(toMicroJy(models.flux[row], units.flux, toMicron(models.wavelength[row], units.wavelength) * 1e4), 4)),
    };
  }

  // spectra
  const specs: SpectrumData[] = [];
  if (spectra && spectra.offsets[i + 1] > spectra.offsets[i]) {
    const byInst = new Map<string, number[]>();
    for (let rr = spectra.offsets[i]; rr < spectra.offsets[i + 1]; rr++) {
      const row = spectra.order[rr];
      const inst = spectra.instrument?.[row] || 'spectrum';
      if (!byInst.has(inst)) byInst.set(inst, []);
      byInst.get(inst)!.push(row);
    }
    for (const inst of [...byInst.keys()].sort()) {
      const rows = byInst.get(inst)!.sort((a, b) => spectra.wavelength[a] - spectra.wavelength[b]);
      const wl = (row: number) => toMicron(spectra.wavelength[row], units.wavelength);
      const conv = (v: number, row: number) => rn(toMicroJy(v, units.flux, wl(row) * 1e4), 4);
      specs.push({
        instrument: inst,
        wavelengthUm: rows.map((row) => rn(wl(row), 5)),
        fluxUJy: rows.map((row) => conv(spectra.flux[row], row)),
        errUJy: rows.map((row) => conv(spectra.fluxErr[row], row)),
        mask: rows.map((row) => (spectra.mask ? spectra.mask[row] === 1 : false)),
        modelUJy: spectra.modelFlux ? rows.map((row) => conv(spectra.modelFlux![row], row)) : null,
      });
    }
  }

  const n = objects.n;
  const link = (j: number) => ({ id: objects.id[j], slug: slugOf(objects.id[j]) });
  return {
    id,
    slug: slugOf(id),
    index: i,
    ra: objects.ra[i],
    dec: objects.dec[i],
    raHms: formatRaHms(objects.ra[i], 2),
    decDms: formatDecDms(objects.dec[i], 1),
    redshift: rn(objects.redshift[i], 6),
    nSamples: summary.nSamples[i],
    ess: rn(summary.ess[i], 4),
    essKind: summary.essKind[i],
    chi2: r(summary.chi2[i]),
    dof: Number.isFinite(summary.dof[i]) ? summary.dof[i] : null,
    chi2Pvalue: r(summary.chi2Pvalue[i], 3),
    flags,
    flagReasons,
    population: popResult.population[i],
    pStarForming: ctx.pStarForming ? r(ctx.pStarForming[i], 3) : null,
    summariesOnly: summary.summariesOnly[i] === 1,
    params,
    correlation: charts?.correlation ?? null,
    marginals: charts?.marginals ?? [],
    contours: charts?.contours ?? [],
    photometry: phot,
    model,
    spectra: specs,
    relations: popResult.offsets.map((o) => {
      const rel = config.relations.find((x) => x.name === o.name)!;
      return {
        name: o.name,
        title: rel.title,
        offset: r(o.offset[i], 4),
        tension: r(o.tension[i], 3),
        outlier: Math.abs(o.tension[i]) > q.outlierTension,
      };
    }),
    neighbours: Array.from(ctx.neighbours[i], (j) => ({ ...link(j), sepArcsec: rn(angularSeparationDeg(objects.ra[i], objects.dec[i], objects.ra[j], objects.dec[j]) * 3600, 4) })),
    prev: i > 0 ? link(i - 1) : null,
    next: i < n - 1 ? link(i + 1) : null,
    extra: objects.extra.map((c) => ({ name: c.name, value: c.kind === 'bool' ? (c.valid && !c.valid[i] ? '' : c.values[i] ? 'true' : 'false') : stringAt(c, i) })),
    downloads: ctx.downloads(i),
  };
}
