// `siftpack report DIR [--out FILE]`: writes one self-contained HTML page about a build.
import { writeFile } from "node:fs/promises";
import { join } from "node:path";
import type { CommandModule } from "yargs";
import { SiftpackError, describeSystemError } from "../errors.js";
import { buildReport } from "../report/build.js";

interface Args {
  dir: string;
  out?: string;
  excerpts?: boolean;
}

export const reportCommand: CommandModule<object, Args> = {
  command: "report <dir>",
  describe: "write a self-contained HTML report of a build (charts, tables, provenance)",
  builder: (y) =>
    y
      .positional("dir", { type: "string", demandOption: true, describe: "build directory (holds manifest.json)" })
      .option("out", { type: "string", describe: "HTML file to write (default: DIR/report.html)" })
      .option("excerpts", { type: "boolean", default: true, describe: "quote the largest near-duplicate clusters from the inputs (--no-excerpts: ids only)" }),
  handler: async (args) => {
    const out = args.out ?? join(args.dir, "report.html");
    const html = await buildReport(args.dir, args.dir, { excerpts: args.excerpts });
    await writeFile(out, html).catch((err) => {
      throw new SiftpackError("SP_OUTPUT", `${out}: cannot write the report: ${describeSystemError(err)}`, { cause: err });
    });
    process.stdout.write(`wrote ${out} (${Math.round(Buffer.byteLength(html) / 1024)} KiB); open it in a browser\n`);
  },
};
