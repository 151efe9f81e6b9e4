// `siftpack plan FILE`: checks the pipeline file and everything a run needs from it, and prints the resolved plan, defaults filled in.
import type { CommandModule } from "yargs";
import { stringify } from "yaml";
import { displayPath } from "../pipeline/load.js";
import { checkPipeline, firstRowWarnings } from "../pipeline/preflight.js";
import { STAGES } from "../stages/index.js";
import { dirname, join, resolve, sep } from "node:path";
import { fileURLToPath } from "node:url";
import { planPhases } from "../engine/plan.js";
import { unitsOf } from "../engine/unit-io.js";
import { slurmFiles } from "../launch/emit-slurm.js";
import { kubernetesFiles } from "../launch/emit-kubernetes.js";
import { writeLaunchFiles } from "../launch/launch-file.js";
import type { StageEntry } from "../pipeline/config.js";
import { filterAssumptions } from "../filter/assumptions.js";
import type { Issue } from "../pipeline/schema.js";
import { estimateMixture, type MixtureEstimate } from "../engine/mixture-estimate.js";
import { table } from "./summary.js";

/** The mixture estimate as plain lines: what it is made from, and per source the expected tokens, factor and epochs. */
export function estimateLines(e: MixtureEstimate): string {
  let out = `mixture estimate (before the stages run: filtering and dedup will lower every figure): train tokens per source = input bytes / sampled bytes per token (${e.tokenizer})`;
  out += e.train_fraction < 1 ? ` × ${+e.train_fraction.toFixed(4)} (train's fraction of the split)\n` : "\n";
  out += `train budget ${e.train_tokens} tokens (${e.budget_from === "asked" ? "asked" : "the largest that repeats no source"})\n`;
  const rows: (string | number)[][] = [["source", "input bytes", "sample", "bytes/token", "est. train tokens", "share", "tokens asked", "factor (epochs)"]];
  for (const s of e.sources) rows.push([s.source, s.input_bytes, `${s.sample.records} records in ${s.sample.files} of ${s.files} files`, s.bytes_per_token.toFixed(2), s.train_tokens, `${(100 * s.share).toFixed(1)}%`, s.tokens_asked, s.epochs.toFixed(2)]);
  return out + table(rows).trimEnd().replace(/^/gm, "  ") + "\n";
}

interface Args {
  file: string;
  json?: boolean;
  tasks?: boolean;
  emit?: "slurm" | "kubernetes";
  to?: string;
  cpus?: number;
  partition?: string;
  time?: string;
  mem?: string;
  image?: string;
  claim?: string;
  mount?: string;
  parallelism?: number;
  wait?: string;
}

/** The deepest directory holding all of `dirs` (absolute): the default mount of the shared volume. */
export function commonDir(dirs: string[]): string {
  const parts = dirs.map((d) => resolve(d).split(sep));
  let n = 0;
  while (parts.every((p) => n < p.length && p[n] === parts[0][n])) n++;
  return parts[0].slice(0, n).join(sep) || sep;
}

/**
 * A stage's options with what its `explain` adds, split in two: keys the stage's schema accepts
 * (a default made explicit, such as best-fit's buffer_docs) join the settings; the rest (memory
 * bounds, probabilities) are figures derived from them, which a pipeline file may not hold.
 */
export function explainedStage(s: StageEntry): { settings: Record<string, unknown>; figures: Record<string, unknown> } {
  const def = STAGES[s.name];
  const issuesOf = (o: unknown) => {
    const issues: Issue[] = [];
    def.options.check(o, [], issues);
    return issues.length;
  };
  const settings: Record<string, unknown> = { ...s.options };
  const figures: Record<string, unknown> = {};
  const before = issuesOf(settings);
  for (const [k, v] of Object.entries(def.explain?.(s.options) ?? {})) {
    if (issuesOf({ ...settings, [k]: v }) === before) settings[k] = v;
    else figures[k] = v;
  }
  return { settings, figures };
}

/** How the nodes start siftpack: this installation's node and bin script (a shared install, or the same path in the image). */
const selfCommand = () => [process.execPath, fileURLToPath(new URL("../../bin/siftpack.js", import.meta.url))];

async function taskPlanOutput(args: Args): Promise<void> {
  const p = await checkPipeline(args.file);
  const plan = planPhases(p);
  const units = await unitsOf(p);
  const info = { pipeline: plan.pipeline, workDir: plan.workDir, outDir: plan.outDir, units: units.length, phases: plan.phases.map(({ name, tasks, summary }) => ({ name, tasks, summary })) };
  if (args.emit) {
    const dir = resolve(args.to ?? join(plan.workDir, "launch", args.emit));
    const files =
      args.emit === "slurm"
        ? slurmFiles(info, { command: selfCommand(), cpusPerTask: args.cpus ?? 2, partition: args.partition, time: args.time, mem: args.mem })
        : kubernetesFiles(info, {
            command: args.image ? ["siftpack"] : selfCommand(),
            image: args.image ?? "node:20",
            claim: args.claim ?? "siftpack-work",
            mountPath: args.mount ?? commonDir([dirname(plan.pipeline), plan.workDir, plan.outDir]),
            parallelism: args.parallelism ?? 8,
            cpu: String(args.cpus ?? 2),
            waitTimeout: args.wait ?? "24h",
          });
    for (const path of await writeLaunchFiles(dir, files)) process.stdout.write(`${displayPath(path)}\n`);
    return;
  }
  if (args.json) {
    process.stdout.write(JSON.stringify(info, null, 2) + "\n");
    return;
  }
  const parts = units.filter((u) => u.range).length;
  let out = `# task plan for ${displayPath(plan.pipeline)}: work directory ${displayPath(plan.workDir)}, output ${displayPath(plan.outDir)}\n`;
  out += `# ${units.length} unit${units.length === 1 ? "" : "s"} of work: ${units.length - parts} whole input file${units.length - parts === 1 ? "" : "s"}${parts ? `, ${parts} parts of JSONL files over cluster.unit_mb (${p.config.cluster.unit_mb} MB)` : ""}\n`;
  const w = Math.max(...plan.phases.map((ph) => ph.name.length));
  for (const ph of plan.phases) out += `${ph.name.padEnd(w)}  ${String(ph.tasks).padStart(5)} task${ph.tasks === 1 ? " " : "s"}  ${ph.summary}\n`;
  process.stdout.write(out);
}

export const planCommand: CommandModule<object, Args> = {
  command: "plan <file>",
  describe: "check a pipeline file and everything it names (inputs, protected and tokenizer files, output folder); print the resolved plan",
  builder: (y) =>
    y
      .positional("file", { type: "string", demandOption: true })
      .option("json", { type: "boolean", describe: "print the plan as JSON" })
      .option("tasks", { type: "boolean", describe: "print the phases of the build as tasks, with their task counts (cluster.tasks)" })
      .option("emit", { choices: ["slurm", "kubernetes"] as const, describe: "write launch files for a batch scheduler: sbatch scripts or indexed Job manifests, one per phase, and submit.sh" })
      .option("to", { type: "string", describe: "with --emit: the directory to write to (default: <work dir>/launch/<scheduler>)" })
      .option("cpus", { type: "number", describe: "with --emit: CPUs per task (default 2)" })
      .option("partition", { type: "string", describe: "with --emit slurm: the partition" })
      .option("time", { type: "string", describe: "with --emit slurm: time limit per task (sbatch --time)" })
      .option("mem", { type: "string", describe: "with --emit slurm: memory per node (sbatch --mem)" })
      .option("image", { type: "string", describe: "with --emit kubernetes: container image with siftpack installed (default node:20 running this installation's path)" })
      .option("claim", { type: "string", describe: "with --emit kubernetes: PersistentVolumeClaim of the shared volume (default siftpack-work)" })
      .option("mount", { type: "string", describe: "with --emit kubernetes: where the volume is mounted (default: the deepest directory holding the pipeline file, the work directory and the output)" })
      .option("parallelism", { type: "number", describe: "with --emit kubernetes: pods of a phase at once (default 8)" })
      .option("wait", { type: "string", describe: "with --emit kubernetes: how long submit.sh waits for a phase (default 24h)" }),
  handler: async (args) => {
    if (args.tasks || args.emit) return taskPlanOutput(args);
    // Every problem a run would meet before reading records, at once (exit 2 or 1 listing each).
    const p = await checkPipeline(args.file);
    const files = p.inputs;
    const warnings = await firstRowWarnings(p);
    const explained = p.config.stages.map(explainedStage);
    const stages = p.config.stages.map((s, i) => ({ [s.name]: explained[i].settings }));
    // Derived figures apart from the settings, so that the printed settings are a valid pipeline file.
    const derived = p.config.stages.map((s, i) => ({ stage: i + 1, name: s.name, ...explained[i].figures })).filter((d) => Object.keys(d).length > 2);
    // What the mixture's shares are expected to cost, from a sample of each source (an estimate, said as such).
    const estimate = await estimateMixture(p);
    if (estimate) warnings.push(...estimate.warnings);
    const plan = { pipeline: displayPath(p.file), hash: p.hash, ...p.config, output: { ...p.config.output, resolved_dir: displayPath(p.outDir) }, stages, derived, inputs: files, ...(estimate ? { mixture_estimate: estimate } : {}), ...(warnings.length ? { warnings } : {}) };
    if (args.json) {
      process.stdout.write(JSON.stringify(plan, null, 2) + "\n");
      return;
    }
    let out = `# plan for ${plan.pipeline} (pipeline hash ${p.hash}); output to ${plan.output.resolved_dir}\n`;
    out += p.config.stages.map((s, i) => `# ${i + 1}. ${s.name}: ${STAGES[s.name].summary}`).join("\n") + "\n";
    out += filterAssumptions(p.config.stages).map((l) => `# ${l}\n`).join("");
    out += stringify({ siftpack: 1, seed: p.config.seed, max_bad_fraction: p.config.max_bad_fraction, sources: p.config.sources, ...(p.config.mixture ? { mixture: p.config.mixture } : {}), stages, output: p.config.output });
    if (derived.length > 0) {
      out += "# derived from the settings above (figures, not keys of a pipeline file):\n";
      out += stringify(Object.fromEntries(derived.map(({ stage, name, ...f }) => [`${stage}. ${name}`, f]))).replace(/^/gm, "#   ").replace(/#   $/, "");
    }
    out += "# input files\n";
    for (const [name, list] of Object.entries(files)) out += `#   ${name}: ${list.length} file${list.length === 1 ? "" : "s"}${list.length ? ` (${list.slice(0, 3).join(", ")}${list.length > 3 ? ", …" : ""})` : ""}\n`;
    if (estimate) out += estimateLines(estimate).trimEnd().replace(/^/gm, "# ") + "\n";
    // Comments like the rest, so the output stays a valid pipeline file.
    for (const w of warnings) out += `# warning: ${w}\n`;
    process.stdout.write(out);
  },
};
