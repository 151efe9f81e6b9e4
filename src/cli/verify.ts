// `siftpack verify DIR [--inputs]`: re-hashes every output file (and optionally every input) against the
// manifest, checks the manifest's own hash, and names every file in DIR that the manifest does not list.
import { join, resolve } from "node:path";
import type { CommandModule } from "yargs";
import { readManifest, verifyOutput, type Manifest, type VerifyProblem } from "../output/manifest.js";
import { readBuildInfo } from "../output/build-info.js";
import { hashFile } from "../lib/hash.js";
import { SiftpackError, describeSystemError } from "../errors.js";
import { unlistedFiles } from "../output/build-files.js";

/** Every entry under `dir` that is neither listed in the manifest nor one of siftpack's own files, in path order. */
export async function unlistedProblems(dir: string, m: Manifest): Promise<VerifyProblem[]> {
  const found = await unlistedFiles(dir, new Set(m.files.map((f) => f.path)));
  return found.map(({ path, kind }) => ({ path, problem: `not in the manifest: a ${kind} the build did not write` }));
}

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
    const unlisted = await unlistedProblems(args.dir, m).catch((err) => {
      throw new SiftpackError("SP_VERIFY", `${args.dir}: cannot list the build directory: ${describeSystemError(err)}`, { cause: err });
    });
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
    // Files counted once however many problems they have (manifest.json can have two); manifest.json counts as a file checked.
    const mismatched = new Set(problems.map((p) => p.path)).size;
    // Unlisted files last, so that the mismatches come first in the list.
    problems.push(...unlisted);
    if (args.json) process.stdout.write(JSON.stringify({ ok: problems.length === 0, files: m.files.length, inputs: inputsChecked, unlisted: unlisted.length, problems }, null, 2) + "\n");
    if (problems.length > 0) {
      const parts = [];
      if (mismatched > 0) parts.push(`${mismatched} of ${checked + 1} files do not match the manifest`);
      if (unlisted.length > 0) parts.push(`${unlisted.length} file${unlisted.length === 1 ? " is" : "s are"} not in the manifest`);
      throw new SiftpackError("SP_VERIFY", `${args.dir}: ${parts.join("; ")}`, {
        details: problems.map((p) => `${p.path}: ${p.problem}`),
      });
    }
    if (!args.json) process.stdout.write(`ok: ${m.files.length} files${args.inputs ? ` and ${inputsChecked} inputs` : ""} match the manifest (build ${m.build_hash})\n`);
  },
};
