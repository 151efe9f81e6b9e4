// `siftpack plan FILE`: validates the pipeline file and prints the resolved plan, defaults filled in.
import type { CommandModule } from "yargs";
import { stringify } from "yaml";
import { loadPipeline, displayPath } from "../pipeline/load.js";
import { listFiles } from "../sources/source.js";
import { STAGES } from "../stages/index.js";

interface Args {
  file: string;
  json?: boolean;
}

export const planCommand: CommandModule<object, Args> = {
  command: "plan <file>",
  describe: "validate a pipeline file and print the resolved plan",
  builder: (y) =>
    y.positional("file", { type: "string", demandOption: true }).option("json", { type: "boolean", describe: "print the plan as JSON" }),
  handler: async (args) => {
    const p = await loadPipeline(args.file);
    const files: Record<string, string[]> = {};
    for (const s of p.config.sources) files[s.name] = await listFiles(s, p.baseDir);
    const stages = p.config.stages.map((s) => ({ [s.name]: { ...s.options, ...(STAGES[s.name].explain?.(s.options) ?? {}) } }));
    const plan = { pipeline: displayPath(p.file), hash: p.hash, ...p.config, output: { ...p.config.output, resolved_dir: displayPath(p.outDir) }, stages, inputs: files };
    if (args.json) {
      process.stdout.write(JSON.stringify(plan, null, 2) + "\n");
      return;
    }
    let out = `# plan for ${plan.pipeline} (pipeline hash ${p.hash}); output to ${plan.output.resolved_dir}\n`;
    out += p.config.stages.map((s, i) => `# ${i + 1}. ${s.name}: ${STAGES[s.name].summary}`).join("\n") + "\n";
    out += stringify({ siftpack: 1, seed: p.config.seed, max_bad_fraction: p.config.max_bad_fraction, sources: p.config.sources, stages, output: p.config.output });
    out += "# input files\n";
    for (const [name, list] of Object.entries(files)) out += `#   ${name}: ${list.length} file${list.length === 1 ? "" : "s"}${list.length ? ` (${list.slice(0, 3).join(", ")}${list.length > 3 ? ", …" : ""})` : ""}\n`;
    process.stdout.write(out);
  },
};
