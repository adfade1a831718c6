import { describe, expect, it } from 'vitest';
import type { MassFunctionContent } from '../../src/lib/pipeline/content.ts';
import { massFunctionSpec } from '../../src/lib/charts/massfunction.ts';
import { renderSvg } from '../../src/lib/charts/render.ts';

const bin = (truth: boolean): MassFunctionContent['bins'][number] => ({
  zLo: 0.5,
  zHi: 1,
  completenessLogM: 9,
  points: [8.5, 9.5, 10.5].map((logM, k) => ({ logM, phi: 10 ** (-2 - k), phiErr: 10 ** (-2.5 - k), bootLo: null, bootHi: null, n: 10 })),
  schechter: { phiStar: { median: 1e-3, lo: 8e-4, hi: 1.2e-3 }, logMStar: { median: 10.8, lo: 10.7, hi: 10.9 }, alpha: { median: -1.3, lo: -1.4, hi: -1.2 } },
  ...(truth ? { truth: { phiStar: 1.1e-3, logMStar: 10.76, alpha: -1.37 } } : {}),
});
const mf = (truth: boolean): MassFunctionContent => ({ bins: [bin(truth)], areaDeg2: 1, notes: [] });
type Layer = { name?: string; data: { values: { x: number }[] } };

describe('mass function spec', () => {
  it('draws the true Schechter function only when the bin has one', async () => {
    const names = (m: MassFunctionContent) => (massFunctionSpec(m) as unknown as { layer: Layer[] }).layer.map((l) => l.name);
    expect(names(mf(false))).not.toContain('truth');
    expect(names(mf(true))).toContain('truth');
    expect(await renderSvg(massFunctionSpec(mf(true)))).toContain('true functions of the mock');
  });

  it('draws points below the completeness limit as open symbols', () => {
    const layers = (massFunctionSpec(mf(false)) as unknown as { layer: Layer[] }).layer;
    const open = layers.find((l) => l.name === 'incomplete')!;
    expect(open.data.values.map((p) => p.x)).toEqual([8.5]);
  });
});
