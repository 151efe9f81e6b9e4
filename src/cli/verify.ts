// `siftpack verify DIR`: re-hashes every output file against the manifest.
import type { CommandModule } from "yargs";
import { readManifest, verifyOutput } from "../output/manifest.js";
import { SiftpackError } from "../errors.js";

interface Args {
  dir: string;
  json?: boolean;
}

export const verifyCommand: CommandModule<object, Args> = {
  command: "verify <dir>",
  describe: "re-hash every output file against the manifest",
  builder: (y) => y.positional("dir", { type: "string", demandOption: true }).option("json", { type: "boolean" }),
  handler: async (args) => {
    const m = await readManifest(args.dir);
    const problems = await verifyOutput(args.dir, m);
    if (args.json) process.stdout.write(JSON.stringify({ ok: problems.length === 0, files: m.files.length, problems }, null, 2) + "\n");
    if (problems.length > 0) {
      throw new SiftpackError("SP_VERIFY", `${problems.length} of ${m.files.length} files do not match the manifest in ${args.dir}`, {
        details: problems.map((p) => `${p.path}: ${p.problem}`),
      });
    }
    if (!args.json) process.stdout.write(`ok: ${m.files.length} files match the manifest (build ${m.build_hash})\n`);
  },
};
