/**
 * The `posterity` command line: argument parsing, progress and exit codes.
 *
 * Conventions: `posterity --help` (or `-h`, `help`) lists every verb with one sentence;
 * `posterity <verb> --help` (or `-h`, `help <verb>`) prints that verb's usage and options on
 * stdout and exits 0 without doing anything else; `posterity --version` prints the version.
 * A usage error (unknown verb or option, a missing or extra argument, a bad option value) is
 * reported on stderr with the verb's usage, exit code 2. Otherwise 0 is success and 1 an
 * input problem (the message names the file, row, column or field). The verbs' work is
 * loaded only when a verb runs, so help and version answer at once.
 */
import { readFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Problem } from '../src/lib/core/problems.ts';
import { type CliArgs, type VerbSpec, UsageError, intFlag, parseVerbArgs, stringFlag, usage, usageLines, verbHelp } from './usage.ts';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..');

const EXIT_CODES = 'Exit codes: 0 done, 1 an input problem (named with its file, row, column or field), 2 a usage error.';

const quiet = { name: 'quiet', value: null, help: 'print only problems, no progress or summary' } as const;

interface Verb extends VerbSpec {
  run: (args: CliArgs) => Promise<number>;
}

const VERBS: Verb[] = [
  {
    name: 'check',
    summary: 'Validate a bundle (release.json and every table it names) and list every problem with its file, row and column, building nothing.',
    usage: ['check <bundle-folder>'],
    positional: [1, 1],
    positionalNames: ['<bundle-folder>'],
    options: [],
    notes: ['Exit codes: 0 the bundle is valid (warnings may be listed), 1 it has errors, 2 a usage error.'],
    run: cmdCheck,
  },
  {
    name: 'build',
    summary: 'Build the release site and its downloads from a bundle, replacing the output folder only once the build is complete.',
    usage: [
      'build <bundle-folder> --out <dir> [--summaries <merged-dir>] [--truth <truth.json>] [--quiet]',
      '    [--previous <earlier-site-or-downloads> [--shift-threshold 2] [--match-radius 1] [--previous-url URL]] [--replace]',
    ],
    positional: [1, 1],
    positionalNames: ['<bundle-folder>'],
    options: [
      { name: 'out', value: '<dir>', help: 'the site folder (required); left as it was if the build fails' },
      { name: 'summaries', value: '<merged-dir>', help: 'use the summaries of posterity merge instead of summarising (docs/cluster.md)' },
      { name: 'truth', value: '<truth.json>', help: "true values of a mock catalogue to show beside the fits (the demo's truth.json)" },
      { name: 'previous', value: '<dir>', help: 'an earlier release of the same survey (its site or downloads folder) to compare with: publishes /changes/ and downloads/changes.json' },
      { name: 'shift-threshold', value: '<sigma>', help: 'with --previous: medians that moved by more than this many combined sigma are listed (default 2)' },
      { name: 'match-radius', value: '<arcsec>', help: 'with --previous: ids not found are matched by position within this radius (default 1)' },
      { name: 'previous-url', value: '<url>', help: "with --previous: the earlier release's address, so object pages link to their earlier page" },
      { name: 'replace', value: null, help: 'allow replacing an output that holds a published version with different content' },
      quiet,
    ],
    notes: [EXIT_CODES],
    run: async (args) => {
      const out = stringFlag(args, 'out');
      if (!out) usage('--out <dir> is required');
      return cmdBuild(args.positional[1]!, out, args.flags.quiet === true, stringFlag(args, 'truth'), stringFlag(args, 'summaries'), releaseFlags(args));
    },
  },
  {
    name: 'demo',
    summary: 'Generate the demo bundle of an invented survey and build its site, and serve it with --serve.',
    usage: ['demo [--out dist] [--bundle demo-bundle] [--serve] [--port 4321] [--quiet]'],
    positional: [0, 0],
    positionalNames: [],
    options: [
      { name: 'out', value: '<dir>', help: 'the site folder (default: dist)' },
      { name: 'bundle', value: '<dir>', help: 'where the demo bundle is written (default: demo-bundle)' },
      { name: 'serve', value: null, help: 'serve the site on 127.0.0.1 once it is built' },
      { name: 'port', value: '<n>', help: 'port for --serve (default 4321)' },
      quiet,
    ],
    notes: [EXIT_CODES],
    run: async (args) => {
      const bundle = resolve(stringFlag(args, 'bundle') ?? join(ROOT, 'demo-bundle'));
      const out = resolve(stringFlag(args, 'out') ?? join(ROOT, 'dist'));
      const port = intFlag(args, 'port', 0, 65535) ?? 4321;
      const isQuiet = args.flags.quiet === true;
      const { generateDemoBundle } = await import('./demo/generate.ts');
      const { derivePreviousBundle, PREVIOUS_VERSION } = await import('./demo/previous.ts');
      if (!isQuiet) process.stderr.write(`generating the demo bundle in ${bundle}\n`);
      await generateDemoBundle(bundle, {});
      // the earlier release 0.9.0 beside each (<bundle>-0.9.0, <out>-0.9.0), then 1.0.0 compared with it;
      // the demo's folders are its own, so each run replaces them
      const prevBundle = `${bundle}-${PREVIOUS_VERSION}`;
      const prevOut = `${out}-${PREVIOUS_VERSION}`;
      if (!isQuiet) process.stderr.write(`deriving the earlier release ${PREVIOUS_VERSION} in ${prevBundle}\n`);
      await derivePreviousBundle(bundle, prevBundle);
      const prevCode = await cmdBuild(prevBundle, prevOut, isQuiet, join(bundle, 'truth.json'), undefined, { replace: true });
      if (prevCode !== 0) return prevCode;
      const code = await cmdBuild(bundle, out, isQuiet, join(bundle, 'truth.json'), undefined, { replace: true, previous: { path: prevOut } });
      if (code !== 0 || !args.flags.serve) return code;
      return serve(out, port, '/');
    },
  },
  {
    name: 'serve',
    summary: 'Serve a built site on 127.0.0.1 until stopped, answering unknown addresses with its 404.html as a static host would.',
    usage: ['serve [<dir>] [--port 4321] [--base /]'],
    positional: [0, 1],
    positionalNames: ['<dir>'],
    options: [
      { name: 'port', value: '<n>', help: 'port (default 4321; 0 picks a free one)' },
      { name: 'base', value: '<path>', help: 'URL prefix the site is served under, e.g. /releases/dr1/ (default /)' },
    ],
    notes: ['<dir> defaults to dist. Stop with Ctrl-C.'],
    run: async (args) => {
      const dir = resolve(args.positional[1] ?? join(ROOT, 'dist'));
      const port = intFlag(args, 'port', 0, 65535) ?? 4321;
      const { existsSync, statSync } = await import('node:fs');
      if (!existsSync(dir) || !statSync(dir).isDirectory()) {
        process.stderr.write(`error: ${dir}: no such folder (build a site first: posterity build or posterity demo)\n`);
        return 1;
      }
      return serve(dir, port, stringFlag(args, 'base') ?? '/');
    },
  },
  {
    name: 'summarise',
    summary: "Summarise the posteriors of one part of a bundle's objects into a partial file: one task of a cluster job array.",
    usage: ['summarise <bundle-folder> --part I --of N --out <partials-dir> [--workers W] [--quiet]'],
    positional: [1, 1],
    positionalNames: ['<bundle-folder>'],
    options: [
      { name: 'part', value: '<I>', help: 'which part, 0 to N-1 (required)' },
      { name: 'of', value: '<N>', help: 'how many parts (required)' },
      { name: 'out', value: '<partials-dir>', help: 'folder for the partial file (required)' },
      { name: 'workers', value: '<W>', help: 'worker threads (default: one per core)' },
      quiet,
    ],
    notes: ['Objects are split by a hash of their id; docs/cluster.md has the details.', EXIT_CODES],
    run: (args) => clusterVerb('summarise', args),
  },
  {
    name: 'merge',
    summary: 'Merge the partial summaries of every part into the summaries that build --summaries reads, or list the parts still missing.',
    usage: ['merge <partials-dir> --out <merged-dir> [--quiet]', 'merge <partials-dir> --missing --of N [--bundle <bundle-folder>]'],
    positional: [1, 1],
    positionalNames: ['<partials-dir>'],
    options: [
      { name: 'out', value: '<merged-dir>', help: 'folder for the merged summaries (another folder than the partials)' },
      { name: 'missing', value: null, help: 'print the parts with no usable partial yet, comma-separated, instead of merging' },
      { name: 'of', value: '<N>', help: 'how many parts there are (with --missing)' },
      { name: 'bundle', value: '<bundle-folder>', help: 'with --missing: count partials made from another bundle as missing' },
      quiet,
    ],
    notes: ['merge refuses missing, duplicate or foreign parts (exit 1, naming the file).', EXIT_CODES],
    run: (args) => clusterVerb('merge', args),
  },
  {
    name: 'cluster-script',
    summary: 'Write a Slurm job-array script that summarises the parts side by side, then merges them and builds the site.',
    usage: [
      'cluster-script <bundle-folder> --parts N [--out script.sh] [--work <dir>] [--site <dir>]',
      '    [--partition P] [--account A] [--time HH:MM:SS] [--mem 4G] [--cpus 2] [--job-name posterity]',
      '    [--merge-time HH:MM:SS] [--merge-mem 8G] [--merge-cpus 2] [--node /path/to/node] [--quiet]',
    ],
    positional: [1, 1],
    positionalNames: ['<bundle-folder>'],
    options: [
      { name: 'parts', value: '<N>', help: 'how many parts, one array task each (required)' },
      { name: 'out', value: '<script.sh>', help: 'write the script here (default: print it)' },
      { name: 'work', value: '<dir>', help: 'folder for partials, merged summaries and logs (default: posterity-work)' },
      { name: 'site', value: '<dir>', help: 'the site folder (default: <work>/site)' },
      { name: 'partition', value: '<P>', help: 'Slurm partition' },
      { name: 'account', value: '<A>', help: 'Slurm account' },
      { name: 'time', value: '<HH:MM:SS>', help: 'time limit of one summarise task (default 01:00:00)' },
      { name: 'mem', value: '<size>', help: 'memory of one summarise task (default 4G)' },
      { name: 'cpus', value: '<n>', help: 'CPUs of one summarise task (default 2)' },
      { name: 'job-name', value: '<name>', help: 'Slurm job name (default posterity)' },
      { name: 'merge-time', value: '<HH:MM:SS>', help: 'time limit of the merge-and-build job' },
      { name: 'merge-mem', value: '<size>', help: 'memory of the merge-and-build job' },
      { name: 'merge-cpus', value: '<n>', help: 'CPUs of the merge-and-build job' },
      { name: 'node', value: '<path>', help: 'the node executable on the compute nodes (default: this one)' },
      quiet,
    ],
    notes: ['Then: bash script.sh (submits the array and the job that waits for it); docs/cluster.md.', EXIT_CODES],
    run: (args) => clusterVerb('cluster-script', args),
  },
];

const HELP_VERB: VerbSpec = {
  name: 'help',
  summary: "Show this list, or one command's usage and options.",
  usage: ['help [<command>]'],
  positional: [0, 1],
  positionalNames: ['<command>'],
  options: [],
};

function version(): string {
  return (JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8')) as { version: string }).version;
}

/** The overview printed by `posterity --help`. */
export function mainHelp(): string {
  const all: VerbSpec[] = [...VERBS, HELP_VERB];
  const width = Math.max(...all.map((v) => v.name.length));
  return [
    'usage: posterity <command> [arguments] [options]',
    '       posterity --help | --version',
    '',
    'Publish the Bayesian SED fits of a galaxy catalogue as a static release website with downloads.',
    '',
    'commands:',
    ...all.map((v) => `  ${v.name.padEnd(width)}  ${v.summary}`),
    '',
    "Run 'posterity <command> --help' for a command's arguments and options.",
    '  -h, --help   show this help',
    '  --version    print the version',
    '',
  ].join('\n');
}

/** A usage error: the message and the usage on stderr, exit code 2. */
function usageError(message: string, spec?: VerbSpec): number {
  const where = spec ? `posterity ${spec.name}` : 'posterity';
  const hint = spec && spec !== HELP_VERB ? `Run 'posterity ${spec.name} --help' for its options.` : "Run 'posterity --help' for the commands.";
  process.stderr.write(`${where}: ${message}\n${spec ? usageLines(spec) : 'usage: posterity <command> [arguments] [options]'}\n${hint}\n`);
  return 2;
}

function printProblems(problems: Problem[], formatProblem: (p: Problem) => string): void {
  const errors = problems.filter((p) => p.severity === 'error');
  const warnings = problems.filter((p) => p.severity === 'warning');
  if (errors.length) {
    process.stderr.write(`${errors.length} error${errors.length === 1 ? '' : 's'}:\n`);
    for (const p of errors) process.stderr.write(`  error: ${formatProblem(p)}\n`);
  }
  if (warnings.length) {
    process.stderr.write(`${warnings.length} warning${warnings.length === 1 ? '' : 's'}:\n`);
    for (const p of warnings) process.stderr.write(`  warning: ${formatProblem(p)}\n`);
  }
}

function progressPrinter(isQuiet: boolean) {
  const t0 = Date.now();
  const started = new Map<string, number>();
  let last = 0;
  return (stage: string, done: number, total: number) => {
    if (isQuiet) return;
    const now = Date.now();
    if (!started.has(stage)) started.set(stage, now);
    if (done < total && now - last < 1000) return;
    last = now;
    const el = (now - started.get(stage)!) / 1000;
    const eta = done > 0 && done < total ? ` about ${Math.ceil((el / done) * (total - done))} s left` : '';
    const count = total > 1 ? ` ${done}/${total}` : '';
    process.stderr.write(`[${((now - t0) / 1000).toFixed(1)} s] ${stage}${count}${done >= total ? ' done' : ''}${eta}\n`);
  };
}

async function cmdCheck(args: CliArgs): Promise<number> {
  const { PosterityError, formatProblem } = await import('../src/lib/core/problems.ts');
  const { loadBundle } = await import('../src/lib/bundle/load.ts');
  try {
    const b = await loadBundle(resolve(args.positional[1]!));
    printProblems(b.warnings, formatProblem);
    process.stdout.write(`ok: ${b.objects.n} objects, ${b.samples?.order.length ?? 0} draws, ${b.photometry?.order.length ?? 0} photometry rows\n`);
    return 0;
  } catch (e) {
    if (e instanceof PosterityError) {
      printProblems(e.problems, formatProblem);
      return 1;
    }
    throw e;
  }
}

/** Release options of `build` (and the demo): the earlier release to compare with, and --replace. */
interface ReleaseFlags {
  previous?: { path: string; thresholdSigma?: number; matchRadiusArcsec?: number; url?: string };
  replace?: boolean;
}

/** --previous and its companions, and --replace (a malformed value is a usage error). */
function releaseFlags(args: CliArgs): ReleaseFlags {
  const num = (k: string) => {
    const v = stringFlag(args, k);
    if (v === undefined) return undefined;
    if (!Number.isFinite(Number(v)) || Number(v) < 0) usage(`--${k} needs a number >= 0, got "${v}"`);
    return Number(v);
  };
  const out: ReleaseFlags = { replace: args.flags.replace === true };
  const thresholdSigma = num('shift-threshold');
  const matchRadiusArcsec = num('match-radius');
  const url = stringFlag(args, 'previous-url');
  const previous = stringFlag(args, 'previous');
  if (!previous && (thresholdSigma !== undefined || matchRadiusArcsec !== undefined || url !== undefined)) usage('--shift-threshold, --match-radius and --previous-url go with --previous');
  if (previous) out.previous = { path: resolve(previous), thresholdSigma, matchRadiusArcsec, ...(url ? { url } : {}) };
  return out;
}

async function cmdBuild(bundle: string, out: string, isQuiet: boolean, truthFile?: string, summaries?: string, release: ReleaseFlags = {}): Promise<number> {
  const { PosterityError, formatProblem } = await import('../src/lib/core/problems.ts');
  const { buildRelease } = await import('../src/lib/release/build.ts');
  const { truthForBuild } = await import('./demo/truth.ts');
  try {
    // a mock's truth (the demo's truth.json), shown beside the fits
    const { truth, massFunctionTruth } = truthFile ? truthForBuild(truthFile) : {};
    const s = await buildRelease(resolve(bundle), { out, progress: progressPrinter(isQuiet), truth, massFunctionTruth, summaries, ...release });
    if (!isQuiet) {
      if (s.warnings.length) {
        process.stderr.write(`${s.warnings.length} warning(s):\n`);
        for (const w of s.warnings.slice(0, 50)) process.stderr.write(`  warning: ${w}\n`);
      }
      const mb = (b: number) => `${(b / 1048576).toFixed(1)} MB`;
      process.stdout.write(
        `built ${s.objects} objects into ${s.out} in ${s.seconds.toFixed(1)} s: ${s.pages} pages, ${s.files} files, ${mb(s.bytes)} (downloads ${mb(s.downloadBytes)}), summaries ${s.summaries}, figures ${s.figures.rendered} rendered and ${s.figures.reused} reused, ${s.warnings.length} warning(s)\n`,
      );
    }
    return 0;
  } catch (e) {
    if (e instanceof PosterityError) {
      printProblems(e.problems, formatProblem);
      process.stderr.write('build failed; the previous output was left as it was\n');
      return 1;
    }
    process.stderr.write(`build failed: ${(e as Error).stack ?? e}\n`);
    return 1;
  }
}

/** The cluster verbs (`summarise`, `merge`, `cluster-script`), in scripts/cluster/. */
async function clusterVerb(cmd: 'summarise' | 'merge' | 'cluster-script', args: CliArgs): Promise<number> {
  const c = await import('./cluster/commands.ts');
  const verbs = { summarise: c.cmdSummarise, merge: c.cmdMerge, 'cluster-script': c.cmdClusterScript };
  return c.runClusterVerb(verbs[cmd], args);
}

async function serve(dir: string, port: number, base: string): Promise<number> {
  const { serveStatic } = await import('./serve.ts');
  const { url } = await serveStatic(dir, { port, base });
  process.stdout.write(`serving ${dir} at ${url}  (Ctrl-C to stop)\n`);
  await new Promise(() => {});
  return 0;
}

const isHelp = (a: string) => a === '--help' || a === '-h';

export async function main(argv: string[]): Promise<number> {
  const first = argv[0];
  if (first === undefined) return usageError('no command given');
  if (isHelp(first)) {
    process.stdout.write(mainHelp());
    return 0;
  }
  if (first === '--version') {
    process.stdout.write(`posterity ${version()}\n`);
    return 0;
  }
  if (first === 'help') {
    if (argv.length > 2) return usageError(`unexpected argument ${JSON.stringify(argv[2])}`, HELP_VERB);
    const name = argv[1];
    if (name === undefined || isHelp(name)) {
      process.stdout.write(mainHelp());
      return 0;
    }
    const v = VERBS.find((x) => x.name === name);
    if (!v) return usageError(`unknown command "${name}"`, HELP_VERB);
    process.stdout.write(verbHelp(v));
    return 0;
  }
  if (first.startsWith('-')) return usageError(`unknown option ${first}`);
  const verb = VERBS.find((v) => v.name === first);
  if (!verb) return usageError(`unknown command "${first}"`);
  const rest = argv.slice(1);
  // help wins over everything else on the line, so it never starts any work
  if (rest.some(isHelp)) {
    process.stdout.write(verbHelp(verb));
    return 0;
  }
  try {
    return await verb.run(parseVerbArgs(verb, rest));
  } catch (e) {
    if (e instanceof UsageError) return usageError(e.message, verb);
    throw e;
  }
}
