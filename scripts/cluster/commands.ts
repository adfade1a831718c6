/**
 * The cluster verbs of the `posterity` command line: `summarise` (one part of a bundle),
 * `merge` (all parts into the summaries `build --summaries` reads) and `cluster-script`
 * (a Slurm job-array script, `slurm.ts`). Argument checks and exit codes only; the work is
 * done in `src/lib/pipeline/summarise-partition.ts`. Exit codes: 0 done, 1 input problem, 2 usage.
 */
import { existsSync, statSync } from 'node:fs';
import { chmod, rename, writeFile } from 'node:fs/promises';
import { basename, dirname, join, resolve } from 'node:path';
import { PosterityError, formatProblem } from '../../src/lib/core/problems.ts';
import { PROJECT_ROOT, partialFilesIn } from '../../src/lib/release/build.ts';
import { PARTIAL_FORMAT, PARTIAL_FORMAT_VERSION, PARTIAL_MAGIC, type PartialHeader } from '../../src/lib/pipeline/partials.ts';
import { TOOL } from '../../src/lib/pipeline/run.ts';
import { checkSlurmOptions, slurmScript, type SlurmScriptOptions } from './slurm.ts';
import { type CliArgs, UsageError, intFlag, stringFlag, usage } from '../usage.ts';

export type { CliArgs } from '../usage.ts';

/** Writes text to a file through a temporary file in the same folder, so it is never seen half-written. */
async function writeAtomic(path: string, text: string, mode?: number): Promise<void> {
  const tmp = join(dirname(path), `.${basename(path)}.tmp-${process.pid}`);
  await writeFile(tmp, text);
  if (mode !== undefined) await chmod(tmp, mode);
  await rename(tmp, path);
}

/** An input problem (exit 1) with the file or field it concerns. */
export class InputError extends Error {}

function bundleDir(arg: string | undefined): string {
  if (!arg) usage('missing <bundle-folder>');
  const dir = resolve(arg);
  const cfg = join(dir, 'release.json');
  if (!existsSync(dir) || !statSync(dir).isDirectory()) throw new InputError(`${dir}: no such bundle folder`);
  if (!existsSync(cfg)) throw new InputError(`${cfg}: not found (a bundle folder holds release.json and its tables)`);
  return dir;
}

/** `posterity cluster-script`: writes the Slurm job-array script (to --out, else to stdout). */
export async function cmdClusterScript(args: CliArgs): Promise<number> {
  // usage first (exit 2), then the input (exit 1)
  const parts = intFlag(args, 'parts', 1);
  if (parts === undefined) usage('--parts N is required');
  const bundle = bundleDir(args.positional[1]);
  const work = resolve(stringFlag(args, 'work') ?? 'posterity-work');
  const opts: SlurmScriptOptions = {
    bundle,
    parts,
    work,
    site: resolve(stringFlag(args, 'site') ?? join(work, 'site')),
    node: resolve(stringFlag(args, 'node') ?? process.execPath),
    posterity: join(PROJECT_ROOT, 'scripts', 'posterity.mjs'),
    partition: stringFlag(args, 'partition'),
    account: stringFlag(args, 'account'),
    time: stringFlag(args, 'time') ?? '01:00:00',
    mem: stringFlag(args, 'mem') ?? '4G',
    cpus: intFlag(args, 'cpus', 1) ?? 2,
    mergeTime: stringFlag(args, 'merge-time'),
    mergeMem: stringFlag(args, 'merge-mem'),
    mergeCpus: intFlag(args, 'merge-cpus', 1),
    jobName: stringFlag(args, 'job-name') ?? 'posterity',
  };
  const problems = checkSlurmOptions(opts);
  if (problems.length) usage(problems.map((p) => `${p.option}: ${p.message}${p.got !== undefined ? `, got "${p.got}"` : ''}`).join('\n'));
  const text = slurmScript(opts);
  const out = stringFlag(args, 'out');
  if (!out) {
    process.stdout.write(text);
    return 0;
  }
  const path = resolve(out);
  if (!existsSync(dirname(path))) throw new InputError(`${dirname(path)}: no such folder for --out`);
  await writeAtomic(path, text, 0o755);
  if (args.flags.quiet !== true)
    process.stderr.write(`wrote ${path}: ${parts} summarise tasks, then merge and build into ${opts.site}\nsubmit with: bash ${path}\n`);
  return 0;
}

/** Runs a cluster verb, turning input errors into exit code 1; usage errors go up to the CLI (exit 2). */
export async function runClusterVerb(fn: (args: CliArgs) => Promise<number>, args: CliArgs): Promise<number> {
  try {
    return await fn(args);
  } catch (e) {
    if (e instanceof UsageError) throw e;
    if (e instanceof InputError) {
      process.stderr.write(`error: ${e.message}\n`);
      return 1;
    }
    if (e instanceof PosterityError) {
      for (const p of e.problems) process.stderr.write(`  ${p.severity}: ${formatProblem(p)}\n`);
      return e.problems.some((p) => p.severity === 'error') ? 1 : 0;
    }
    throw e;
  }
}

/** `posterity summarise`: the objects of one part of the catalogue into a partial file in --out. */
export async function cmdSummarise(args: CliArgs): Promise<number> {
  const part = intFlag(args, 'part', 0);
  const of = intFlag(args, 'of', 1);
  const out = stringFlag(args, 'out');
  if (part === undefined || of === undefined || !out) usage('summarise needs --part I --of N --out <partials-dir>');
  if (part >= of) usage(`--part must be below --of (parts are numbered 0 to ${of - 1}), got --part ${part} --of ${of}`);
  const workers = intFlag(args, 'workers', 1);
  const bundle = bundleDir(args.positional[1]);
  const t0 = Date.now();
  const { summarisePartition } = await import('../../src/lib/pipeline/summarise-partition.ts');
  const r = await summarisePartition(bundle, { part, of, outDir: resolve(out), ...(workers ? { workers } : {}) });
  if (args.flags.quiet !== true) process.stdout.write(`wrote ${r.file}: part ${part} of ${of}, ${r.objects} objects, in ${((Date.now() - t0) / 1000).toFixed(1)} s\n`);
  return 0;
}

/** The name `merge` gives the whole catalogue's summaries: that of part 0 of 1, as one pass over everything would write. */
export const MERGED_FILE = 'summary-part-0-of-1.partial';

/**
 * The header of a partial file alone (magic, length, JSON; see `partials.ts`), so that
 * listing what is done does not read whole files. Null for a file that is not a partial.
 */
async function peekHeader(file: string): Promise<PartialHeader | null> {
  const { open } = await import('node:fs/promises');
  const fh = await open(file, 'r');
  try {
    const pre = Buffer.alloc(12);
    if ((await fh.read(pre, 0, 12, 0)).bytesRead < 12 || pre.toString('latin1', 0, 8) !== PARTIAL_MAGIC) return null;
    const len = pre.readUInt32LE(8);
    const head = Buffer.alloc(len);
    if ((await fh.read(head, 0, len, 12)).bytesRead < len) return null;
    return JSON.parse(head.toString('utf8')) as PartialHeader;
  } catch {
    return null;
  } finally {
    await fh.close();
  }
}

/**
 * Why a partial is no use for part `of` of this bundle, or null when it is usable. With a
 * bundle, release.json is compared by checksum and the tables by size (cheap: the merge
 * compares every checksum).
 */
async function unusable(file: string, h: PartialHeader | null, of: number, bundle?: string): Promise<string | null> {
  if (!h || h.format !== PARTIAL_FORMAT || h.formatVersion !== PARTIAL_FORMAT_VERSION) return 'not a partial summary of this format';
  if (h.tool.name !== TOOL.name || h.tool.version !== TOOL.version) return `written by ${h.tool.name} ${h.tool.version}, not ${TOOL.name} ${TOOL.version}`;
  if (h.partition.of !== of) return `part ${h.partition.part} of ${h.partition.of}, not of ${of}`;
  if (bundle) {
    const { createHash } = await import('node:crypto');
    const { readFile } = await import('node:fs/promises');
    for (const input of h.bundle.inputs) {
      const p = join(bundle, input.path);
      if (!existsSync(p)) return `made from ${input.path}, which the bundle no longer has`;
      if (input.table === 'release.json') {
        const sha = createHash('sha256').update(await readFile(p)).digest('hex');
        if (sha !== input.sha256) return 'made from another release.json';
      } else if (statSync(p).size !== input.bytes) return `made from another ${input.path} (size differs)`;
    }
  }
  return null;
}

/** `posterity merge`: every partial of a folder into the whole catalogue's summaries; or, with --missing, the parts still to do. */
export async function cmdMerge(args: CliArgs): Promise<number> {
  const dirArg = args.positional[1];
  if (!dirArg) usage('missing <partials-dir>');
  const dir = resolve(dirArg);
  if (!existsSync(dir) || !statSync(dir).isDirectory()) throw new InputError(`${dir}: no such folder of partial summaries`);
  const files = await partialFilesIn(dir);

  if (args.flags.missing === true) {
    const of = intFlag(args, 'of', 1);
    if (of === undefined) usage('merge --missing needs --of N');
    const bundleArg = stringFlag(args, 'bundle');
    const bundle = bundleArg ? bundleDir(bundleArg) : undefined;
    const done = new Set<number>();
    for (const f of files) {
      const h = await peekHeader(f);
      const why = await unusable(f, h, of, bundle);
      if (why) process.stderr.write(`warning: ${f}: ${why}; its part counts as missing\n`);
      else done.add(h!.partition.part);
    }
    process.stdout.write(Array.from({ length: of }, (_, i) => i).filter((i) => !done.has(i)).join(','));
    return 0;
  }

  const outArg = stringFlag(args, 'out');
  if (!outArg) usage('merge needs --out <merged-dir>');
  const out = resolve(outArg);
  if (out === dir) usage('--out must be another folder than the partials');
  if (!files.length) throw new InputError(`${dir}: no partial summaries (*.partial) to merge`);
  const { mkdir } = await import('node:fs/promises');
  await mkdir(out, { recursive: true });
  const target = join(out, MERGED_FILE);
  const others = (await partialFilesIn(out)).filter((f) => f !== target);
  if (others.length) throw new InputError(`${others[0]}: --out already holds other summaries; give an empty folder or one written by merge`);
  const t0 = Date.now();
  const { mergePartials, writeMerged } = await import('../../src/lib/pipeline/summarise-partition.ts');
  const merged = await mergePartials(files);
  await writeMerged(target, merged);
  if (args.flags.quiet !== true)
    process.stdout.write(`merged ${files.length} partial${files.length === 1 ? '' : 's'} (${merged.table.n} objects) into ${target} in ${((Date.now() - t0) / 1000).toFixed(1)} s\n`);
  return 0;
}
