// Slurm launch files for a task plan: one sbatch array script per phase and a submit.sh that chains them.
//
// Every option written here is checked against the sbatch(1) man page of Slurm 22.05 (Debian 12's
// slurm-client 22.05.8), and only those options are used; SBATCH_OPTIONS lists them so a test can
// check the scripts and the README against each other. Options given to sbatch on the command line
// override the scripts' (sbatch(1), "INPUT ENVIRONMENT VARIABLES"): `sbatch --array=3 FILE` re-runs one task.
import { SiftpackError } from "../errors.js";
import { checkPlanForLaunch, commentLine, firstPhaseArgument, phaseNumber, shellCommand, shellQuote, type LaunchFile } from "./launch-file.js";
import type { TaskPlan } from "../engine/plan-types.js";

export interface SlurmOptions {
  /** How to invoke siftpack on the nodes, e.g. `["node", "/abs/path/bin/siftpack.js"]`. */
  command: string[];
  cpusPerTask: number;
  partition?: string;
  time?: string;
  mem?: string;
}

/**
 * The sbatch options siftpack writes, in the scripts' `#SBATCH` lines or on submit.sh's sbatch command
 * lines (sbatch(1) man page, Slurm 22.05). The README's cluster section lists the same set.
 */
export const SBATCH_OPTIONS = [
  "--job-name",
  "--array",
  "--output",
  "--cpus-per-task",
  "--kill-on-invalid-dep",
  "--partition",
  "--time",
  "--mem",
  "--parsable",
  "--dependency",
] as const;

export type SbatchOption = (typeof SBATCH_OPTIONS)[number];

/** Where the array tasks' output goes, relative to the work directory (submit.sh creates it: Slurm does not). */
export const SLURM_LOG_DIR = "logs/slurm";

export function slurmFiles(plan: TaskPlan, o: SlurmOptions): LaunchFile[] {
  checkPlanForLaunch(plan, o.command);
  checkSlurmOptions(plan, o);
  const scripts = plan.phases.map((phase, i) => {
    const nn = phaseNumber(i, plan.phases.length);
    return { nn, name: `${nn}-${phase.name}.sbatch`, content: phaseScript(plan, o, i) };
  });
  return [
    ...scripts.map((s) => ({ name: s.name, content: s.content })),
    { name: "submit.sh", content: submitScript(plan, o, scripts), executable: true },
  ];
}

function phaseScript(plan: TaskPlan, o: SlurmOptions, i: number): string {
  const phase = plan.phases[i];
  const directives: [SbatchOption, string][] = [
    ["--job-name", `siftpack-${phase.name}`],
    // Always an array, even of one task, so SLURM_ARRAY_TASK_ID is always set. One task is written as the
    // single index 0: the man page shows ranges and lists, and a lone value is the plainest form of both.
    ["--array", phase.tasks === 1 ? "0" : `0-${phase.tasks - 1}`],
    // %x = job name, %a = array index (sbatch(1), "filename pattern"); a literal % in the path is %%.
    ["--output", `${plan.workDir.replace(/%/g, "%%")}/${SLURM_LOG_DIR}/%x-%a.out`],
    ["--cpus-per-task", String(o.cpusPerTask)],
    // When a task of the phase before fails, afterok can never be met: cancel this job rather than
    // leave it pending forever with reason DependencyNeverSatisfied (sbatch(1), Slurm 22.05).
    ["--kill-on-invalid-dep", "yes"],
  ];
  if (o.partition !== undefined) directives.push(["--partition", o.partition]);
  if (o.time !== undefined) directives.push(["--time", o.time]);
  if (o.mem !== undefined) directives.push(["--mem", o.mem]);
  const n = plan.phases.length;
  return [
    "#!/bin/sh",
    // sbatch reads #SBATCH lines only before the first command of the script (sbatch(1)): directives first.
    ...directives.map(([opt, value]) => `#SBATCH ${opt}=${value}`),
    `# Phase ${i + 1} of ${n} (${phase.name}, ${phase.tasks} ${phase.tasks === 1 ? "task" : "tasks"}) of ${commentLine(plan.pipeline)}:`,
    `#   ${commentLine(phase.summary)}`,
    "# Written by `siftpack plan --emit slurm`; submit.sh beside it submits the phases in order.",
    "# `siftpack task` takes its index from SLURM_ARRAY_TASK_ID. Re-run one task: sbatch --array=INDEX THIS-FILE",
    `exec ${shellCommand([...o.command, "task", plan.pipeline, "--phase", phase.name])}`,
    "",
  ].join("\n");
}

function submitScript(plan: TaskPlan, o: SlurmOptions, scripts: { nn: string; name: string }[]): string {
  const n = scripts.length;
  const statusHint = `progress: ${shellCommand([...o.command, "status", plan.workDir])}`;
  return [
    "#!/bin/sh",
    `# Submits the ${n} phases of ${commentLine(plan.pipeline)} to Slurm, each to start when every task of`,
    "# the phase before it has succeeded. Written by `siftpack plan --emit slurm`.",
    `# Usage: submit.sh [FIRST]   start at phase FIRST (1-${n}, default 1), e.g. after re-running a failed phase's tasks.`,
    "set -eu",
    'here=$(cd "$(dirname "$0")" && pwd)',
    ...firstPhaseArgument(n),
    "",
    "# Slurm does not create the folder of --output: a task whose log cannot be opened fails.",
    `mkdir -p ${shellQuote(`${plan.workDir}/${SLURM_LOG_DIR}`)}`,
    "",
    "prev=",
    "submit() { # $1 = phase number, $2 = sbatch script beside this file",
    '  if [ "$1" -lt "$first" ]; then return 0; fi',
    '  if [ -z "$prev" ]; then',
    '    out=$(sbatch --parsable "$here/$2")',
    "  else",
    "    # afterok on an array job's id waits for all of its tasks (from memory of Slurm's job array guide;",
    "    # seen on a single-node Slurm 22.05).",
    '    out=$(sbatch --parsable --dependency=afterok:"$prev" "$here/$2")',
    "  fi",
    '  prev=${out%%;*}   # --parsable prints "jobid" or "jobid;cluster" (sbatch(1))',
    `  printf 'submitted %s as job %s\\n' "$2" "$prev"`,
    "}",
    "",
    ...scripts.map((s) => `submit ${s.nn} ${shellQuote(s.name)}`),
    "",
    `echo 'queue: squeue -u "$USER"'`,
    `printf '%s\\n' ${shellQuote(statusHint)}`,
    "",
  ].join("\n");
}

/** Values of #SBATCH lines are not shell words: sbatch splits them itself, and its man page documents no quoting. */
const DIRECTIVE_SAFE = /^[^\s"'\\#]+$/;

function checkSlurmOptions(plan: TaskPlan, o: SlurmOptions): void {
  if (!Number.isInteger(o.cpusPerTask) || o.cpusPerTask < 1) {
    throw new SiftpackError("SP_USAGE", `CPUs per task must be a whole number ≥ 1, got ${o.cpusPerTask}`);
  }
  for (const [what, value] of [["partition", o.partition], ["time", o.time], ["mem", o.mem]] as const) {
    if (value !== undefined && !DIRECTIVE_SAFE.test(value)) {
      throw new SiftpackError("SP_USAGE", `Slurm ${what} ${JSON.stringify(value)} cannot go into an #SBATCH line: no spaces, quotes, backslashes or #`);
    }
  }
  // A backslash in an output pattern switches off every %-symbol (sbatch(1), "filename pattern").
  if (!DIRECTIVE_SAFE.test(plan.workDir)) {
    throw new SiftpackError(
      "SP_USAGE",
      `the work directory ${JSON.stringify(plan.workDir)} cannot go into an #SBATCH --output line: choose a work_dir without spaces, quotes, backslashes or #`,
    );
  }
}
