import { describe, expect, it } from 'vitest';
import { describeFlags, FLAG_INFO, FLAGS, hasFlag } from '../../src/lib/core/flags.ts';

describe('flags bitmask', () => {
  it('has the documented bit values, each a distinct power of two', () => {
    expect(FLAGS).toEqual({ LOW_ESS: 1, POOR_FIT: 2, PRIOR_EDGE: 4, MULTIMODAL: 8, RELATION_OUTLIER: 16, SUMMARIES_ONLY: 32 });
    expect(FLAG_INFO.map((f) => f.bit)).toEqual([1, 2, 4, 8, 16, 32]);
    for (const f of FLAG_INFO) expect(FLAGS[f.name]).toBe(f.bit);
    expect(Object.isFrozen(FLAGS)).toBe(true);
  });

  it('explains every flag in one sentence, with the threshold when given', () => {
    for (const f of FLAG_INFO) {
      const text = f.explain('0.25');
      expect(text).toMatch(/^[A-Z].*\.$/);
      expect(text.split(/\.\s/).length).toBe(1);
      if (f.name !== 'SUMMARIES_ONLY') expect(text).toContain('0.25');
      expect(f.explain()).not.toContain('undefined');
    }
  });

  it('describes a mask in bit order and reports unknown bits', () => {
    expect(describeFlags(0)).toEqual([]);
    expect(describeFlags(FLAGS.MULTIMODAL | FLAGS.LOW_ESS)).toEqual(['Low effective sample size', 'Multimodal posterior']);
    expect(describeFlags(64 | FLAGS.POOR_FIT)).toEqual(['Poor fit', 'unknown flag bit 64']);
    expect(describeFlags(2 ** 31)).toEqual(['unknown flag bit 2147483648']);
    expect(hasFlag(5, FLAGS.PRIOR_EDGE)).toBe(true);
    expect(hasFlag(5, FLAGS.POOR_FIT)).toBe(false);
  });
});
