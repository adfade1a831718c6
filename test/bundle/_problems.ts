/** Helpers for the loader tests: load a bundle and get every problem it reports. */
import { expect } from 'vitest';
import { join } from 'node:path';
import { loadBundle, type Bundle } from '../../src/lib/bundle/load.ts';
import { PosterityError, formatProblem, type Problem } from '../../src/lib/core/problems.ts';

export const FIXTURES = join(import.meta.dirname, '..', 'fixtures');
export const BAD = join(FIXTURES, 'bad');
export const TINY = join(FIXTURES, 'bundles', 'tiny');

/** The problems of a bundle that fails to load (fails the test if it loads). */
export async function problemsOf(dir: string): Promise<Problem[]> {
  try {
    await loadBundle(dir);
  } catch (e) {
    if (e instanceof PosterityError) return e.problems;
    throw e;
  }
  throw new Error(`${dir} loaded without errors`);
}

export async function load(dir: string): Promise<Bundle> {
  return loadBundle(dir);
}

type Want = Partial<Omit<Problem, 'message'>> & { message?: RegExp | string };

/** Exactly one problem matches every given field (row, column, field compared exactly). */
export function expectProblem(problems: Problem[], want: Want): Problem {
  const { message, ...exact } = want;
  const hits = problems.filter((p) => {
    for (const [k, v] of Object.entries(exact)) if ((p as unknown as Record<string, unknown>)[k] !== v) return false;
    if (message instanceof RegExp) return message.test(p.message);
    if (typeof message === 'string') return p.message === message;
    return true;
  });
  expect(hits.length, `one problem like ${JSON.stringify({ ...want, message: String(message) })} in:\n${problems.map(formatProblem).join('\n')}`).toBe(1);
  const p = hits[0];
  // never just "bad": an error says what was expected and what was found
  if (p.severity === 'error') {
    expect(p.expected, formatProblem(p)).toBeTruthy();
    expect(p.got, formatProblem(p)).toBeTruthy();
  }
  return p;
}

export const errorsOf = (ps: Problem[]) => ps.filter((p) => p.severity === 'error');
