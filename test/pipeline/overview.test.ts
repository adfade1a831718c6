import { describe, expect, it } from 'vitest';
import { siteOverview } from '../../src/lib/pipeline/overview.ts';
import type { ObjectsData } from '../../src/lib/bundle/load.ts';
import type { SummaryTable } from '../../src/lib/pipeline/summarise.ts';

describe('siteOverview', () => {
  // 3x10^5 objects: the largest redshift was once taken as Math.max(...redshifts), which passes
  // every value as an argument and overflowed the stack at 2x10^5
  it('bins the redshifts of 3x10^5 objects, the largest in the last bin', () => {
    const n = 300000;
    const ra = new Float64Array(n), dec = new Float64Array(n), redshift = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      ra[i] = 150 + (i % 1000) * 1e-3;
      dec[i] = 2 + Math.floor(i / 1000) * 1e-3;
      redshift[i] = (i % 500) / 100; // 0 .. 4.99
    }
    redshift[7] = NaN;
    const objects = { n, ra, dec, redshift } as unknown as ObjectsData;
    const o = siteOverview(objects, {} as SummaryTable, [], -1);
    const counts = o.redshiftHist.counts;
    expect(counts.reduce((a, b) => a + b, 0)).toBe(n - 1);
    // bins of width 0.17 (4.99 / 30 to two digits) up to past 4.99
    expect(o.redshiftHist.edges[o.redshiftHist.edges.length - 1]).toBeGreaterThanOrEqual(4.99);
    expect(counts[counts.length - 1]).toBeGreaterThan(0);
  });
});
