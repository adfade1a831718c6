/**
 * The Slurm job-array script written by `posterity cluster-script`.
 *
 * One file plays both parts. Run with `bash` on a login node it submits itself as an array
 * of N `summarise` tasks (its own `#SBATCH` lines) and then a merge-and-build job that
 * depends on the whole array (`--dependency=afterok:<array job id>`). Started by Slurm as an
 * array task (`SLURM_ARRAY_TASK_ID` set, no argument) it summarises that one part. Every
 * path in it is absolute and every resource came from an option, so it can be read, edited
 * and rerun as it is: `sbatch --array=K script.sh` reruns part K alone, and
 * `bash script.sh resubmit` submits only the parts whose partial is missing, then the merge.
 */
import { isAbsolute } from 'node:path';

export interface SlurmScriptOptions {
  /** Absolute path of the input bundle folder. */
  bundle: string;
  /** Number of array tasks (parts). */
  parts: number;
  /** Absolute working folder: partials/, merged/, logs/ and slurm/ go under it. */
  work: string;
  /** Absolute folder the release site is built into. */
  site: string;
  /** Absolute path of the node executable on the compute nodes. */
  node: string;
  /** Absolute path of `scripts/posterity.mjs`. */
  posterity: string;
  partition?: string;
  account?: string;
  /** Wall time of one summarise task, `[D-]HH:MM:SS`. */
  time: string;
  /** Memory of one summarise task, e.g. `4G`. */
  mem: string;
  cpus: number;
  /** Resources of the merge-and-build job (default: those of a task). */
  mergeTime?: string;
  mergeMem?: string;
  mergeCpus?: number;
  /** Prefix of the job names. */
  jobName: string;
}

export interface OptionProblem {
  option: string;
  message: string;
  got?: string;
}

/** Slurm's default MaxArraySize is 1001, so array indices up to 1000. */
export const DEFAULT_MAX_ARRAY_SIZE = 1001;

const TIME_RE = /^(?:(\d+)-)?(\d{1,2}):([0-5]\d):([0-5]\d)$/;
const MEM_RE = /^[1-9]\d*[KMGT]?$/;
const NAME_RE = /^[A-Za-z0-9_.+-]+$/;
/** Characters that would need quoting in an `#SBATCH` line or mean a filename pattern there. */
const PATH_BAD = /[\s'"\\$`%!*?[\]{}();&|<>#]/;

/** Every problem with the options, each naming the option. */
export function checkSlurmOptions(o: SlurmScriptOptions): OptionProblem[] {
  const out: OptionProblem[] = [];
  if (!Number.isInteger(o.parts) || o.parts < 1) out.push({ option: '--parts', message: 'expected a whole number of at least 1', got: String(o.parts) });
  else if (o.parts > DEFAULT_MAX_ARRAY_SIZE)
    out.push({ option: '--parts', message: `expected at most ${DEFAULT_MAX_ARRAY_SIZE} (Slurm's default MaxArraySize); use fewer, larger parts`, got: String(o.parts) });
  for (const [opt, v] of [['--time', o.time], ['--merge-time', o.mergeTime]] as const)
    if (v !== undefined && !TIME_RE.test(v)) out.push({ option: opt, message: 'expected HH:MM:SS or D-HH:MM:SS', got: v });
  for (const [opt, v] of [['--mem', o.mem], ['--merge-mem', o.mergeMem]] as const)
    if (v !== undefined && !MEM_RE.test(v)) out.push({ option: opt, message: 'expected a size such as 4G, 500M or 4000 (megabytes)', got: v });
  for (const [opt, v] of [['--cpus', o.cpus], ['--merge-cpus', o.mergeCpus]] as const)
    if (v !== undefined && (!Number.isInteger(v) || v < 1)) out.push({ option: opt, message: 'expected a whole number of at least 1', got: String(v) });
  for (const [opt, v] of [['--partition', o.partition], ['--account', o.account], ['--job-name', o.jobName]] as const)
    if (v !== undefined && !NAME_RE.test(v)) out.push({ option: opt, message: 'expected letters, digits and . _ + - only', got: v });
  for (const [opt, v] of [['<bundle>', o.bundle], ['--work', o.work], ['--site', o.site], ['--node', o.node], ['posterity', o.posterity]] as const) {
    if (!isAbsolute(v)) out.push({ option: opt, message: 'expected an absolute path', got: v });
    else if (PATH_BAD.test(v)) out.push({ option: opt, message: 'the path holds a space, quote, % or shell character that an #SBATCH line cannot carry; choose a plainer path', got: v });
  }
  return out;
}

/** Single-quoted for the shell. */
export function shellQuote(s: string): string {
  return /^[A-Za-z0-9_./:=+-]+$/.test(s) ? s : `'${s.replace(/'/g, `'\\''`)}'`;
}

function sbatchResources(o: { partition?: string; account?: string; time: string; mem: string; cpus: number }): string[] {
  const lines: string[] = [];
  if (o.partition) lines.push(`--partition=${o.partition}`);
  if (o.account) lines.push(`--account=${o.account}`);
  lines.push(`--time=${o.time}`, `--mem=${o.mem}`, `--cpus-per-task=${o.cpus}`, '--nodes=1', '--ntasks=1');
  return lines;
}

/** The script text. Options must have passed `checkSlurmOptions`. */
export function slurmScript(o: SlurmScriptOptions): string {
  const problems = checkSlurmOptions(o);
  if (problems.length) throw new Error(problems.map((p) => `${p.option}: ${p.message}${p.got !== undefined ? `, got ${p.got}` : ''}`).join('\n'));
  const last = o.parts - 1;
  const task = sbatchResources(o);
  const merge = sbatchResources({
    partition: o.partition,
    account: o.account,
    time: o.mergeTime ?? o.time,
    mem: o.mergeMem ?? o.mem,
    cpus: o.mergeCpus ?? o.cpus,
  });
  const q = shellQuote;
  return `#!/bin/bash
# Posterity on Slurm: summarise a bundle in ${o.parts} parts as a job array, then merge the
# partial summaries and build the release site in one job that waits for the whole array.
# Written by \`posterity cluster-script\`; every path is absolute, edit freely.
#
#   bash THIS                  submit the array and the dependent merge-and-build job
#   bash THIS resubmit         submit only the parts whose partial is missing, then merge and build
#   bash THIS status           list the parts done and missing
#   sbatch --array=K THIS      rerun part K alone (then: bash THIS resubmit)
#   bash THIS task K           run part K here, without Slurm
#   bash THIS finish           merge and build here, without Slurm
#
# A part writes its partial atomically (a temporary file renamed into place), so a task that
# fails or is killed leaves no partial, and the merge refuses a missing or foreign partial.
#
# The array tasks (these lines apply when Slurm runs this file):
#SBATCH --job-name=${o.jobName}-summarise
#SBATCH --array=0-${last}
${task.map((l) => `#SBATCH ${l}`).join('\n')}
#SBATCH --output=${o.work}/logs/summarise-%A_%a.out
set -euo pipefail

NODE=${q(o.node)}
POSTERITY=${q(o.posterity)}
BUNDLE=${q(o.bundle)}
PARTS=${o.parts}
CPUS=${o.cpus}
WORK=${q(o.work)}
SITE=${q(o.site)}
PARTIALS="$WORK/partials"
MERGED="$WORK/merged"
LOGS="$WORK/logs"
JOBS="$WORK/slurm/jobs.txt"

summarise_part() {
  "$NODE" "$POSTERITY" summarise "$BUNDLE" --part "$1" --of "$PARTS" --out "$PARTIALS" --workers "\${SLURM_CPUS_PER_TASK:-$CPUS}"
}

merge_and_build() {
  "$NODE" "$POSTERITY" merge "$PARTIALS" --out "$MERGED"
  "$NODE" "$POSTERITY" build "$BUNDLE" --out "$SITE" --summaries "$MERGED"
}

# parts whose partial is not there yet, comma-separated (empty when all are done)
missing_parts() {
  "$NODE" "$POSTERITY" merge "$PARTIALS" --missing --of "$PARTS" --bundle "$BUNDLE"
}

self() { readlink -f "\${BASH_SOURCE[0]}"; }

# the array job of the last submission, when some of its tasks are still queued or running
active_array() {
  local a
  a=$(tail -n 1 "$JOBS" 2>/dev/null | cut -d' ' -f2)
  if [ -n "$a" ] && [ -n "$(squeue -h -j "$a" -o %i 2>/dev/null)" ]; then echo "$a"; fi
}

prepare() { mkdir -p "$PARTIALS" "$LOGS" "$WORK/slurm"; }

# submit the merge-and-build job; $1: job id it waits for (optional)
submit_merge() {
  local dep=()
  if [ -n "\${1:-}" ]; then dep=(--dependency="afterok:$1" --kill-on-invalid-dep=yes); fi
  sbatch --parsable \${dep[@]+"\${dep[@]}"} <<EOF
#!/bin/bash
#SBATCH --job-name=${o.jobName}-build
${merge.map((l) => `#SBATCH ${l}`).join('\n')}
#SBATCH --output=$LOGS/merge-build-%j.out
set -euo pipefail
exec bash $(printf %q "$(self)") finish
EOF
}

# submit the array (all parts, or those given as "1,3,7"), then the merge that waits for it
submit() {
  prepare
  local array=()
  if [ -n "\${1:-}" ]; then array=(--array="$1"); fi
  local aj mj
  aj=$(sbatch --parsable \${array[@]+"\${array[@]}"} "$(self)")
  aj=\${aj%%;*}
  mj=$(submit_merge "$aj")
  mj=\${mj%%;*}
  echo "array $aj \${1:-0-$((PARTS - 1))} merge-build $mj" >> "$JOBS"
  echo "submitted array job $aj (parts \${1:-0-$((PARTS - 1))}) and merge-and-build job $mj (after $aj succeeds)"
  echo "logs: $LOGS   site: $SITE"
}

if [ $# -eq 0 ] && [ -n "\${SLURM_ARRAY_TASK_ID:-}" ]; then
  summarise_part "$SLURM_ARRAY_TASK_ID"
  exit
fi

case "\${1:-submit}" in
  submit) submit ;;
  resubmit)
    prepare
    a=$(active_array)
    if [ -n "$a" ]; then
      echo "array job $a still has tasks queued or running: wait for it (squeue -j $a) or cancel it (scancel $a)" >&2
      exit 1
    fi
    m=$(missing_parts)
    if [ -z "$m" ]; then
      mj=$(submit_merge)
      echo "all $PARTS partials present; submitted merge-and-build job \${mj%%;*}"
    else
      submit "$m"
    fi
    ;;
  status)
    m=$(missing_parts)
    if [ -z "$m" ]; then echo "all $PARTS parts done"; else echo "missing parts: $m"; fi
    ;;
  task)
    prepare
    summarise_part "\${2:?usage: bash $0 task K}"
    ;;
  finish) merge_and_build ;;
  *)
    echo "usage: bash $0 [submit|resubmit|status|task K|finish]" >&2
    exit 2
    ;;
esac
`;
}
