/**
 * The effective-sample-size histogram: bins of equal width in log10(ESS) (evidence.ts,
 * logEdges), drawn on a logarithmic axis with the low-ESS threshold still marked (quality.ts,
 * essSpec). With equal widths in the plotted coordinate, bar heights compare fairly (common
 * practice for histograms: equal bins, or heights as densities).
 */
import { describe, expect, it } from 'vitest';
import { ESS_BINS_PER_DECADE, logEdges } from '../../src/lib/pipeline/evidence.ts';
import { essSpec } from '../../src/lib/charts/quality.ts';
import type { QualityContent } from '../../src/lib/pipeline/content.ts';
import { renderSvg } from '../../src/lib/charts/render.ts';

describe('logEdges', () => {
  it('equal widths in log10, five to a decade, on the grid 10^(k/5)', () => {
    const e = logEdges([3.2, 480, 4100, NaN, 0, -1], ESS_BINS_PER_DECADE, 50);
    const w = e.slice(1).map((x, i) => Math.log10(x) - Math.log10(e[i]!));
    for (const d of w) expect(d).toBeCloseTo(0.2, 5);
    // 3.2 lies in [10^0.4, 10^0.6) = [2.51, 3.98); 4100 in [10^3.6, 10^3.8) = [3981, 6310)
    expect(e[0]).toBe(2.51189);
    expect(e[e.length - 1]).toBe(6309.57);
    expect(e).toHaveLength(18);
  });

  it('covers the threshold even when every value lies above it', () => {
    const e = logEdges([800, 900], 5, 50);
    expect(e[0]).toBeLessThanOrEqual(50);
    expect(e[e.length - 1]).toBeGreaterThan(900);
  });

  it('an edge value opens its bin; one value still gets one bin', () => {
    expect(logEdges([100], 5)).toEqual([100, 158.489]);
    expect(logEdges([], 5)).toEqual([1, 1.58489]);
  });
});

describe('essSpec', () => {
  const q = { essHist: { edges: logEdges([5, 60, 700], 5, 50), counts: [] as number[] } } as unknown as QualityContent;
  q.essHist.counts = q.essHist.edges.slice(1).map((_, i) => i % 3);

  it('draws the bins on a logarithmic x axis, with the threshold rule', async () => {
    const spec = essSpec(q, 50) as unknown as { layer: { mark: { type: string }; encoding: { x: { scale?: { type?: string } } }; data: { values: { lo: number }[] } }[] };
    expect(spec.layer[0]!.encoding.x.scale?.type).toBe('log');
    const rule = spec.layer.find((l) => l.mark.type === 'rule')!;
    expect(rule.data.values[0]!.lo).toBe(50);
    const svg = await renderSvg(spec as never);
    expect(svg).toContain('threshold');
    // the x axis is drawn, with its title (a rule layer with axis: null once removed it)
    expect(svg).toContain('Effective sample size (logarithmic axis)');
  });
});
