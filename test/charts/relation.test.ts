import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { compile } from 'vega-lite';
import { writeMiniContent } from '../helpers/mini-content.ts';
import type { MethodFit, RelationContent } from '../../src/lib/pipeline/content.ts';
import { axisTitle, relationPanelSpec, relationPointsSpec, relationPointsVega, relationSeries, relationSpec, shortCitation, splitReference, TRUTH_SERIES } from '../../src/lib/charts/relation.ts';
import { offsetInWidths, summariseDiagnostics, truthOffsets } from '../../src/lib/charts/fit-summary.ts';
import { FIGURES, siteFigureJobs } from '../../src/lib/charts/figures.ts';
import { renderSvg } from '../../src/lib/charts/render.ts';

let plain: RelationContent;
let mock: RelationContent;

beforeAll(async () => {
  const a = mkdtempSync(join(tmpdir(), 'posterity-rel-'));
  const b = mkdtempSync(join(tmpdir(), 'posterity-rel-mock-'));
  await writeMiniContent(a);
  await writeMiniContent(b, { mock: true });
  plain = JSON.parse(readFileSync(join(a, 'relations/main-sequence.json'), 'utf8')) as RelationContent;
  mock = JSON.parse(readFileSync(join(b, 'relations/main-sequence.json'), 'utf8')) as RelationContent;
});

function compiles(spec: unknown): void {
  const logger = { level: () => logger, warn: () => logger, info: () => logger, debug: () => logger, error: (...a: unknown[]) => { throw new Error(a.join(' ')); } };
  expect(() => compile(spec as never, { logger: logger as never })).not.toThrow();
}

type Layer = { name?: string; mark: { type: string; strokeDash?: number[] } | string; data?: { values?: Record<string, unknown>[] } };
const layersOf = (spec: unknown): Layer[] => (spec as { layer: Layer[] }).layer;
const linesOf = (spec: unknown): Record<string, unknown>[] => layersOf(spec).find((l) => l.name?.startsWith('lines_'))?.data?.values ?? [];

describe('relation small multiples', () => {
  it('has one panel per redshift bin in the combined figure, on shared axes, and every panel compiles', () => {
    const spec = relationSpec(mock) as unknown as { concat: { layer: unknown[]; title: { text: string } }[]; columns: number };
    compiles(spec);
    expect(spec.concat).toHaveLength(mock.bins.length);
    expect(spec.concat.map((p) => p.title.text)).toEqual(['0.2 < z < 0.8', '0.8 < z < 1.5']);
    for (let i = 0; i < mock.bins.length; i++) compiles(relationPanelSpec(mock, i));
  });

  it('draws every method as a line, the naive one dotted and in its own colour', () => {
    const spec = relationPanelSpec(plain, 0);
    const series = new Set(linesOf(spec).map((v) => v.series));
    expect(series).toEqual(new Set(['hierarchical fit, 68% band', 'deconvolved fit', 'naive (least squares on medians) fit', 'mixture fit', 'reference: Reference main sequence']));
    const styles = relationSeries(plain);
    const naive = styles.find((s) => s.name.startsWith('naive'))!;
    const pref = styles.find((s) => s.name.startsWith('hierarchical'))!;
    expect(naive.colour).not.toBe(pref.colour);
    expect(naive.dash).not.toEqual(pref.dash);
    expect(styles[0].name).toBe('hierarchical fit, 68% band'); // the preferred (banded) method leads the key
  });

  it('draws the true relation only for mocks, dashed', async () => {
    expect(linesOf(relationPanelSpec(plain, 0)).some((v) => v.series === TRUTH_SERIES)).toBe(false);
    const m = relationPanelSpec(mock, 0);
    const truth = linesOf(m).filter((v) => v.series === TRUTH_SERIES);
    expect(truth.length).toBeGreaterThan(2);
    // y = a + b (x - pivot) with the bin's truth (mini content: a = 0.6, b = 0.78, pivot 10)
    const t = mock.bins[0].truth!;
    for (const p of truth) expect(p.y as number).toBeCloseTo(t.a + t.b * ((p.x as number) - mock.pivot), 3);
    expect(relationSeries(mock).find((s) => s.name === TRUTH_SERIES)!.dash.length).toBe(2);
    expect(await renderSvg(m)).toContain('true relation of the mock');
    expect(relationSeries(plain).some((s) => s.name === TRUTH_SERIES)).toBe(false);
  });

  it('shows the credible band, running medians with spread, completeness rule, reference within range and outliers per bin', async () => {
    const spec = relationPanelSpec(mock, 1);
    const marks = layersOf(spec).map((l) => (typeof l.mark === 'string' ? l.mark : l.mark.type));
    expect(marks).toEqual(expect.arrayContaining(['area', 'rect', 'line', 'rule', 'tick', 'point', 'text']));
    const svg = await renderSvg(spec);
    expect(svg).toContain('mass limit');
    expect(svg).toContain('outliers_1_marks'); // the one outlier (z = 1.204) is in the second bin
    expect(await renderSvg(relationPanelSpec(mock, 0))).not.toContain('outliers_0_marks');
    const ref = linesOf(spec).filter((v) => String(v.series).startsWith('reference'));
    const [x0, x1] = [Math.min(...mock.bins[1].reference!.x), Math.max(...mock.bins[1].reference!.x)];
    for (const p of ref) expect((p.x as number) >= x0 && (p.x as number) <= x1).toBe(true);
  });

  it('uses the per-bin density when the pipeline gives one', () => {
    const cells = (spec: unknown) => layersOf(spec).find((l) => typeof l.mark === 'object' && l.mark.type === 'rect' && (l.data?.values?.[0] as { n?: number })?.n !== undefined)?.data?.values ?? [];
    const all = cells(relationPanelSpec(plain, 0)).length;
    const counts = plain.density.counts.map((_, k) => (k % 7 === 0 ? 1 : 0));
    const withBins = { ...plain, densityByBin: [counts, plain.density.counts] };
    expect(cells(relationPanelSpec(withBins, 0)).length).toBe(counts.filter((n) => n > 0).length);
    expect(cells(relationPanelSpec(withBins, 1)).length).toBe(all);
  });

  it('lists the panels, the combined figure (with a PNG) and the linked view among the figures', () => {
    const site = { sky: { cells: [] }, redshiftHist: { counts: [] }, massHist: { edges: [] }, flags: [] } as never;
    const jobs = siteFigureJobs(site, [mock], null, null);
    const paths = jobs.map((j) => j.path);
    expect(paths).toEqual([FIGURES.relation('main-sequence'), FIGURES.relationPanel('main-sequence', 0), FIGURES.relationPanel('main-sequence', 1), FIGURES.relationPoints('main-sequence')]);
    expect(jobs[0].png).toBe(true);
  });
});

describe('linked view', () => {
  it('has a brush, tooltips and each point\'s relative page link, and compiles to Vega', () => {
    const spec = relationPointsSpec(mock) as unknown as { params: { name: string }[]; data: { values: { href: string }[] }; encoding: Record<string, unknown> };
    expect(spec.params.map((p) => p.name)).toEqual(['brush']);
    expect(spec.encoding.tooltip).toBeDefined();
    expect(spec.data.values[0].href).toMatch(/^\.\.\/\.\.\/objects\/[^/]+\/$/);
    const vg = relationPointsVega(mock) as { signals: { name: string }[]; data: { name: string }[] };
    expect(vg.signals.some((s) => s.name === 'brush')).toBe(true);
    expect(vg.data.some((d) => d.name === 'points')).toBe(true);
  });
});

describe('fit table summaries', () => {
  const fit = (diagnostics: MethodFit['diagnostics']): MethodFit => ({ method: 'x', n: 10, a: { median: 1, lo: 0.9, hi: 1.1 }, b: { median: 0.8, lo: 0.7, hi: 0.9 }, s: { median: 0.3, lo: 0.25, hi: 0.35 }, diagnostics, warnings: [] });

  it('reduces sampler diagnostics to max R-hat, min ESS, max tau, acceptance and effective draws', () => {
    const d = summariseDiagnostics(fit({ rhat: [1.01, 1.2, 1.05], ess: [400, 163, 220], tau: [17, 23.5], acceptance: 0.55, nWalkers: 16, nSteps: 300, burn: 60, meanEffectiveDraws: 52.6, objectsWithFewEffectiveDraws: 3, drawsPerObject: 64 }));
    expect(d).toMatchObject({ maxRhat: 1.2, minEss: 163, maxTau: 23.5, acceptance: 0.55, meanEffectiveDraws: 52.6, fewEffectiveDraws: 3, drawsPerObject: 64, converged: false });
    expect(d.sampler).toBe('16 walkers × 300 steps, first 60 discarded');
    expect(summariseDiagnostics(fit({})).maxRhat).toBeNull();
  });

  it('measures the offset from the truth in units of the 68% half-width', () => {
    // median 1, interval [0.9, 1.1]: half-width 0.1, truth 0.8 -> +2
    expect(offsetInWidths({ median: 1, lo: 0.9, hi: 1.1 }, 0.8)).toBeCloseTo(2, 12);
    expect(offsetInWidths({ median: 1, lo: 1, hi: 1 }, 0.8)).toBeNull();
    const o = truthOffsets(fit({}), { a: 1, b: 0.9, s: 0.3 });
    expect(o.a).toBeCloseTo(0, 12);
    expect(o.b).toBeCloseTo(-1, 12);
  });
});

describe('labels', () => {
  it('shortens reference citations and splits the pipeline\'s label', () => {
    const label = 'Speagle J. S., Steinhardt C. L., Capak P. L., Silverman J. D., 2014, ApJS, 214, 15 at z = 0.30 (log SFR = ...; Kroupa IMF in the paper)';
    expect(shortCitation(label)).toBe('Speagle et al. 2014');
    expect(splitReference(label)).toEqual({ citation: 'Speagle J. S., Steinhardt C. L., Capak P. L., Silverman J. D., 2014, ApJS, 214, 15', z: '0.30', note: 'log SFR = ...; Kroupa IMF in the paper' });
    expect(shortCitation('Reference main sequence (converted to this IMF)')).toBe('Reference main sequence');
  });

  it('does not repeat a unit the label already carries', () => {
    expect(axisTitle({ label: 'log M* [M☉]', unit: 'log(solMass)' })).toBe('log M* [M☉]');
    expect(axisTitle({ label: 'A_V', unit: 'mag' })).toBe('A_V [mag]');
  });
});
