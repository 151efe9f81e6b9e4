// `siftpack task FILE --phase P [--index I]`: runs one task of the build's task plan (on a cluster node).
import type { CommandModule } from "yargs";
import { loadPipeline } from "../pipeline/load.js";
import { runTask } from "../engine/task.js";
import { SiftpackError } from "../errors.js";
import type { BuildProgress } from "../engine/progress.js";
import { progressDisplay } from "./progress.js";

interface Args {
  file: string;
  phase: string;
  index?: number;
  workers?: number;
  cache?: boolean;
  quiet?: boolean;
}

/** The task index: --index, else the scheduler's array index (Slurm job arrays, Kubernetes indexed Jobs). */
export function taskIndex(given: number | undefined, env: NodeJS.ProcessEnv = process.env): number {
  if (given !== undefined) return given;
  for (const name of ["SLURM_ARRAY_TASK_ID", "JOB_COMPLETION_INDEX"]) {
    const v = env[name];
    if (v === undefined || v === "") continue;
    if (!/^\d+$/.test(v)) throw new SiftpackError("SP_USAGE", `${name} is "${v}", not a task index`);
    return Number(v);
  }
  throw new SiftpackError("SP_USAGE", "no task index: give --index, or run under a scheduler that sets SLURM_ARRAY_TASK_ID or JOB_COMPLETION_INDEX");
}

export const taskCommand: CommandModule<object, Args> = {
  command: "task <file>",
  describe: "run one task of one phase of the build (see plan --tasks)",
  builder: (y) =>
    y
      .positional("file", { type: "string", demandOption: true, describe: "pipeline file" })
      .option("phase", { type: "string", demandOption: true, describe: "phase name, as plan --tasks lists them" })
      .option("index", { type: "number", describe: "task index (default: $SLURM_ARRAY_TASK_ID or $JOB_COMPLETION_INDEX)" })
      .option("workers", { type: "number", describe: "threads this task uses (default: the machine's cores)" })
      .option("cache", { type: "boolean", default: true, describe: "reuse per-file results of earlier builds" })
      .option("quiet", { type: "boolean", describe: "warnings and errors only: no progress lines, no closing table, log level warn (unless SIFTPACK_LOG is set)" }),
  handler: async (args) => {
    const index = taskIndex(args.index);
    // The same display as `run`: a task run by hand on a terminal shows its phase moving; under a
    // scheduler stderr is a file, which gets JSON lines with a "progress" line every ten seconds.
    const display = progressDisplay({ quiet: args.quiet });
    let finished = false;
    try {
      const p = await loadPipeline(args.file);
      const r = await runTask(p, args.phase, index, { log: display.log, onProgress: (b: BuildProgress) => display.update(b), workers: args.workers, cache: args.cache });
      display.finish(true);
      finished = true;
      process.stdout.write(`task ${index} of phase ${args.phase} done in ${r.done.seconds.toFixed(1)} s\n`);
    } finally {
      // Erases the progress lines before the error is printed; a failed task gets no table.
      if (!finished) display.finish(false);
    }
  },
};
