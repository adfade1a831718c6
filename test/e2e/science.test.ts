/**
 * The demo is a mock: every galaxy was drawn from stated relations, so the release's science
 * can be checked against what the generator drew (scripts/demo, truth.json).
 * - Relations: the true main sequence at each redshift bin's centre lies inside the
 *   hierarchical fit's 3-sigma (99.7%) interval for intercept, slope and scatter.
 * - Calibration: the planted flaw (log_age widths understated by 1.5) shows 68.27% coverage
 *   near 2 Phi(1/1.5) - 1 = 0.4950 (Gaussian CDF) and is flagged; the others are not.
 * - Mass function: the 1/Vmax points above the completeness limit follow the Schechter
 *   function the generator drew from, within their Poisson errors.
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { mkdirSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { truthForBuild } from '../../scripts/demo/truth.ts';
import { runPipeline } from '../../src/lib/pipeline/run.ts';
import { PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { normalCdf } from '../../src/lib/core/stats/special.ts';
import type { MassFunctionContent, QualityContent, RelationContent } from '../../src/lib/pipeline/content.ts';

const ROOT = join(PROJECT_ROOT, 'test-output', 'science');
const CONTENT = join(ROOT, 'content');
let truth: {
  hyper: { smf: { logPhiStar0: number; dLogPhiStarDz: number; logMstar: number; alpha: number } };
  relations: Record<string, { bins: { a: number; b: number; scatter: number }[] }>;
};

beforeAll(async () => {
  rmSync(ROOT, { recursive: true, force: true });
  mkdirSync(ROOT, { recursive: true });
  // the default demo (2400 galaxies), as `npm run demo` builds it
  const { dir } = await generateDemoBundle(join(ROOT, 'bundle'), {});
  truth = JSON.parse(readFileSync(join(dir, 'truth.json'), 'utf8'));
  await runPipeline(dir, { contentDir: CONTENT, downloadsDir: join(CONTENT, 'downloads'), ...truthForBuild(join(dir, 'truth.json')) });
}, 1_200_000);

const read = <T>(p: string): T => JSON.parse(readFileSync(join(CONTENT, p), 'utf8')) as T;

describe('the demo release recovers what the generator drew', () => {
  it('main sequence: the truth at each bin centre is inside the hierarchical 3-sigma interval', () => {
    const rel = read<RelationContent>('relations/main_sequence.json');
    const t = truth.relations.main_sequence.bins;
    expect(rel.bins.length).toBe(t.length);
    rel.bins.forEach((bin, k) => {
      const h = bin.fits.find((f) => f.method === 'hierarchical');
      expect(h, `bin ${bin.zLo}-${bin.zHi}`).toBeDefined();
      const want = { a: t[k].a, b: t[k].b, s: t[k].scatter };
      for (const q of ['a', 'b', 's'] as const) {
        const e = h![q];
        const half = (e.hi - e.lo) / 2; // 68% half-width; 3 of them ~ the 99.7% interval
        expect(Math.abs(e.median - want[q]), `${q} in ${bin.zLo}-${bin.zHi}: ${e.median} vs ${want[q]} (68% half-width ${half})`).toBeLessThanOrEqual(3 * half);
      }
      expect(bin.truth).toBeDefined();
      expect(bin.fits.map((f) => f.method)).toEqual(expect.arrayContaining(['deconvolved', 'hierarchical', 'naive', 'mixture']));
    });
  });

  it('quality: the understated log_age widths are caught, the other parameters pass', () => {
    const q = read<QualityContent>('quality.json');
    const expected = 2 * normalCdf(1 / 1.5) - 1; // 0.4950
    for (const c of q.calibration) {
      const se = Math.sqrt((0.6827 * (1 - 0.6827)) / c.n);
      if (c.param === 'log_age') {
        expect(Math.abs(c.coverage68 - expected)).toBeLessThan(3 * Math.sqrt((expected * (1 - expected)) / c.n));
        expect(c.flagged).toBe(true);
      } else {
        expect(Math.abs(c.coverage68 - 0.6827), c.param).toBeLessThan(3 * se);
        expect(c.flagged, c.param).toBe(false);
      }
    }
  });

  it('mass function: points above the completeness limit follow the generating Schechter function', () => {
    const mf = read<MassFunctionContent>('massfunction.json');
    const s = truth.hyper.smf;
    const phiTrue = (logM: number, z: number) => {
      const x = 10 ** (logM - s.logMstar);
      return Math.LN10 * 10 ** (s.logPhiStar0 + s.dLogPhiStarDz * z) * x ** (s.alpha + 1) * Math.exp(-x);
    };
    let n = 0, within = 0, chi2 = 0;
    for (const b of mf.bins) {
      if (b.completenessLogM === null) continue;
      const zc = (b.zLo + b.zHi) / 2;
      for (const p of b.points) {
        if (p.logM < b.completenessLogM || p.n < 5) continue;
        const pull = (p.phi - phiTrue(p.logM, zc)) / p.phiErr;
        n++;
        chi2 += pull * pull;
        if (Math.abs(pull) < 3) within++;
      }
    }
    expect(n).toBeGreaterThan(20);
    expect(within / n).toBeGreaterThan(0.9);
    // reduced chi-square of the points against the truth (each bin evaluated at its centre)
    expect(chi2 / n).toBeLessThan(2.5);
  });
});
