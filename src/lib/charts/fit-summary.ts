/**
 * Words and numbers for the fit tables of a relation page: a method's sampler diagnostics
 * reduced to the few numbers a reader checks first, and, for mocks, how far each method's
 * estimate lies from the generator's truth in units of its own 68% half-width.
 * Pure presentation of numbers the pipeline computed; no statistics are redone here.
 */
import type { Estimate, MethodFit } from '../pipeline/content.ts';

/** Split R-hat above this suggests the walkers have not converged (Gelman et al. 2013, BDA3 §11.4). */
export const RHAT_WARN = 1.1;

export interface DiagnosticSummary {
  /** Largest split R-hat over the parameters, or null when the method has none (e.g. least squares). */
  maxRhat: number | null;
  /** Smallest effective sample size over the parameters. */
  minEss: number | null;
  /** Largest integrated autocorrelation time over the parameters, in steps. */
  maxTau: number | null;
  acceptance: number | null;
  /** Hierarchical fits: mean effective number of draws per galaxy after reweighting. */
  meanEffectiveDraws: number | null;
  /** Hierarchical fits: galaxies whose reweighted draws are too few to trust. */
  fewEffectiveDraws: number | null;
  drawsPerObject: number | null;
  sampler: string | null;
  converged: boolean | null;
}

const values = (v: number | number[] | string | undefined): number[] =>
  typeof v === 'number' ? [v] : Array.isArray(v) ? v.filter((x) => Number.isFinite(x)) : [];

function pick(diag: MethodFit['diagnostics'], test: (key: string) => boolean, reduce: (xs: number[]) => number): number | null {
  const xs = Object.keys(diag)
    .filter(test)
    .flatMap((k) => values(diag[k]));
  return xs.length ? reduce(xs) : null;
}

export function summariseDiagnostics(f: MethodFit): DiagnosticSummary {
  const d = f.diagnostics;
  const maxRhat = pick(d, (k) => /rhat/i.test(k), (xs) => Math.max(...xs));
  const minEss = pick(d, (k) => /^ess/i.test(k), (xs) => Math.min(...xs));
  const maxTau = pick(d, (k) => /^tau$|autocorr/i.test(k), (xs) => Math.max(...xs));
  const one = (k: string): number | null => (typeof d[k] === 'number' && Number.isFinite(d[k]) ? (d[k] as number) : null);
  const nW = one('nWalkers');
  const nS = one('nSteps');
  const burn = one('burn');
  return {
    maxRhat,
    minEss,
    maxTau,
    acceptance: one('acceptance'),
    meanEffectiveDraws: one('meanEffectiveDraws'),
    fewEffectiveDraws: one('objectsWithFewEffectiveDraws'),
    drawsPerObject: one('drawsPerObject'),
    sampler: nW !== null && nS !== null ? `${nW} walkers × ${nS} steps${burn !== null ? `, first ${burn} discarded` : ''}` : null,
    converged: maxRhat === null ? null : maxRhat <= RHAT_WARN,
  };
}

/** (estimate − truth) over the estimate's 68% half-width; null when the interval has no width. */
export function offsetInWidths(e: Estimate, truth: number): number | null {
  const half = (e.hi - e.lo) / 2;
  if (!(half > 0) || !Number.isFinite(e.median) || !Number.isFinite(truth)) return null;
  return (e.median - truth) / half;
}

export function truthOffsets(f: MethodFit, truth: { a: number; b: number; s: number }): { a: number | null; b: number | null; s: number | null } {
  return { a: offsetInWidths(f.a, truth.a), b: offsetInWidths(f.b, truth.b), s: offsetInWidths(f.s, truth.s) };
}
