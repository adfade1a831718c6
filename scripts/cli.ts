/**
 * The `posterity` command line: argument parsing, progress and exit codes.
 *
 *   posterity check <bundle>                 validate only
 *   posterity build <bundle> --out <dir>     build the release site
 *   posterity demo [--serve] [--out dist]    generate the demo bundle and build it
 *   posterity serve <dir> [--port N]         serve a built site on localhost
 */
import { existsSync, readFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { PosterityError, formatProblem, type Problem } from '../src/lib/core/problems.ts';
import { loadBundle } from '../src/lib/bundle/load.ts';
import { buildRelease, PROJECT_ROOT } from '../src/lib/release/build.ts';
import { serveStatic } from './serve.ts';
import { truthForBuild } from './demo/truth.ts';

const USAGE = `usage:
  posterity check <bundle-folder>
  posterity build <bundle-folder> --out <dir> [--summaries <merged-dir>] [--quiet]
      [--previous <earlier-site-or-downloads> [--shift-threshold 2] [--match-radius 1] [--previous-url URL]] [--replace]
  posterity demo [--out dist] [--bundle demo-bundle] [--serve] [--port 4321] [--quiet]
  posterity serve <dir> [--port 4321] [--base /]
  posterity summarise <bundle-folder> --part I --of N --out <partials-dir>
  posterity merge <partials-dir> --out <merged-dir>
  posterity cluster-script <bundle-folder> --parts N [--out script.sh] [options: docs/cluster.md]`;

interface Args {
  positional: string[];
  flags: Record<string, string | boolean>;
}

function parseArgs(argv: string[]): Args {
  const positional: string[] = [];
  const flags: Record<string, string | boolean> = {};
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a.startsWith('--')) {
      const [k, v] = a.slice(2).split('=', 2);
      if (v !== undefined) flags[k] = v;
      else if (['serve', 'quiet', 'help', 'replace'].includes(k)) flags[k] = true;
      else if (i + 1 < argv.length && !argv[i + 1].startsWith('--')) flags[k] = argv[++i];
      else flags[k] = true;
    } else positional.push(a);
  }
  return { positional, flags };
}

function printProblems(problems: Problem[]): void {
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

function progressPrinter(quiet: boolean) {
  const t0 = Date.now();
  const started = new Map<string, number>();
  let last = 0;
  return (stage: string, done: number, total: number) => {
    if (quiet) return;
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

async function cmdCheck(args: Args): Promise<number> {
  const dir = args.positional[1];
  if (!dir) {
    process.stderr.write(USAGE + '\n');
    return 2;
  }
  try {
    const b = await loadBundle(resolve(dir));
    printProblems(b.warnings);
    process.stdout.write(`ok: ${b.objects.n} objects, ${b.samples?.order.length ?? 0} draws, ${b.photometry?.order.length ?? 0} photometry rows\n`);
    return 0;
  } catch (e) {
    if (e instanceof PosterityError) {
      printProblems(e.problems);
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

/** --previous and its companions, --replace; a string naming the bad flag when one is malformed. */
function releaseFlags(flags: Args['flags']): ReleaseFlags | string {
  const out: ReleaseFlags = { replace: flags.replace === true };
  const num = (k: string) => (typeof flags[k] === 'string' && Number.isFinite(Number(flags[k])) && Number(flags[k]) >= 0 ? Number(flags[k]) : undefined);
  for (const k of ['shift-threshold', 'match-radius']) if (flags[k] !== undefined && num(k) === undefined) return `--${k} needs a number >= 0`;
  if (flags.previous === true) return '--previous needs a folder';
  if (typeof flags.previous === 'string')
    out.previous = { path: resolve(flags.previous), thresholdSigma: num('shift-threshold'), matchRadiusArcsec: num('match-radius'), ...(typeof flags['previous-url'] === 'string' ? { url: flags['previous-url'] } : {}) };
  return out;
}

async function cmdBuild(bundle: string, out: string, quiet: boolean, truthFile?: string, summaries?: string, release: ReleaseFlags = {}): Promise<number> {
  try {
    // a mock's truth (the demo's truth.json), shown beside the fits
    const { truth, massFunctionTruth } = truthFile ? truthForBuild(truthFile) : {};
    const s = await buildRelease(resolve(bundle), { out, progress: progressPrinter(quiet), truth, massFunctionTruth, summaries, ...release });
    if (!quiet) {
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
      printProblems(e.problems);
      process.stderr.write('build failed; the previous output was left as it was\n');
      return 1;
    }
    process.stderr.write(`build failed: ${(e as Error).stack ?? e}\n`);
    return 1;
  }
}

/** The cluster verbs (`summarise`, `merge`, `cluster-script`), in scripts/cluster/. */
async function clusterVerb(cmd: 'summarise' | 'merge' | 'cluster-script', args: Args): Promise<number> {
  const c = await import('./cluster/commands.ts');
  const verbs = { summarise: c.cmdSummarise, merge: c.cmdMerge, 'cluster-script': c.cmdClusterScript };
  return c.runClusterVerb(verbs[cmd], args);
}

async function serve(dir: string, port: number, base: string): Promise<number> {
  const { url } = await serveStatic(dir, { port, base });
  process.stdout.write(`serving ${dir} at ${url}  (Ctrl-C to stop)\n`);
  await new Promise(() => {});
  return 0;
}

export async function main(argv: string[]): Promise<number> {
  const args = parseArgs(argv);
  const cmd = args.positional[0];
  const quiet = args.flags.quiet === true;
  switch (cmd) {
    case 'check':
      return cmdCheck(args);
    case 'build': {
      const dir = args.positional[1];
      const out = args.flags.out;
      if (!dir || typeof out !== 'string' || args.flags.summaries === true) {
        process.stderr.write(USAGE + '\n');
        return 2;
      }
      const release = releaseFlags(args.flags);
      if (typeof release === 'string') {
        process.stderr.write(`${release}\n${USAGE}\n`);
        return 2;
      }
      return cmdBuild(dir, out, quiet, typeof args.flags.truth === 'string' ? args.flags.truth : undefined, typeof args.flags.summaries === 'string' ? args.flags.summaries : undefined, release);
    }
    case 'demo': {
      const bundle = resolve(typeof args.flags.bundle === 'string' ? args.flags.bundle : join(PROJECT_ROOT, 'demo-bundle'));
      const out = resolve(typeof args.flags.out === 'string' ? args.flags.out : join(PROJECT_ROOT, 'dist'));
      const { generateDemoBundle } = await import('./demo/generate.ts');
      const { derivePreviousBundle, PREVIOUS_VERSION } = await import('./demo/previous.ts');
      if (!quiet) process.stderr.write(`generating the demo bundle in ${bundle}\n`);
      await generateDemoBundle(bundle, {});
      // the earlier release 0.9.0 beside each (<bundle>-0.9.0, <out>-0.9.0), then 1.0.0 compared with it;
      // the demo's folders are its own, so each run replaces them
      const prevBundle = `${bundle}-${PREVIOUS_VERSION}`;
      const prevOut = `${out}-${PREVIOUS_VERSION}`;
      if (!quiet) process.stderr.write(`deriving the earlier release ${PREVIOUS_VERSION} in ${prevBundle}\n`);
      await derivePreviousBundle(bundle, prevBundle);
      const prevCode = await cmdBuild(prevBundle, prevOut, quiet, join(bundle, 'truth.json'), undefined, { replace: true });
      if (prevCode !== 0) return prevCode;
      const code = await cmdBuild(bundle, out, quiet, join(bundle, 'truth.json'), undefined, { replace: true, previous: { path: prevOut } });
      if (code !== 0 || !args.flags.serve) return code;
      return serve(out, Number(args.flags.port ?? 4321), '/');
    }
    case 'serve': {
      const dir = args.positional[1] ?? join(PROJECT_ROOT, 'dist');
      return serve(dir, Number(args.flags.port ?? 4321), typeof args.flags.base === 'string' ? args.flags.base : '/');
    }
    case 'summarise':
    case 'merge':
    case 'cluster-script':
      return clusterVerb(cmd, args);
    case undefined:
    case 'help':
      process.stdout.write(USAGE + '\n');
      return cmd === undefined && !args.flags.help ? 2 : 0;
    default:
      process.stderr.write(`unknown command "${cmd}"\n${USAGE}\n`);
      return 2;
  }
}
