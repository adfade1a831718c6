/**
 * Errors as values with context. Every layer reports what went wrong as a
 * `Problem` naming the file, row and column (or config field); only the CLI prints them.
 */

export type Severity = 'error' | 'warning';

export interface Problem {
  severity: Severity;
  message: string;
  /** Input file, relative to the bundle folder where possible. */
  file?: string;
  /** 1-based data row (header excluded) within the file. */
  row?: number;
  /** Column name as it appears in the user's file. */
  column?: string;
  /** Dotted path of a release.json field, e.g. `parameters[2].unit`. */
  field?: string;
  /** Object id the problem concerns. */
  object?: string;
  expected?: string;
  got?: string;
}

/** An exception that carries one or more problems; thrown only where a step cannot go on. */
export class PosterityError extends Error {
  readonly problems: Problem[];
  constructor(problems: Problem[] | Problem) {
    const list = Array.isArray(problems) ? problems : [problems];
    super(list.map(formatProblem).join('\n'));
    this.name = 'PosterityError';
    this.problems = list;
  }
}

export function problem(p: Omit<Problem, 'severity'> & { severity?: Severity }): Problem {
  return { severity: 'error', ...p };
}

/** One readable line: `objects.csv, row 12, column "ra": expected a number in [0, 360), got "abc"`. */
export function formatProblem(p: Problem): string {
  const where: string[] = [];
  if (p.file) where.push(p.file);
  if (p.field) where.push(`field "${p.field}"`);
  if (p.row !== undefined) where.push(`row ${p.row}`);
  if (p.column) where.push(`column "${p.column}"`);
  if (p.object !== undefined) where.push(`object "${p.object}"`);
  let text = p.message;
  if (p.expected !== undefined) text += `: expected ${p.expected}`;
  if (p.got !== undefined) text += `${p.expected !== undefined ? ',' : ':'} got ${p.got}`;
  return (where.length ? where.join(', ') + ': ' : '') + text;
}
