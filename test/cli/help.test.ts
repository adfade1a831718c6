/**
 * Command-line conventions of `posterity` (scripts/cli.ts), by spawning the CLI as a user would:
 * `--help` and `-h` print the usage on stdout and exit 0 (for the program and for every verb,
 * without starting any work), `--version` prints the package version, and usage errors go to
 * stderr with the verb's usage and exit code 2 (common practice for command-line programs).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawn } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PROJECT_ROOT } from '../../src/lib/release/build.ts';

interface Run { status: number | null; stdout: string; stderr: string }

function posterity(args: string[], cwd = PROJECT_ROOT): Promise<Run> {
  return new Promise((ok, fail) => {
    const child = spawn(process.execPath, [join(PROJECT_ROOT, 'scripts', 'posterity.mjs'), ...args], { cwd, stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '', stderr = '';
    child.stdout.on('data', (b) => (stdout += b));
    child.stderr.on('data', (b) => (stderr += b));
    child.on('error', fail);
    child.on('close', (status) => ok({ status, stdout, stderr }));
  });
}

/** Runs every command line, two at a time (two cores). */
async function runAll(lines: string[][], cwd?: string): Promise<Map<string, Run>> {
  const out = new Map<string, Run>();
  for (let i = 0; i < lines.length; i += 2)
    await Promise.all(lines.slice(i, i + 2).map(async (l) => out.set(l.join(' '), await posterity(l, cwd))));
  return out;
}

const VERBS = ['check', 'build', 'demo', 'serve', 'summarise', 'merge', 'cluster-script'];
const VERSION = (JSON.parse(readFileSync(join(PROJECT_ROOT, 'package.json'), 'utf8')) as { version: string }).version;

let tmp: string;
let runs: Map<string, Run>;

/** Usage errors, each with the message it must give. */
const USAGE_ERRORS: [string[], RegExp, string | null][] = [
  [[], /no command given/, null],
  [['frobnicate'], /unknown command "frobnicate"/, null],
  [['--frob'], /unknown option --frob/, null],
  [['check'], /missing <bundle-folder>/, 'check'],
  [['check', 'a', 'b'], /unexpected argument "b"/, 'check'],
  [['build', 'bundle'], /--out <dir> is required/, 'build'],
  [['build', 'bundle', '--out'], /--out needs a value/, 'build'],
  [['build', 'bundle', '--out', 'x', '--colour', 'red'], /unknown option --colour/, 'build'],
  [['build', 'bundle', '--out', 'x', '-q'], /unknown option -q/, 'build'],
  [['build', 'bundle', '--out', 'x', '--quiet=yes'], /--quiet takes no value/, 'build'],
  [['demo', 'extra'], /unexpected argument "extra"/, 'demo'],
  [['serve', 'dist', '--port', 'http'], /--port expects a whole number from 0 to 65535, got "http"/, 'serve'],
  [['summarise', 'bundle', '--of', '3', '--out', 'p'], /--part I --of N --out/, 'summarise'],
  [['merge'], /missing <partials-dir>/, 'merge'],
  [['cluster-script', 'bundle', '--parts', 'many'], /--parts expects a whole number/, 'cluster-script'],
  [['help', 'frobnicate'], /unknown command "frobnicate"/, 'help'],
];

beforeAll(async () => {
  tmp = mkdtempSync(join(tmpdir(), 'posterity-help-'));
  const lines: string[][] = [['--help'], ['-h'], ['help'], ['--version']];
  for (const v of VERBS) lines.push([v, '--help'], [v, '-h'], ['help', v]);
  // help wins over the rest of the line: nothing is built, generated or written
  lines.push(['build', join(tmp, 'no-bundle'), '--out', join(tmp, 'site'), '--help']);
  lines.push(['cluster-script', join(tmp, 'no-bundle'), '--parts', '2', '--out', join(tmp, 'run.sh'), '-h']);
  for (const [args] of USAGE_ERRORS) lines.push(args);
  runs = await runAll(lines, tmp);
}, 120_000);
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

const get = (args: string[]) => runs.get(args.join(' '))!;

describe('posterity --help, -h and help', () => {
  it.each([['--help'], ['-h'], ['help']])('%s lists every command with one sentence, on stdout, exit 0', (flag) => {
    const r = get([flag]);
    expect(r.status).toBe(0);
    expect(r.stderr).toBe('');
    expect(r.stdout).toMatch(/^usage: posterity <command>/);
    for (const v of [...VERBS, 'help']) expect(r.stdout, v).toMatch(new RegExp(`^  ${v} +[A-Z][^\\n]+\\.$`, 'm'));
    expect(r.stdout).toContain('--version');
  });

  it('the three spellings print the same text', () => {
    expect(get(['-h']).stdout).toBe(get(['--help']).stdout);
    expect(get(['help']).stdout).toBe(get(['--help']).stdout);
  });
});

describe('posterity --version', () => {
  it('prints the version of package.json, exit 0', () => {
    const r = get(['--version']);
    expect(r.status).toBe(0);
    expect(r.stdout).toBe(`posterity ${VERSION}\n`);
    expect(r.stderr).toBe('');
  });
});

describe('posterity <command> --help', () => {
  it.each(VERBS)('%s: --help, -h and help <command> print its usage and options on stdout, exit 0', (v) => {
    for (const args of [[v, '--help'], [v, '-h'], ['help', v]]) {
      const r = get(args);
      expect(r.status, args.join(' ')).toBe(0);
      expect(r.stderr, args.join(' ')).toBe('');
      expect(r.stdout, args.join(' ')).toMatch(new RegExp(`^usage: posterity ${v}\\b`));
      expect(r.stdout).toMatch(/^options:$/m);
      expect(r.stdout).toMatch(/^ {2}--help +show this help/m);
      expect(r.stdout).toBe(get([v, '--help']).stdout);
    }
  });

  it('help wins over the rest of the line and starts no work', () => {
    expect(get(['build', join(tmp, 'no-bundle'), '--out', join(tmp, 'site'), '--help']).status).toBe(0);
    expect(get(['cluster-script', join(tmp, 'no-bundle'), '--parts', '2', '--out', join(tmp, 'run.sh'), '-h']).status).toBe(0);
    expect(existsSync(join(tmp, 'site'))).toBe(false);
    expect(existsSync(join(tmp, 'run.sh'))).toBe(false);
    // demo --help ran in tmp: no demo bundle was generated anywhere
    expect(existsSync(join(tmp, 'demo-bundle'))).toBe(false);
  });
});

describe('usage errors', () => {
  it.each(USAGE_ERRORS)('%j: the message and the usage on stderr, nothing on stdout, exit 2', (args, message, verb) => {
    const r = get(args);
    expect(r.status).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toMatch(message);
    expect(r.stderr).toMatch(verb ? new RegExp(`^usage: posterity ${verb}\\b`, 'm') : /^usage: posterity <command>/m);
  });
});
