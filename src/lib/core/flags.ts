/**
 * The catalogue's `flags` bitmask: one bit per quality warning, documented in words for the
 * object pages and the column dictionary.
 */

export const FLAGS = Object.freeze({
  LOW_ESS: 1,
  POOR_FIT: 2,
  PRIOR_EDGE: 4,
  MULTIMODAL: 8,
  RELATION_OUTLIER: 16,
  SUMMARIES_ONLY: 32,
} as const);

export type FlagName = keyof typeof FLAGS;

export interface FlagInfo {
  bit: number;
  name: FlagName;
  /** Short label for tables and badges. */
  label: string;
  /** One sentence in words; `threshold` is the release's threshold as display text, e.g. "50". */
  explain: (threshold?: string) => string;
}

const th = (t: string | undefined, fallback: string): string => t ?? fallback;

export const FLAG_INFO: readonly FlagInfo[] = Object.freeze([
  {
    bit: FLAGS.LOW_ESS,
    name: 'LOW_ESS',
    label: 'Low effective sample size',
    explain: (t) =>
      `The posterior is represented by fewer effectively independent draws than ${th(t, 'the release threshold')}, so its summaries are noisy.`,
  },
  {
    bit: FLAGS.POOR_FIT,
    name: 'POOR_FIT',
    label: 'Poor fit',
    explain: (t) =>
      `The best-fitting model's chi-square has a probability below ${th(t, 'the release threshold')} of arising by chance, so the model may not describe this galaxy.`,
  },
  {
    bit: FLAGS.PRIOR_EDGE,
    name: 'PRIOR_EDGE',
    label: 'Posterior at a prior bound',
    explain: (t) =>
      `More than ${th(t, 'the release threshold')} of the posterior lies next to the edge of the allowed parameter range, so the data may want values the prior excludes.`,
  },
  {
    bit: FLAGS.MULTIMODAL,
    name: 'MULTIMODAL',
    label: 'Multimodal posterior',
    explain: (t) =>
      `The posterior has more than one separate peak, each holding at least ${th(t, 'the release threshold')} of the probability, so a single value and error bar can mislead.`,
  },
  {
    bit: FLAGS.RELATION_OUTLIER,
    name: 'RELATION_OUTLIER',
    label: 'Outlier from a relation',
    explain: (t) =>
      `The galaxy lies further from a fitted population relation than ${th(t, 'the release threshold')} times the combined intrinsic scatter and its own uncertainty.`,
  },
  {
    bit: FLAGS.SUMMARIES_ONLY,
    name: 'SUMMARIES_ONLY',
    label: 'Summaries only',
    explain: () =>
      'Only percentile summaries were supplied for this galaxy, not posterior draws, so its mean, spread and diagnostics could not be computed from samples.',
  },
]);

/** True when `bit` is set in `mask`. */
export function hasFlag(mask: number, bit: number): boolean {
  return (mask & bit) !== 0;
}

/** Labels of the flags set in `mask`, in bit order; unknown bits are listed as "unknown flag bit N". */
export function describeFlags(mask: number): string[] {
  const out: string[] = [];
  let known = 0;
  for (const f of FLAG_INFO) {
    known |= f.bit;
    if (mask & f.bit) out.push(f.label);
  }
  const rest = (mask & ~known) >>> 0;
  for (let b = 1; b <= rest; b *= 2) {
    if ((rest & b) !== 0) out.push(`unknown flag bit ${b}`);
  }
  return out;
}
