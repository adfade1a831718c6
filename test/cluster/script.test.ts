/**
 * The Slurm job-array script of `posterity cluster-script`: its #SBATCH lines, its option
 * checks, and what it does when run, with stand-ins for `sbatch` and `node` on PATH so no
 * cluster is needed (the real one-node cluster run is `slurm.test.ts`).
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, mkdirSync, readFileSync, rmSync, statSync, writeFileSync, chmodSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { checkSlurmOptions, shellQuote, slurmScript, type SlurmScriptOptions } from '../../scripts/cluster/slurm.ts';
import { PROJECT_ROOT } from '../../src/lib/release/build.ts';

const BASE: SlurmScriptOptions = {
  bundle: '/data/survey/bundle',
  parts: 4,
  work: '/scratch/run1',
  site: '/scratch/run1/site',
  node: '/usr/bin/node',
  posterity: '/opt/posterity/scripts/posterity.mjs',
  partition: 'short',
  account: 'astro-42',
  time: '02:30:00',
  mem: '6G',
  cpus: 3,
  jobName: 'dr1',
};

/** The #SBATCH lines Slurm reads: those before the first line that is neither blank nor a comment. */
function directives(text: string): string[] {
  const out: string[] = [];
  for (const line of text.split('\n').slice(1)) {
    if (line.startsWith('#SBATCH ')) out.push(line.slice(8));
    else if (line.trim() === '' || line.startsWith('#')) continue;
    else break;
  }
  return out;
}

describe('slurmScript text', () => {
  const text = slurmScript(BASE);

  it('has the array and the resources as #SBATCH lines before any command', () => {
    const d = directives(text);
    expect(d).toContain('--array=0-3');
    expect(d).toContain('--job-name=dr1-summarise');
    expect(d).toContain('--partition=short');
    expect(d).toContain('--account=astro-42');
    expect(d).toContain('--time=02:30:00');
    expect(d).toContain('--mem=6G');
    expect(d).toContain('--cpus-per-task=3');
    expect(d).toContain('--output=/scratch/run1/logs/summarise-%A_%a.out');
    // only one --array line, so `sbatch --array=K script.sh` overrides it cleanly
    expect(text.match(/^#SBATCH --array=/gm)).toHaveLength(1);
  });

  it('leaves out partition and account when not given', () => {
    const d = directives(slurmScript({ ...BASE, partition: undefined, account: undefined }));
    expect(d.some((l) => l.startsWith('--partition'))).toBe(false);
    expect(d.some((l) => l.startsWith('--account'))).toBe(false);
    expect(d).toContain('--array=0-3');
  });

  it('has a one-task array for one part', () => {
    expect(directives(slurmScript({ ...BASE, parts: 1 }))).toContain('--array=0-0');
  });

  it('runs summarise on the task id and merges after the whole array succeeded', () => {
    expect(text).toContain('summarise "$BUNDLE" --part "$1" --of "$PARTS" --out "$PARTIALS"');
    expect(text).toContain('summarise_part "$SLURM_ARRAY_TASK_ID"');
    expect(text).toContain('PARTS=4');
    expect(text).toContain('--dependency="afterok:$1"');
    expect(text).toContain('merge "$PARTIALS" --out "$MERGED"');
    expect(text).toContain('build "$BUNDLE" --out "$SITE" --summaries "$MERGED"');
    expect(text).toContain("NODE=/usr/bin/node");
    expect(text).toContain('POSTERITY=/opt/posterity/scripts/posterity.mjs');
  });

  it('gives the merge-and-build job its own resources', () => {
    const t = slurmScript({ ...BASE, mergeTime: '05:00:00', mergeMem: '32G', mergeCpus: 2 });
    const job = t.slice(t.indexOf('<<EOF'), t.indexOf('\nEOF'));
    expect(job).toContain('#SBATCH --time=05:00:00');
    expect(job).toContain('#SBATCH --mem=32G');
    expect(job).toContain('#SBATCH --cpus-per-task=2');
    expect(job).toContain('#SBATCH --job-name=dr1-build');
    expect(job).not.toContain('--array');
  });

  it('is valid bash', () => {
    const r = spawnSync('bash', ['-n'], { input: text, encoding: 'utf8' });
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
  });
});

describe('checkSlurmOptions', () => {
  const bad = (o: Partial<SlurmScriptOptions>) => checkSlurmOptions({ ...BASE, ...o }).map((p) => p.option);
  it('accepts the base options', () => expect(bad({})).toEqual([]));
  it('refuses bad counts, times, sizes and names, naming the option', () => {
    expect(bad({ parts: 0 })).toEqual(['--parts']);
    expect(bad({ parts: 2.5 })).toEqual(['--parts']);
    expect(bad({ parts: 5000 })).toEqual(['--parts']);
    expect(bad({ time: '90' })).toEqual(['--time']);
    expect(bad({ time: '1:75:00' })).toEqual(['--time']);
    expect(bad({ time: '2-04:00:00' })).toEqual([]);
    expect(bad({ mem: '4 GB' })).toEqual(['--mem']);
    expect(bad({ mem: '4000' })).toEqual([]);
    expect(bad({ cpus: 0 })).toEqual(['--cpus']);
    expect(bad({ partition: 'a b' })).toEqual(['--partition']);
    expect(bad({ account: 'x;rm' })).toEqual(['--account']);
  });
  it('refuses relative paths and paths an #SBATCH line cannot carry', () => {
    expect(bad({ work: 'scratch/run1' })).toEqual(['--work']);
    expect(bad({ work: '/scratch/my run' })).toEqual(['--work']);
    expect(bad({ work: '/scratch/100%' })).toEqual(['--work']);
    expect(bad({ bundle: "/data/o'brien" })).toEqual(['<bundle>']);
  });
  it('quotes for the shell', () => {
    expect(shellQuote('/a/b')).toBe('/a/b');
    expect(shellQuote("it's")).toBe(`'it'\\''s'`);
  });
});

/**
 * Runs the generated script with stand-ins: `sbatch` records its arguments and standard
 * input and prints job ids 101, 102, ...; "node" records the posterity command it was
 * given, and answers `merge --missing` with the contents of $FAKE_MISSING.
 */
describe('running the script (stand-in sbatch and node)', () => {
  let dir: string;
  let bin: string;
  let script: string;
  let work: string;

  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'posterity-script-'));
    bin = join(dir, 'bin');
    work = join(dir, 'work');
    mkdirSync(bin);
    writeFileSync(
      join(bin, 'sbatch'),
      `#!/bin/bash
n=$(( $(cat "$FAKE_DIR/count" 2>/dev/null || echo 100) + 1 )); echo $n > "$FAKE_DIR/count"
{ echo "sbatch $*"; file=; for a in "$@"; do [ -f "$a" ] && file=$a; done
  if [ -z "$file" ]; then echo "--- stdin"; cat; fi; echo "--- end"; } >> "$FAKE_DIR/sbatch.log"
echo "$n;cluster"
`,
    );
    writeFileSync(
      join(bin, 'fake-node'),
      `#!/bin/bash
echo "$*" >> "$FAKE_DIR/node.log"
case " $* " in *" --missing "*) printf '%s' "\${FAKE_MISSING:-}";; esac
`,
    );
    writeFileSync(join(bin, 'squeue'), `#!/bin/bash\necho "squeue $*" >> "$FAKE_DIR/squeue.log"\nprintf '%s' "\${FAKE_ACTIVE:-}"\n`);
    chmodSync(join(bin, 'squeue'), 0o755);
    chmodSync(join(bin, 'sbatch'), 0o755);
    chmodSync(join(bin, 'fake-node'), 0o755);
    script = join(dir, 'run.sh');
    writeFileSync(script, slurmScript({ ...BASE, bundle: join(dir, 'bundle'), work, site: join(dir, 'site'), node: join(bin, 'fake-node') }));
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  const run = (args: string[], env: Record<string, string> = {}) => {
    for (const f of ['sbatch.log', 'node.log', 'count']) rmSync(join(dir, f), { force: true });
    const r = spawnSync('bash', [script, ...args], {
      encoding: 'utf8',
      env: { PATH: `${bin}:${process.env.PATH}`, FAKE_DIR: dir, HOME: dir, ...env },
    });
    const read = (f: string) => (existsSync(join(dir, f)) ? readFileSync(join(dir, f), 'utf8') : '');
    return { ...r, sbatch: read('sbatch.log'), node: read('node.log') };
  };

  it('submits the array, then the merge-and-build job after it', () => {
    const r = run([]);
    expect(r.status).toBe(0);
    const calls = r.sbatch.split('--- end\n').filter(Boolean);
    expect(calls).toHaveLength(2);
    expect(calls[0]).toMatch(new RegExp(`^sbatch --parsable ${script.replace(/[.*+?^${}()|[\]\\/]/g, '\\$&')}\n`));
    expect(calls[1]).toContain('sbatch --parsable --dependency=afterok:101 --kill-on-invalid-dep=yes');
    expect(calls[1]).toContain('#SBATCH --job-name=dr1-build');
    expect(calls[1]).toContain(`#SBATCH --output=${work}/logs/merge-build-%j.out`);
    expect(calls[1]).toContain(`exec bash ${script} finish`);
    expect(r.stdout).toContain('submitted array job 101 (parts 0-3) and merge-and-build job 102');
    expect(readFileSync(join(work, 'slurm', 'jobs.txt'), 'utf8')).toContain('array 101 0-3 merge-build 102');
    for (const d of ['partials', 'logs']) expect(statSync(join(work, d)).isDirectory()).toBe(true);
  });

  it('as array task K, summarises part K of N', () => {
    const r = run([], { SLURM_ARRAY_TASK_ID: '2', SLURM_JOB_ID: '7' });
    expect(r.status).toBe(0);
    expect(r.sbatch).toBe('');
    expect(r.node.trim()).toBe(`${BASE.posterity} summarise ${join(dir, 'bundle')} --part 2 --of 4 --out ${work}/partials --workers 3`);
    // with the CPUs Slurm gave the task
    expect(run([], { SLURM_ARRAY_TASK_ID: '1', SLURM_CPUS_PER_TASK: '8' }).node).toContain('--part 1 --of 4 --out ' + `${work}/partials --workers 8`);
  });

  it('a failing task fails the job', () => {
    writeFileSync(join(bin, 'fail-node'), '#!/bin/bash\nexit 1\n');
    chmodSync(join(bin, 'fail-node'), 0o755);
    const s2 = join(dir, 'fail.sh');
    writeFileSync(s2, slurmScript({ ...BASE, bundle: join(dir, 'bundle'), work, site: join(dir, 'site'), node: join(bin, 'fail-node') }));
    const r = spawnSync('bash', [s2], { env: { PATH: process.env.PATH!, SLURM_ARRAY_TASK_ID: '0' } });
    expect(r.status).toBe(1);
  });

  it('resubmit submits only the missing parts, then the merge after them', () => {
    const r = run(['resubmit'], { FAKE_MISSING: '1,3' });
    expect(r.status).toBe(0);
    expect(r.node).toContain('merge ' + `${work}/partials --missing --of 4 --bundle ${join(dir, 'bundle')}`);
    const calls = r.sbatch.split('--- end\n').filter(Boolean);
    expect(calls).toHaveLength(2);
    expect(calls[0]).toMatch(/^sbatch --parsable --array=1,3 /);
    expect(calls[1]).toContain('--dependency=afterok:101');
  });

  it('resubmit refuses while the last array still has tasks queued or running', () => {
    const r = run(['resubmit'], { FAKE_MISSING: '1', FAKE_ACTIVE: '101_1' });
    expect(r.status).toBe(1);
    expect(r.stderr).toMatch(/array job \d+ still has tasks queued or running/);
    expect(r.sbatch).toBe('');
  });

  it('resubmit with every partial present submits the merge alone', () => {
    const r = run(['resubmit'], { FAKE_MISSING: '' });
    expect(r.status).toBe(0);
    const calls = r.sbatch.split('--- end\n').filter(Boolean);
    expect(calls).toHaveLength(1);
    expect(calls[0]).not.toContain('--dependency');
    expect(calls[0]).toContain('finish');
  });

  it('task K and finish run here without Slurm', () => {
    const t = run(['task', '3']);
    expect(t.status).toBe(0);
    expect(t.node).toContain('--part 3 --of 4');
    const f = run(['finish']);
    expect(f.status).toBe(0);
    const lines = f.node.trim().split('\n');
    expect(lines[0]).toBe(`${BASE.posterity} merge ${work}/partials --out ${work}/merged`);
    expect(lines[1]).toBe(`${BASE.posterity} build ${join(dir, 'bundle')} --out ${join(dir, 'site')} --summaries ${work}/merged`);
  });

  it('an unknown subcommand is a usage error', () => {
    expect(run(['frobnicate']).status).toBe(2);
  });
});

describe('posterity cluster-script', () => {
  const cli = (args: string[]) =>
    spawnSync(process.execPath, [join(PROJECT_ROOT, 'scripts', 'posterity.mjs'), 'cluster-script', ...args], { encoding: 'utf8', cwd: tmpdir() });
  let dir: string;
  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'posterity-cs-'));
    mkdirSync(join(dir, 'bundle'));
    writeFileSync(join(dir, 'bundle', 'release.json'), '{}');
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('writes an executable script with absolute paths', () => {
    const out = join(dir, 'run.sh');
    const r = cli([join(dir, 'bundle'), '--parts', '3', '--out', out, '--work', join(dir, 'w'), '--partition', 'debug', '--mem', '1G', '--cpus', '1', '--time', '00:10:00']);
    expect(r.stderr).toContain('submit with: bash');
    expect(r.status).toBe(0);
    expect(statSync(out).mode & 0o111).not.toBe(0);
    const text = readFileSync(out, 'utf8');
    expect(directives(text)).toEqual(expect.arrayContaining(['--array=0-2', '--partition=debug', '--mem=1G', '--cpus-per-task=1', '--time=00:10:00']));
    expect(text).toContain(`NODE=${process.execPath}`);
    expect(text).toContain(`POSTERITY=${join(PROJECT_ROOT, 'scripts', 'posterity.mjs')}`);
    expect(text).toContain(`SITE=${join(dir, 'w', 'site')}`);
  });

  it('prints the script when --out is not given', () => {
    const r = cli([join(dir, 'bundle'), '--parts', '2']);
    expect(r.status).toBe(0);
    expect(r.stdout).toContain('#SBATCH --array=0-1');
  });

  it('exit 2 for usage errors, 1 for a missing bundle', () => {
    expect(cli([join(dir, 'bundle')]).status).toBe(2);
    const bad = cli([join(dir, 'bundle'), '--parts', 'four']);
    expect(bad.status).toBe(2);
    expect(bad.stderr).toContain('--parts');
    const t = cli([join(dir, 'bundle'), '--parts', '2', '--time', 'soon']);
    expect(t.status).toBe(2);
    expect(t.stderr).toContain('--time');
    const m = cli([join(dir, 'nothing'), '--parts', '2']);
    expect(m.status).toBe(1);
    expect(m.stderr).toContain('nothing');
  });
});
