/**
 * A throwaway one-node Slurm cluster for tests, from Debian's `slurm-wlm` and `munge`:
 * munged on its own key and socket, slurmctld and slurmd on loopback ports, all state,
 * spool, logs and pid files in one temporary folder. Needs root. Nothing outside the
 * folder is touched (no /etc/munge, no /etc/slurm), so a system Slurm, if any, is left alone.
 */
import { spawnSync } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { chmodSync, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { availableParallelism, hostname, tmpdir, totalmem } from 'node:os';
import { join } from 'node:path';

export const SLURM_BINARIES = ['/usr/sbin/munged', '/usr/sbin/slurmctld', '/usr/sbin/slurmd', '/usr/bin/sbatch', '/usr/bin/scontrol', '/usr/bin/scancel'];

/** Why a Slurm cluster cannot be started here, or null when it can be tried. */
export function slurmUnavailable(): string | null {
  if (process.platform !== 'linux') return 'Slurm needs Linux';
  if (typeof process.getuid !== 'function' || process.getuid() !== 0) return 'starting munged, slurmctld and slurmd needs root';
  const missing = SLURM_BINARIES.filter((b) => !existsSync(b));
  if (missing.length) return `missing ${missing.join(', ')} (apt-get install slurm-wlm munge)`;
  return null;
}

function freePort(): Promise<number> {
  return new Promise((ok, fail) => {
    const s = createServer();
    s.once('error', fail);
    s.listen(0, '127.0.0.1', () => {
      const port = (s.address() as { port: number }).port;
      s.close(() => ok(port));
    });
  });
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

export interface JobInfo {
  state: string;
  exitCode: string;
  reason: string;
}

export class SlurmCluster {
  readonly dir: string;
  readonly conf: string;
  readonly node: string;
  private readonly run: string;
  private readonly log: string;
  private started: string[] = [];

  private constructor(dir: string) {
    this.dir = dir;
    this.run = join(dir, 'run');
    this.log = join(dir, 'log');
    this.conf = join(dir, 'slurm.conf');
    this.node = hostname().split('.')[0];
  }

  /** Environment for Slurm commands run against this cluster. */
  get env(): NodeJS.ProcessEnv {
    return { ...process.env, SLURM_CONF: this.conf };
  }

  /** Starts munged, slurmctld and slurmd; resolves when the node is idle. Throws with the daemons' logs if not. */
  static async start(opts: { timeoutMs?: number } = {}): Promise<SlurmCluster> {
    const dir = mkdtempSync(join(tmpdir(), 'posterity-slurm-'));
    const c = new SlurmCluster(dir);
    // a test runner that exits early still stops the daemons (stop is idempotent)
    process.once('exit', () => c.stop());
    try {
      await c.boot(opts.timeoutMs ?? 60_000);
      return c;
    } catch (e) {
      const logs = c.logs();
      c.stop();
      throw new Error(`${(e as Error).message}\n${logs}`);
    }
  }

  private async boot(timeoutMs: number): Promise<void> {
    const key = join(this.dir, 'key');
    for (const d of [this.run, this.log, join(this.dir, 'state'), join(this.dir, 'spool')]) mkdirSync(d, { recursive: true });
    mkdirSync(key, { mode: 0o700 });
    // munged wants the socket's folders executable by everyone
    chmodSync(this.dir, 0o755);
    chmodSync(this.run, 0o755);
    writeFileSync(join(key, 'munge.key'), randomBytes(1024), { mode: 0o600 });
    const socket = join(this.run, 'munge.socket');
    this.daemon('munged', '/usr/sbin/munged', [
      `--socket=${socket}`,
      `--key-file=${join(key, 'munge.key')}`,
      `--seed-file=${join(key, 'munged.seed')}`,
      `--pid-file=${join(this.run, 'munged.pid')}`,
      `--log-file=${join(this.log, 'munged.log')}`,
    ]);

    const [ctldPort, slurmdPort] = [await freePort(), await freePort()];
    const cpus = Math.max(1, Math.min(2, availableParallelism()));
    const memMb = Math.max(512, Math.floor((totalmem() / 2 ** 20) * 0.8));
    const conf = [
      'ClusterName=posteritytest',
      `SlurmctldHost=${this.node}(127.0.0.1)`,
      `SlurmctldPort=${ctldPort}`,
      `SlurmdPort=${slurmdPort}`,
      'AuthType=auth/munge',
      'CredType=cred/munge',
      `AuthInfo=socket=${socket}`,
      'SlurmUser=root',
      'SlurmdUser=root',
      `StateSaveLocation=${join(this.dir, 'state')}`,
      `SlurmdSpoolDir=${join(this.dir, 'spool')}`,
      `SlurmctldPidFile=${join(this.run, 'slurmctld.pid')}`,
      `SlurmdPidFile=${join(this.run, 'slurmd.pid')}`,
      `SlurmctldLogFile=${join(this.log, 'slurmctld.log')}`,
      `SlurmdLogFile=${join(this.log, 'slurmd.log')}`,
      'ProctrackType=proctrack/linuxproc',
      'TaskPlugin=task/none',
      'SelectType=select/cons_tres',
      'SelectTypeParameters=CR_Core',
      'MpiDefault=none',
      'ReturnToService=2',
      'AccountingStorageType=accounting_storage/none',
      'JobAcctGatherType=jobacct_gather/none',
      'JobCompType=jobcomp/none',
      'SchedulerType=sched/backfill',
      'InactiveLimit=0',
      'KillWait=5',
      // keep finished jobs visible to `scontrol show job` for the whole test
      'MinJobAge=600',
      `NodeName=${this.node} NodeAddr=127.0.0.1 CPUs=${cpus} RealMemory=${memMb} State=UNKNOWN`,
      `PartitionName=debug Nodes=${this.node} Default=YES MaxTime=INFINITE State=UP`,
      '',
    ].join('\n');
    writeFileSync(this.conf, conf);
    this.daemon('slurmctld', '/usr/sbin/slurmctld', ['-f', this.conf]);
    this.daemon('slurmd', '/usr/sbin/slurmd', ['-f', this.conf, '-N', this.node]);

    const t0 = Date.now();
    let last = '';
    while (Date.now() - t0 < timeoutMs) {
      const r = spawnSync('/usr/bin/scontrol', ['show', 'node', this.node], { encoding: 'utf8', env: this.env, timeout: 10_000 });
      last = (r.stdout ?? '') + (r.stderr ?? '');
      const state = /State=(\S+)/.exec(last)?.[1] ?? '';
      if (state.startsWith('IDLE')) return;
      await sleep(500);
    }
    throw new Error(`the Slurm node did not become idle within ${timeoutMs / 1000} s; last "scontrol show node":\n${last}`);
  }

  private daemon(name: string, bin: string, args: string[]): void {
    const r = spawnSync(bin, args, { encoding: 'utf8', env: this.env, timeout: 30_000 });
    this.started.push(name);
    if (r.status !== 0) throw new Error(`${name} did not start (exit ${r.status}): ${r.stderr || r.stdout}`);
  }

  /** Runs a Slurm client command (sbatch, scontrol, scancel) against this cluster. */
  cmd(bin: string, args: string[], opts: { cwd?: string } = {}): { status: number | null; stdout: string; stderr: string } {
    const r = spawnSync(bin, args, { encoding: 'utf8', env: this.env, timeout: 30_000, cwd: opts.cwd });
    return { status: r.status, stdout: r.stdout ?? '', stderr: r.stderr ?? '' };
  }

  /** States of a job, or of every task of an array job, from `scontrol show job` (no accounting needed). */
  jobs(id: string): JobInfo[] {
    const r = this.cmd('/usr/bin/scontrol', ['show', 'job', id]);
    if (r.status !== 0) return [];
    return r.stdout
      .split(/\n\s*\n/)
      .filter((b) => b.includes('JobId='))
      .map((b) => ({ state: /JobState=(\S+)/.exec(b)?.[1] ?? '?', exitCode: /ExitCode=(\S+)/.exec(b)?.[1] ?? '?', reason: /Reason=(\S+)/.exec(b)?.[1] ?? '' }));
  }

  /** Waits until the job (every task of it) has ended; returns the final states. */
  async waitFor(id: string, timeoutMs: number): Promise<JobInfo[]> {
    const done = new Set(['COMPLETED', 'FAILED', 'CANCELLED', 'TIMEOUT', 'OUT_OF_MEMORY', 'NODE_FAIL', 'PREEMPTED', 'BOOT_FAIL', 'DEADLINE']);
    const t0 = Date.now();
    let jobs: JobInfo[] = [];
    while (Date.now() - t0 < timeoutMs) {
      jobs = this.jobs(id);
      if (jobs.length && jobs.every((j) => done.has(j.state))) return jobs;
      await sleep(1000);
    }
    throw new Error(`job ${id} had not ended after ${timeoutMs / 1000} s: ${JSON.stringify(jobs)}`);
  }

  /** The daemons' log tails, for failure messages. */
  logs(): string {
    const out: string[] = [];
    for (const f of ['munged.log', 'slurmctld.log', 'slurmd.log']) {
      const p = join(this.log, f);
      if (existsSync(p)) out.push(`--- ${f}\n${readFileSync(p, 'utf8').split('\n').slice(-25).join('\n')}`);
    }
    return out.join('\n');
  }

  /** Cancels every job, stops the daemons by their pid files (TERM, then KILL) and removes the folder. */
  stop(): void {
    if (existsSync(this.conf) && existsSync(join(this.run, 'slurmctld.pid'))) this.cmd('/usr/bin/scancel', ['--user=root']);
    for (const name of ['slurmd', 'slurmctld', 'munged']) {
      const pidFile = join(this.run, `${name}.pid`);
      if (!existsSync(pidFile)) continue;
      const pid = Number(readFileSync(pidFile, 'utf8').trim());
      if (!Number.isInteger(pid) || pid <= 1) continue;
      // only the daemon this cluster started: a stale pid file may name another process by now
      const comm = existsSync(`/proc/${pid}/comm`) ? readFileSync(`/proc/${pid}/comm`, 'utf8').trim() : '';
      if (comm !== name) continue;
      try {
        process.kill(pid, 'SIGTERM');
      } catch {
        continue;
      }
      const t0 = Date.now();
      while (Date.now() - t0 < 10_000) {
        try {
          process.kill(pid, 0);
        } catch {
          break;
        }
        spawnSync('sleep', ['0.2']);
      }
      try {
        process.kill(pid, 'SIGKILL');
      } catch {
        /* gone */
      }
    }
    rmSync(this.dir, { recursive: true, force: true });
  }
}
