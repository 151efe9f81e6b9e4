// `siftpack verify DIR [--inputs]`: re-hashes every output file (and optionally every input) against the manifest.
import { join, resolve } from "node:path";
import type { CommandModule } from "yargs";
import { readManifest, verifyOutput, type VerifyProblem } from "../output/manifest.js";
import { readBuildInfo } from "../output/build-info.js";
import { hashFile } from "../lib/hash.js";
import { SiftpackError, describeSystemError } from "../errors.js";

interface Args {
  dir: string;
  json?: boolean;
  inputs?: boolean;
  base?: string;
}

export const verifyCommand: CommandModule<object, Args> = {
  command: "verify <dir>",
  describe: "re-hash every output file against the manifest",
  builder: (y) =>
    y
      .positional("dir", { type: "string", demandOption: true })
      .option("json", { type: "boolean" })
      .option("inputs", { type: "boolean", describe: "also re-hash the input files and list what changed" })
      .option("base", { type: "string", describe: "with --inputs: the directory input paths are relative to (default: the pipeline file's directory, from build-info.json)" }),
  handler: async (args) => {
    const m = await readManifest(args.dir);
    const problems = await verifyOutput(args.dir, m);
    let inputsChecked = 0;
    if (args.inputs) {
      const base = args.base ? resolve(args.base) : (await readBuildInfo(args.dir))?.base_dir;
      if (!base) throw new SiftpackError("SP_USAGE", `--inputs: ${join(args.dir, "build-info.json")} is missing; say where the inputs are with --base DIR`);
      for (const i of m.inputs) {
        inputsChecked++;
        const got = await hashFile(join(base, i.path)).catch((err) => ({ error: describeSystemError(err) }));
        const at = `input ${i.path} (source ${i.source})`;
        if ("error" in got) problems.push({ path: at, problem: `cannot read: ${got.error}` } satisfies VerifyProblem);
        else if (got.size !== i.size || got.xxh64 !== i.xxh64) problems.push({ path: at, problem: `changed: ${got.size} bytes xxh64 ${got.xxh64}, manifest says ${i.size} bytes xxh64 ${i.xxh64}` });
      }
    }
    const checked = m.files.length + inputsChecked;
    if (args.json) process.stdout.write(JSON.stringify({ ok: problems.length === 0, files: m.files.length, inputs: inputsChecked, problems }, null, 2) + "\n");
    if (problems.length > 0) {
      throw new SiftpackError("SP_VERIFY", `${problems.length} of ${checked} files do not match the manifest in ${args.dir}`, {
        details: problems.map((p) => `${p.path}: ${p.problem}`),
      });
    }
    if (!args.json) process.stdout.write(`ok: ${m.files.length} files${args.inputs ? ` and ${inputsChecked} inputs` : ""} match the manifest (build ${m.build_hash})\n`);
  },
};
