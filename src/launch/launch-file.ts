// Launch files for a cluster scheduler: their shape, the checks and shell quoting the emitters share, and writing them to a folder.
import { chmod, mkdir, rename, unlink, writeFile } from "node:fs/promises";
import { isAbsolute, join } from "node:path";
import { SiftpackError, describeSystemError } from "../errors.js";
import type { TaskPlan } from "../engine/plan-types.js";

export interface LaunchFile {
  /** A bare file name (no folder), e.g. `01-read.sbatch`. */
  name: string;
  content: string;
  /** Written with mode 0755 (scripts run by hand, such as submit.sh). */
  executable?: boolean;
}

/**
 * Writes every file into `dir` (created if missing), each under a temporary name first and then renamed,
 * so a scheduler or a person never sees half a script. Returns the paths written, in the order given.
 */
export async function writeLaunchFiles(dir: string, files: LaunchFile[]): Promise<string[]> {
  for (const f of files) {
    if (!isBareName(f.name)) throw new Error(`launch file name ${JSON.stringify(f.name)} is not a bare file name`);
  }
  try {
    await mkdir(dir, { recursive: true });
  } catch (err) {
    throw new SiftpackError("SP_OUTPUT", `cannot create ${dir} for the launch files: ${describeSystemError(err)}`, { cause: err });
  }
  const paths: string[] = [];
  for (const f of files) {
    const path = join(dir, f.name);
    const tmp = join(dir, `.${f.name}.${process.pid}.tmp`);
    try {
      await writeFile(tmp, f.content);
      // After writeFile: its mode argument is reduced by the umask, chmod is not.
      if (f.executable) await chmod(tmp, 0o755);
      await rename(tmp, path);
    } catch (err) {
      await unlink(tmp).catch(() => {});
      throw new SiftpackError("SP_OUTPUT", `cannot write launch file ${path}: ${describeSystemError(err)}`, { cause: err });
    }
    paths.push(path);
  }
  return paths;
}

const isBareName = (name: string) => /^[A-Za-z0-9][A-Za-z0-9._-]*$/.test(name);

/** Words that mean the same quoted or not in POSIX sh; anything else is single-quoted. */
const SHELL_PLAIN = /^[A-Za-z0-9_@%+=:,./-]+$/;

/**
 * Quotes one word for POSIX sh (and bash): inside single quotes nothing is special except `'` itself,
 * which is written as `'\''` (close, escaped quote, reopen).
 */
export function shellQuote(word: string): string {
  if (SHELL_PLAIN.test(word)) return word;
  return `'${word.replace(/'/g, `'\\''`)}'`;
}

/** Quotes each word and joins them with spaces: a command line that sh splits back into exactly these words. */
export function shellCommand(words: readonly string[]): string {
  return words.map(shellQuote).join(" ");
}

/** Phase file names, job names and `--phase` values come from phase names: they must be plain words. */
const PHASE_NAME = /^[A-Za-z0-9][A-Za-z0-9_-]*$/;

/**
 * Checks what both emitters rely on. A bad plan is a bug of the planner (a plain Error); a bad command
 * is the caller's option (SP_USAGE).
 */
export function checkPlanForLaunch(plan: TaskPlan, command: readonly string[]): void {
  for (const [key, path] of [["pipeline", plan.pipeline], ["workDir", plan.workDir], ["outDir", plan.outDir]] as const) {
    if (!isAbsolute(path)) throw new Error(`task plan ${key} must be an absolute path, got ${JSON.stringify(path)}`);
  }
  if (plan.phases.length === 0) throw new Error("task plan has no phases");
  const seen = new Set<string>();
  for (const p of plan.phases) {
    if (!PHASE_NAME.test(p.name)) throw new Error(`task plan phase name ${JSON.stringify(p.name)} is not a plain word (letters, digits, - and _)`);
    if (seen.has(p.name)) throw new Error(`task plan names phase ${p.name} twice`);
    seen.add(p.name);
    if (!Number.isInteger(p.tasks) || p.tasks < 1) throw new Error(`task plan phase ${p.name} has ${p.tasks} tasks; expected a whole number ≥ 1`);
  }
  if (command.length === 0 || command.some((w) => w === "")) {
    throw new SiftpackError("SP_USAGE", `the command that runs siftpack on the nodes must be one or more non-empty words, got ${JSON.stringify(command)}`);
  }
}

/** `01`, `02`, … : phase numbers as they appear in file names, so that files sort in phase order. */
export function phaseNumber(i: number, count: number): string {
  return String(i + 1).padStart(Math.max(2, String(count).length), "0");
}

/** A phase summary as one comment line: no line breaks can end the comment early. */
export function commentLine(text: string): string {
  return text.replace(/\s+/g, " ").trim();
}

/** submit.sh's optional first argument, the phase to start at (1–n): read into $first, exit 2 when it is not one. */
export function firstPhaseArgument(n: number): string[] {
  const usage = `echo "usage: $0 [FIRST]  (FIRST = 1-${n}, the phase to start at)" >&2; exit 2`;
  return ["first=${1:-1}", "case $first in", `  '' | *[!0-9]*) ${usage} ;;`, "esac", `if [ "$first" -lt 1 ] || [ "$first" -gt ${n} ]; then ${usage}; fi`];
}
