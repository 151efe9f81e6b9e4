// `siftpack init FILES…`: looks at a sample of the files and writes a commented pipeline file for them.
import { writeFile } from "node:fs/promises";
import type { CommandModule } from "yargs";
import { SiftpackError, describeSystemError } from "../errors.js";
import { propose } from "../init/propose.js";

interface Args {
  files: string[];
  out: string;
  force?: boolean;
  rows: number;
}

export const initCommand: CommandModule<object, Args> = {
  command: "init <files..>",
  describe: "propose a pipeline file for your data: recognises format and compression, picks the text, id and metadata fields",
  builder: (y) =>
    y
      .positional("files", { type: "string", array: true, demandOption: true, describe: "input files (a shell glob works)" })
      .option("out", { type: "string", default: "pipeline.yaml", describe: "pipeline file to write (- prints it instead)" })
      .option("force", { type: "boolean", describe: "replace the pipeline file if it exists" })
      .option("rows", { type: "number", default: 1000, describe: "rows sampled per file" })
      .check((a) => {
        if (!Number.isInteger(a.rows) || a.rows < 1) throw new SiftpackError("SP_USAGE", `--rows must be a whole number of at least 1 (got ${a.rows})`);
        return true;
      }),
  handler: async (args) => {
    const toStdout = args.out === "-";
    const out = toStdout ? "pipeline.yaml" : args.out;
    const p = await propose(args.files, { rows: args.rows, files: 5, out, command: `siftpack init` });
    if (toStdout) {
      process.stdout.write(p.text);
      return;
    }
    // "wx" fails if the file exists: nothing is overwritten by accident, and there is no race between a check and the write.
    await writeFile(out, p.text, { flag: args.force ? "w" : "wx" }).catch((err) => {
      if ((err as NodeJS.ErrnoException).code === "EEXIST") throw new SiftpackError("SP_USAGE", `${out} exists; pass --force to replace it, or --out to write another file`);
      throw new SiftpackError("SP_OUTPUT", `${out}: cannot write the pipeline file: ${describeSystemError(err)}`, { cause: err });
    });
    let summary = "";
    for (const s of p.sources) {
      const g = s.group;
      summary += `${g.name}: ${g.files.length} file${g.files.length === 1 ? "" : "s"} (${g.sniffed.format}${g.sniffed.compression === "none" ? "" : `, ${g.sniffed.compression}`}), ${s.sample.rows} rows sampled\n`;
      if (g.sniffed.format !== "text") summary += `  text: ${s.fields.text} (${Math.round(s.fields.textMean)} characters on average); id: ${s.fields.id ?? "(none: records are named by file and line)"}; meta: ${s.fields.meta.join(", ") || "(none)"}\n`;
      for (const e of s.sample.errors) summary += `  unreadable: ${e}\n`;
    }
    const g = p.stages.group;
    if (g) summary += `split by ${g.field}: records of one ${g.noun} stay in one split, so held-out text shares no ${g.noun} with training text\n`;
    process.stdout.write(`${summary}wrote ${out}; check it with \`siftpack plan ${out}\`, then build with \`siftpack run ${out}\`\n`);
  },
};
