/**
 * Reference checks against command-line tools from Debian packages (fitsverify, xmllint).
 * Tests that need one skip with a message when it is missing, except under CI=true, where
 * they always run (and fail if the tool is absent).
 */
import { spawnSync } from 'node:child_process';
import { describe } from 'vitest';

const available = new Map<string, boolean>();

/** True when `name` is an executable on PATH. */
export function hasTool(name: string): boolean {
  const known = available.get(name);
  if (known !== undefined) return known;
  const r = spawnSync('sh', ['-c', `command -v ${JSON.stringify(name)}`], { encoding: 'utf8' });
  const ok = r.status === 0 && r.stdout.trim() !== '';
  available.set(name, ok);
  return ok;
}

/** Whether a test needing `tools` runs: always under CI=true, else only when all are present. */
export function shouldRunWithTools(tools: string[]): boolean {
  if (process.env.CI === 'true') return true;
  return tools.every(hasTool);
}

/** `describe` that skips (saying why) when a tool is missing, and never skips under CI=true. */
export function describeWithTools(name: string, tools: string[], fn: () => void): void {
  const run = shouldRunWithTools(tools);
  if (!run) {
    const missing = tools.filter((t) => !hasTool(t));
    console.warn(`[skip] "${name}": needs ${missing.join(', ')} on PATH (set CI=true to require it)`);
  }
  describe.skipIf(!run)(name, fn);
}

/** Runs a tool and returns its exit status and output. */
export function runTool(name: string, args: string[], input?: string): { status: number | null; stdout: string; stderr: string } {
  const r = spawnSync(name, args, { encoding: 'utf8', input, maxBuffer: 64 * 1024 * 1024, timeout: 120_000 });
  if (r.error) throw r.error;
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}
