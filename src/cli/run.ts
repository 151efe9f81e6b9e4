// `siftpack run FILE`: builds the dataset and prints a summary.
import type { CommandModule } from "yargs";
import { loadPipeline, displayPath } from "../pipeline/load.js";
import { runPipeline } from "../pipeline/run.js";
import { makeLogger } from "./log.js";
import { clearProgress, progressLine } from "./progress.js";
import { formatSummary } from "./summary.js";

interface Args {
  file: string;
  out?: string;
  workers?: number;
  json?: boolean;
}

export const runCommand: CommandModule<object, Args> = {
  command: "run <file>",
  describe: "build the dataset described by a pipeline file",
  builder: (y) =>
    y
      .positional("file", { type: "string", demandOption: true, describe: "pipeline file (YAML or JSON)" })
      .option("out", { type: "string", describe: "output directory (overrides output.dir)" })
      .option("workers", { type: "number", describe: "worker threads (the build currently runs on one)" })
      .option("json", { type: "boolean", describe: "print the manifest's counts as JSON" }),
  handler: async (args) => {
    const log = makeLogger();
    const pipeline = await loadPipeline(args.file, { outDir: args.out });
    const onProgress = progressLine();
    try {
      const { manifest, outDir } = await runPipeline(pipeline, { log, onProgress });
      clearProgress();
      if (args.json) process.stdout.write(JSON.stringify({ dir: outDir, build_hash: manifest.build_hash, records: manifest.records, splits: manifest.splits }, null, 2) + "\n");
      else process.stdout.write(formatSummary(displayPath(outDir), manifest));
    } finally {
      clearProgress();
    }
  },
};
