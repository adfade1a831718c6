/**
 * The cluster flow on a real one-node Slurm cluster (Debian's slurm-wlm and munge, started
 * here as root in a temporary folder; see slurm-cluster.ts): the script of
 * `posterity cluster-script` summarises a demo bundle in 4 array tasks, merges and builds
 * in a dependent job, and the merged summaries and the catalogue must be byte for byte those
 * of one process. Then one partial is deleted, `resubmit` reruns that part alone, the merge
 * must again equal one pass, and the build it started is cancelled (scancel) part-way,
 * which must leave the site as it was.
 *
 * Skips with a message where Slurm cannot start (not root, packages absent, daemons fail);
 * under CI=true it always runs and a cluster that does not start fails the test.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { generateDemoBundle } from '../../scripts/demo/generate.ts';
import { PROJECT_ROOT } from '../../src/lib/release/build.ts';
import { runPipeline } from '../../src/lib/pipeline/run.ts';
import { SlurmCluster, slurmUnavailable } from './slurm-cluster.ts';

const CI = process.env.CI === 'true';
const PARTS = 4;
const N_OBJECTS = 120;
const POSTERITY = join(PROJECT_ROOT, 'scripts', 'posterity.mjs');
const MERGED = 'summary-part-0-of-1.partial';

const unavailable = slurmUnavailable();
if (unavailable && !CI) console.warn(`[skip] Slurm cluster test: ${unavailable} (set CI=true to require it)`);

function cli(args: string[], env?: NodeJS.ProcessEnv) {
  const r = spawnSync(process.execPath, [POSTERITY, ...args], { encoding: 'utf8', env, timeout: 240_000 });
  if (r.status !== 0) throw new Error(`posterity ${args.join(' ')} failed (exit ${r.status}):\n${r.stderr}\n${r.stdout}`);
  return r.stdout;
}

describe.skipIf(unavailable !== null && !CI)('a one-node Slurm cluster runs the job-array script', () => {
  let cluster: SlurmCluster | null = null;
  let startError: Error | null = null;
  let dir = '';
  let bundle = '';
  let work = '';
  let site = '';
  let script = '';
  let ref = '';

  /** The cluster, or a skip (a failure under CI) when it did not start. */
  const need = (ctx: { skip: (note?: string) => void }): SlurmCluster => {
    if (cluster) return cluster;
    const why = unavailable ?? startError?.message ?? 'the cluster did not start';
    if (CI) throw new Error(`CI=true and the Slurm cluster could not start: ${why}`);
    console.warn(`[skip] Slurm cluster test: ${why}`);
    ctx.skip();
    throw new Error('unreachable');
  };

  const runScript = (args: string[]) => {
    const r = spawnSync('bash', [script, ...args], { encoding: 'utf8', env: cluster!.env, cwd: dir, timeout: 60_000 });
    if (r.status !== 0) throw new Error(`bash ${script} ${args.join(' ')} failed (exit ${r.status}):\n${r.stderr}\n${r.stdout}`);
    return r.stdout;
  };

  /** Job ids of the last submission, from <work>/slurm/jobs.txt ("array A parts merge-build M"). */
  const lastJobs = () => {
    const lines = readFileSync(join(work, 'slurm', 'jobs.txt'), 'utf8').trim().split('\n');
    const m = /^array (\d+) (\S+) merge-build (\d+)$/.exec(lines[lines.length - 1]);
    if (!m) throw new Error(`unexpected jobs.txt line: ${lines[lines.length - 1]}`);
    return { array: m[1], parts: m[2], merge: m[3] };
  };

  const logsOf = () => {
    const logs = join(work, 'logs');
    if (!existsSync(logs)) return '';
    return readdirSync(logs)
      .map((f) => `--- ${f}\n${readFileSync(join(logs, f), 'utf8').split('\n').slice(-30).join('\n')}`)
      .join('\n');
  };

  const same = (a: string, b: string) => expect(readFileSync(a).equals(readFileSync(b)), `${a} and ${b} differ`).toBe(true);

  beforeAll(async () => {
    if (unavailable) return;
    try {
      cluster = await SlurmCluster.start({ timeoutMs: 60_000 });
    } catch (e) {
      startError = e as Error;
      return;
    }
    dir = mkdtempSync(join(tmpdir(), 'posterity-slurm-run-'));
    bundle = join(dir, 'bundle');
    work = join(dir, 'work');
    site = join(dir, 'site');
    script = join(dir, 'run.sh');
    ref = join(dir, 'ref');
    await generateDemoBundle(bundle, { nObjects: N_OBJECTS });
    // the single-process result: summaries in one pass, and the pipeline's own downloads
    cli(['summarise', bundle, '--part', '0', '--of', '1', '--out', join(ref, 'summaries'), '--quiet']);
    await runPipeline(bundle, { contentDir: join(ref, 'content'), downloadsDir: join(ref, 'downloads') });
    cli(['cluster-script', bundle, '--parts', String(PARTS), '--out', script, '--work', work, '--site', site, '--partition', 'debug', '--time', '00:10:00', '--mem', '1G', '--cpus', '1', '--job-name', 'ptest', '--quiet']);
  }, 240_000);

  afterAll(() => {
    cluster?.stop();
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  it('4 summarise tasks, then merge and build after them: the same bytes as one process', async (ctx) => {
    const c = need(ctx);
    const out = runScript([]);
    expect(out).toMatch(/submitted array job \d+ \(parts 0-3\) and merge-and-build job \d+/);
    const jobs = lastJobs();
    const merge = await c.waitFor(jobs.merge, 270_000);
    const tasks = c.jobs(jobs.array);
    expect(tasks.map((t) => t.state), logsOf()).toEqual(['COMPLETED', 'COMPLETED', 'COMPLETED', 'COMPLETED']);
    expect(merge[0].state, logsOf()).toBe('COMPLETED');

    const partials = readdirSync(join(work, 'partials')).sort();
    expect(partials).toEqual([0, 1, 2, 3].map((k) => `summary-part-${k}-of-4.partial`));
    same(join(work, 'merged', MERGED), join(ref, 'summaries', MERGED));
    for (const f of ['catalogue.csv', 'catalogue.fits', 'catalogue.arrow', 'relations.json', 'SHA256SUMS']) same(join(site, 'downloads', f), join(ref, 'downloads', f));
    expect(existsSync(join(site, 'index.html'))).toBe(true);
    expect(runScript(['status']).trim()).toBe('all 4 parts done');
  }, 300_000);

  it('a lost partial is rerun alone and merges to the same bytes; a cancelled build leaves the site as it was', async (ctx) => {
    const c = need(ctx);
    if (!existsSync(join(site, 'index.html'))) throw new Error('needs the site of the previous test');
    const siteIndex = readFileSync(join(site, 'index.html'));
    rmSync(join(work, 'partials', 'summary-part-2-of-4.partial'));
    expect(runScript(['status']).trim()).toBe('missing parts: 2');

    const t0 = Date.now();
    runScript(['resubmit']);
    const jobs = lastJobs();
    expect(jobs.parts).toBe('2');
    const tasks = await c.waitFor(jobs.array, 120_000);
    expect(tasks.map((t) => t.state), logsOf()).toEqual(['COMPLETED']);
    expect(runScript(['status']).trim()).toBe('all 4 parts done');

    // the merge job merges first, then builds: cancel it once the merged file is new
    const merged = join(work, 'merged', MERGED);
    const deadline = Date.now() + 120_000;
    while (!(existsSync(merged) && statSync(merged).mtimeMs >= t0) && Date.now() < deadline) await new Promise((r) => setTimeout(r, 300));
    expect(statSync(merged).mtimeMs, `the merge did not rewrite ${merged}\n${logsOf()}`).toBeGreaterThanOrEqual(t0);
    same(merged, join(ref, 'summaries', MERGED));
    const before = c.jobs(jobs.merge)[0]?.state;
    c.cmd('/usr/bin/scancel', [jobs.merge]);
    const after = await c.waitFor(jobs.merge, 60_000);
    if (before === 'RUNNING') expect(after[0].state).toBe('CANCELLED');

    // the cancelled build touched nothing: the site is the first one, byte for byte
    expect(readFileSync(join(site, 'index.html')).equals(siteIndex)).toBe(true);
    for (const f of ['catalogue.csv', 'SHA256SUMS']) same(join(site, 'downloads', f), join(ref, 'downloads', f));
  }, 300_000);
});
