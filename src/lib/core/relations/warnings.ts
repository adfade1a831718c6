/**
 * Plain-language warnings from sampler diagnostics, with the published thresholds.
 */
import type { ChainDiagnostics } from './diagnostics.ts';

const NAMES = ['a', 'b', 's', 'mu', 'tau', 'p', 'c', 'w'];

/**
 * Warnings when rank-normalised split R-hat exceeds `rhatMax` (default 1.1), when an ESS is
 * below 100, or when the ensemble's acceptance fraction is outside [0.1, 0.8]
 * (Foreman-Mackey et al. 2013 suggest roughly 0.2 to 0.5 as healthy). Vehtari et al. (2021)
 * recommend R-hat < 1.01 for a few long independent chains; ensemble walkers are many short,
 * interacting chains whose converged R-hat sits near 1 + 1/(2 x effective draws per half-walker),
 * so the screen here is the classic 1.1 (Gelman et al. 2013, BDA3, §11.4) and ESS is the main check.
 */
export function convergenceWarnings(
  diag: ChainDiagnostics,
  acceptance: number,
  names: readonly string[] = NAMES,
  rhatMax = 1.1,
): string[] {
  const out: string[] = [];
  diag.rhat.forEach((r, i) => {
    if (!(r < rhatMax)) out.push(`split R-hat of ${names[i] ?? `parameter ${i}`} is ${r.toFixed(3)} (> ${rhatMax}): the walkers may not have converged`);
  });
  diag.ess.forEach((e, i) => {
    if (!(e >= 100)) out.push(`effective sample size of ${names[i] ?? `parameter ${i}`} is ${e.toFixed(0)} (< 100): run more steps`);
  });
  if (!(acceptance >= 0.1 && acceptance <= 0.8)) out.push(`acceptance fraction ${acceptance.toFixed(2)} is outside [0.1, 0.8]`);
  return out;
}
