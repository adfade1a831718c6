/**
 * Read and validate `release.json`. Every problem names the file and the field, with what
 * was expected and what was found. When the file is valid JSON but fails the schema, the
 * parts that are needed to check the tables (`tables`, `parameters`) are parsed on their
 * own, so `posterity check` can go on and report the problems of the tables too.
 */
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { z } from 'zod';
import { Parameter, Release, Tables, type ParameterConfig, type ReleaseConfig } from './schema.ts';
import { PosterityError, type Problem } from '../core/problems.ts';
import { parseUnit, UNIT_EXPECTED, unitLabel } from '../io/units.ts';

export const CONFIG_FILE = 'release.json';

function fieldPath(path: PropertyKey[]): string {
  let s = '';
  for (const p of path) {
    if (typeof p === 'number') s += `[${p}]`;
    else s += (s ? '.' : '') + String(p);
  }
  return s || '(top level)';
}

function valueAt(input: unknown, path: PropertyKey[]): { found: boolean; value?: unknown } {
  let v: unknown = input;
  for (const p of path) {
    if (v === null || typeof v !== 'object' || !(p in (v as object))) return { found: false };
    v = (v as Record<PropertyKey, unknown>)[p];
  }
  return { found: true, value: v };
}

/** A short, readable rendering of a JSON value for `got`. */
function describeValue(v: unknown): string {
  if (v === null) return 'null';
  if (Array.isArray(v)) return `an array of ${v.length}`;
  if (typeof v === 'object') return 'an object';
  const s = JSON.stringify(v);
  const text = s.length > 60 ? s.slice(0, 57) + '...' : s;
  return `${typeof v === 'string' ? 'the text' : `the ${typeof v}`} ${text}`;
}

const article = (t: string) => (/^[aeiou]/.test(t) ? `an ${t}` : `a ${t}`);

/** zod issues as problems naming each field; `input` (the parsed JSON) supplies `got`. */
export function issuesToProblems(issues: z.core.$ZodIssue[], file: string, input?: unknown, prefix: PropertyKey[] = []): Problem[] {
  return issues.map((iss): Problem => {
    const path = [...prefix, ...iss.path];
    const field = fieldPath(path);
    const at = input === undefined ? { found: false } : valueAt(input, path);
    const got = at.found ? describeValue(at.value) : undefined;
    const base = { severity: 'error' as const, file, field };
    switch (iss.code) {
      case 'invalid_type':
        if (!at.found && input !== undefined) return { ...base, message: 'required field is missing', expected: article(iss.expected), got: 'nothing' };
        return { ...base, message: 'wrong type', expected: article(iss.expected), got };
      case 'invalid_value':
        return { ...base, message: 'not one of the allowed values', expected: `one of ${iss.values.map((v) => JSON.stringify(v)).join(', ')}`, got };
      case 'unrecognized_keys':
        return { ...base, message: `unknown field${iss.keys.length > 1 ? 's' : ''}: ${iss.keys.join(', ')}`, expected: 'only the fields of the release.json schema', got: iss.keys.map((k) => JSON.stringify(k)).join(', ') };
      case 'invalid_format':
        return { ...base, message: iss.message.startsWith('Invalid') ? 'wrong format' : iss.message, expected: iss.format === 'date' ? 'a date YYYY-MM-DD' : iss.format === 'regex' ? `text matching ${(iss as { pattern?: string }).pattern}` : iss.format, got };
      case 'too_small':
      case 'too_big': {
        const lim = iss.code === 'too_small' ? iss.minimum : iss.maximum;
        const incl = iss.inclusive !== false;
        const what = iss.origin === 'array' ? `at ${iss.code === 'too_small' ? 'least' : 'most'} ${lim} entries` : iss.origin === 'string' ? `at ${iss.code === 'too_small' ? 'least' : 'most'} ${lim} characters` : `a number ${iss.code === 'too_small' ? (incl ? '>=' : '>') : incl ? '<=' : '<'} ${lim}`;
        return { ...base, message: iss.code === 'too_small' ? 'too small' : 'too large', expected: what, got };
      }
      case 'invalid_union':
        return { ...base, message: 'matches none of the allowed forms', expected: iss.message, got };
      default:
        return { ...base, message: iss.message, got };
    }
  });
}

/** 1-based line of a character offset. */
function lineOf(text: string, pos: number): number {
  let line = 1;
  for (let i = 0; i < pos && i < text.length; i++) if (text.charCodeAt(i) === 10) line++;
  return line;
}

/** Where JSON.parse failed, from its message (V8 wording varies between versions). */
function jsonErrorLine(text: string, message: string): number {
  const lc = /\(line (\d+) column \d+\)/.exec(message);
  if (lc) return Number(lc[1]);
  const m = /position (\d+)/.exec(message);
  if (m) return lineOf(text, Number(m[1]));
  // "Unexpected end of JSON input": the text stops early; name its last line.
  return lineOf(text, text.replace(/\s+$/, '').length);
}

export interface ConfigParts {
  /** The full configuration, when release.json is valid. */
  config?: ReleaseConfig;
  /** What could be parsed of the tables and parameters when the whole is not valid. */
  tables?: ReleaseConfig['tables'];
  parameters?: ParameterConfig[];
  problems: Problem[];
}

/** Parse a release.json text; returns the config or the problems (and what parts could be read). */
export function parseConfigParts(text: string, file = CONFIG_FILE): ConfigParts {
  let json: unknown;
  try {
    json = JSON.parse(text.charCodeAt(0) === 0xfeff ? text.slice(1) : text);
  } catch (e) {
    const msg = (e as Error).message;
    const line = jsonErrorLine(text, msg);
    return { problems: [{ severity: 'error', file, message: `not valid JSON at line ${line}`, expected: 'a JSON object', got: msg }] };
  }
  if (json === null || typeof json !== 'object' || Array.isArray(json))
    return { problems: [{ severity: 'error', file, field: '(top level)', message: 'wrong type', expected: 'a JSON object', got: describeValue(json) }] };
  const r = Release.safeParse(json);
  if (r.success) {
    const problems = [...semanticChecks(r.data, file), ...mapParameterUnits(r.data, file)];
    const config = problems.some((p) => p.severity === 'error') ? undefined : r.data;
    return { config, tables: r.data.tables, parameters: r.data.parameters, problems };
  }
  const problems = issuesToProblems(r.error.issues, file, json);
  const obj = json as Record<string, unknown>;
  const tables = Tables.safeParse(obj.tables);
  let parameters: ParameterConfig[] | undefined;
  if (Array.isArray(obj.parameters)) {
    parameters = [];
    obj.parameters.forEach((p, i) => {
      const pr = Parameter.safeParse(p);
      if (!pr.success) return;
      problems.push(...unitProblems(pr.data, i, file));
      parameters!.push(pr.data);
    });
  }
  return { tables: tables.success ? tables.data : undefined, parameters, problems };
}

/** Parse a release.json text; returns the config or the problems. */
export function parseConfig(text: string, file = CONFIG_FILE): { config?: ReleaseConfig; problems: Problem[] } {
  const { config, problems } = parseConfigParts(text, file);
  return { config, problems };
}

/**
 * Each parameter's free-text `unit` mapped to its canonical form (src/lib/io/units.ts), in
 * place, so every download and page writes the same unit; a unit that cannot be mapped is an
 * error naming its field.
 */
function mapParameterUnits(c: ReleaseConfig, file: string): Problem[] {
  return c.parameters.flatMap((p, i) => unitProblems(p, i, file));
}

/** Maps one parameter's unit in place, or returns the problem. */
function unitProblems(p: ParameterConfig, i: number, file: string): Problem[] {
  const r = parseUnit(p.unit);
  if (r.ok) {
    p.unit = unitLabel(r.unit);
    return [];
  }
  return [{ severity: 'error', file, field: `parameters[${i}].unit`, message: `unit cannot be mapped to a VOUnits and FITS unit (${r.message})`, expected: UNIT_EXPECTED, got: JSON.stringify(p.unit) }];
}

/** Checks zod cannot express: references between fields. */
function semanticChecks(c: ReleaseConfig, file: string): Problem[] {
  const out: Problem[] = [];
  const names = new Set<string>();
  c.parameters.forEach((p, i) => {
    if (names.has(p.name)) out.push({ severity: 'error', file, field: `parameters[${i}].name`, message: 'duplicate parameter name', expected: 'a name used once', got: JSON.stringify(p.name) });
    names.add(p.name);
    if (p.prior?.kind === 'uniform' && !(p.prior.max > p.prior.min))
      out.push({ severity: 'error', file, field: `parameters[${i}].prior`, message: 'empty uniform prior', expected: 'max > min', got: `min ${p.prior.min}, max ${p.prior.max}` });
  });
  const columns = new Map<string, number>();
  c.parameters.forEach((p, i) => {
    const col = p.column ?? p.name;
    const j = columns.get(col);
    if (j !== undefined) out.push({ severity: 'error', file, field: `parameters[${i}].column`, message: `two parameters read the same samples column (also parameters[${j}])`, expected: 'one column per parameter', got: JSON.stringify(col) });
    else columns.set(col, i);
  });
  const rel = new Set<string>();
  c.relations.forEach((r, i) => {
    if (rel.has(r.name)) out.push({ severity: 'error', file, field: `relations[${i}].name`, message: 'duplicate relation name', expected: 'a name used once', got: JSON.stringify(r.name) });
    rel.add(r.name);
    for (const k of ['x', 'y'] as const)
      if (!names.has(r[k]))
        out.push({ severity: 'error', file, field: `relations[${i}].${k}`, message: 'not a declared parameter', expected: [...names].join(', '), got: JSON.stringify(r[k]) });
    for (let j = 1; j < r.zBins.length; j++)
      if (!(r.zBins[j] > r.zBins[j - 1])) {
        out.push({ severity: 'error', file, field: `relations[${i}].zBins`, message: 'bin edges must increase', expected: `an edge above ${r.zBins[j - 1]}`, got: String(r.zBins[j]) });
        break;
      }
  });
  const roles = c.parameters.map((p) => p.role);
  if (!roles.includes('log_mass') || !roles.includes('log_sfr'))
    out.push({
      severity: 'warning',
      file,
      field: 'parameters',
      message: 'no parameter has role log_mass and log_sfr; populations (star-forming or quiescent) cannot be assigned',
      expected: 'one parameter with role "log_mass" and one with role "log_sfr"',
      got: `roles ${roles.join(', ')}`,
    });
  if (c.cosmology.Ode0 !== undefined && c.cosmology.Ode0 < 0)
    out.push({ severity: 'error', file, field: 'cosmology.Ode0', message: 'must not be negative', expected: 'a number >= 0', got: String(c.cosmology.Ode0) });
  return out;
}

/** Read the text of `<dir>/release.json`, or a problem saying it is not there. */
export async function readConfigText(dir: string): Promise<{ text?: string; problem?: Problem }> {
  try {
    return { text: await readFile(join(dir, CONFIG_FILE), 'utf8') };
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    return {
      problem: {
        severity: 'error',
        file: CONFIG_FILE,
        message: code === 'ENOENT' ? `no ${CONFIG_FILE} in the bundle folder ${dir}` : `cannot read ${CONFIG_FILE}`,
        expected: `a file ${join(dir, CONFIG_FILE)}`,
        got: code === 'ENOENT' ? 'no such file' : String((e as Error).message),
      },
    };
  }
}

/** Read `<dir>/release.json`; throws PosterityError with every problem found. */
export async function readConfig(dir: string): Promise<{ config: ReleaseConfig; warnings: Problem[]; text: string }> {
  const { text, problem } = await readConfigText(dir);
  if (text === undefined) throw new PosterityError(problem!);
  const { config, problems } = parseConfig(text);
  if (!config) throw new PosterityError(problems);
  return { config, warnings: problems, text };
}
