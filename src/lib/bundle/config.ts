/**
 * Read and validate `release.json`. Every problem names the file and the field.
 */
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { z } from 'zod';
import { Release, type ReleaseConfig } from './schema.ts';
import { PosterityError, type Problem } from '../core/problems.ts';

export const CONFIG_FILE = 'release.json';

function fieldPath(path: PropertyKey[]): string {
  let s = '';
  for (const p of path) {
    if (typeof p === 'number') s += `[${p}]`;
    else s += (s ? '.' : '') + String(p);
  }
  return s || '(top level)';
}

/** zod issues as problems naming each field. */
export function issuesToProblems(issues: z.core.$ZodIssue[], file: string): Problem[] {
  return issues.map((iss) => {
    const field = fieldPath(iss.path);
    let message = iss.message;
    if (iss.code === 'invalid_type' && /received undefined/.test(iss.message)) message = 'required field is missing';
    if (iss.code === 'unrecognized_keys') message = `unknown field(s): ${(iss as { keys: string[] }).keys.join(', ')}`;
    return { severity: 'error', file, field, message };
  });
}

/** Parse a release.json text; returns the config or the problems. */
export function parseConfig(text: string, file = CONFIG_FILE): { config?: ReleaseConfig; problems: Problem[] } {
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (e) {
    const m = /position (\d+)/.exec((e as Error).message);
    let where = '';
    if (m) {
      const pos = Number(m[1]);
      const before = text.slice(0, pos);
      const line = before.split('\n').length;
      where = ` at line ${line}`;
    }
    return { problems: [{ severity: 'error', file, message: `not valid JSON${where}: ${(e as Error).message}` }] };
  }
  const r = Release.safeParse(json);
  if (!r.success) return { problems: issuesToProblems(r.error.issues, file) };
  const problems = semanticChecks(r.data, file);
  return { config: problems.some((p) => p.severity === 'error') ? undefined : r.data, problems };
}

/** Checks zod cannot express: references between fields. */
function semanticChecks(c: ReleaseConfig, file: string): Problem[] {
  const out: Problem[] = [];
  const names = new Set<string>();
  c.parameters.forEach((p, i) => {
    if (names.has(p.name)) out.push({ severity: 'error', file, field: `parameters[${i}].name`, message: 'duplicate parameter name', got: p.name });
    names.add(p.name);
    if (p.prior?.kind === 'uniform' && !(p.prior.max > p.prior.min))
      out.push({ severity: 'error', file, field: `parameters[${i}].prior`, message: 'uniform prior needs max > min' });
  });
  const rel = new Set<string>();
  c.relations.forEach((r, i) => {
    if (rel.has(r.name)) out.push({ severity: 'error', file, field: `relations[${i}].name`, message: 'duplicate relation name', got: r.name });
    rel.add(r.name);
    for (const k of ['x', 'y'] as const)
      if (!names.has(r[k]))
        out.push({ severity: 'error', file, field: `relations[${i}].${k}`, message: 'not a declared parameter', expected: [...names].join(', '), got: r[k] });
    for (let j = 1; j < r.zBins.length; j++)
      if (!(r.zBins[j] > r.zBins[j - 1])) out.push({ severity: 'error', file, field: `relations[${i}].zBins`, message: 'bin edges must increase' });
  });
  const roles = c.parameters.map((p) => p.role);
  if (!roles.includes('log_mass') || !roles.includes('log_sfr'))
    out.push({
      severity: 'warning',
      file,
      field: 'parameters',
      message: 'no parameter has role log_mass and log_sfr; populations (star-forming or quiescent) cannot be assigned',
    });
  if (c.cosmology.Ode0 !== undefined && c.cosmology.Ode0 < 0)
    out.push({ severity: 'error', file, field: 'cosmology.Ode0', message: 'must not be negative', got: String(c.cosmology.Ode0) });
  return out;
}

/** Read `<dir>/release.json`; throws PosterityError with every problem found. */
export async function readConfig(dir: string): Promise<{ config: ReleaseConfig; warnings: Problem[]; text: string }> {
  let text: string;
  try {
    text = await readFile(join(dir, CONFIG_FILE), 'utf8');
  } catch {
    throw new PosterityError({ severity: 'error', file: CONFIG_FILE, message: `no ${CONFIG_FILE} in the bundle folder ${dir}` });
  }
  const { config, problems } = parseConfig(text);
  if (!config) throw new PosterityError(problems);
  return { config, warnings: problems, text };
}
