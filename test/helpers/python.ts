/**
 * Reference checks against the system Python's scientific stack (/usr/bin/python3, not a
 * user-level interpreter). Tests that need it skip with a message when it is missing,
 * except under CI=true, where they always run (and fail if Python or a module is absent).
 */
import { spawnSync } from 'node:child_process';
import { describe } from 'vitest';

export const PYTHON = '/usr/bin/python3';

const available = new Map<string, boolean>();

/** True when /usr/bin/python3 exists and can import every module in `modules`. */
export function hasPython(modules: string[]): boolean {
  const key = modules.join(',');
  const known = available.get(key);
  if (known !== undefined) return known;
  const code = modules.map((m) => `import ${m}`).join('\n') || 'pass';
  const r = spawnSync(PYTHON, ['-c', code], { encoding: 'utf8', timeout: 60_000 });
  const ok = r.status === 0;
  available.set(key, ok);
  return ok;
}

/**
 * Runs `code` with `input` as JSON on stdin and parses stdout as JSON. `sys` and `json` are
 * imported for the snippet. Values must be finite (JSON has no NaN or Infinity).
 */
export function runPython(code: string, input?: unknown): unknown {
  const r = spawnSync(PYTHON, ['-c', `import sys, json\n${code}`], {
    input: JSON.stringify(input ?? null),
    encoding: 'utf8',
    maxBuffer: 256 * 1024 * 1024,
    timeout: 120_000,
  });
  if (r.error) throw r.error;
  if (r.status !== 0) {
    throw new Error(`${PYTHON} exited with status ${r.status}:\n${r.stderr}`);
  }
  try {
    return JSON.parse(r.stdout);
  } catch {
    throw new Error(`${PYTHON} printed output that is not JSON:\n${r.stdout.slice(0, 2000)}`);
  }
}

/** `describe` that skips (saying why) when the modules are missing, and never skips under CI=true. */
export function describeWithPython(name: string, modules: string[], fn: () => void): void {
  const ci = process.env.CI === 'true';
  const run = ci || hasPython(modules);
  if (!run) {
    console.warn(`[skip] "${name}": needs ${PYTHON} with ${modules.join(', ')} (set CI=true to require it)`);
  }
  describe.skipIf(!run)(name, fn);
}
