// The build is written into a staging directory beside the target and swapped in only when complete,
// so a failed or interrupted build never leaves a half-written dataset under the target's name.
import { mkdir, readdir, rename, rm, stat } from "node:fs/promises";
import { basename, dirname, join } from "node:path";
import { SiftpackError, describeSystemError } from "../errors.js";

export function stagingDirOf(outDir: string): string {
  return join(dirname(outDir), `.${basename(outDir)}.partial`);
}

/** Creates an empty staging directory; refuses a target that exists but is not a siftpack output. */
export async function prepareStaging(outDir: string): Promise<string> {
  const staging = stagingDirOf(outDir);
  try {
    const st = await stat(outDir).catch((e) => (e.code === "ENOENT" ? undefined : Promise.reject(e)));
    if (st) {
      if (!st.isDirectory()) throw new SiftpackError("SP_OUTPUT", `output directory ${outDir} exists and is not a directory`);
      const entries = await readdir(outDir);
      if (entries.length > 0 && !entries.includes("manifest.json"))
        throw new SiftpackError("SP_OUTPUT", `refusing to replace ${outDir}: it is not empty and holds no manifest.json, so it is not a siftpack output`);
    }
    await rm(staging, { recursive: true, force: true });
    await mkdir(staging, { recursive: true });
    return staging;
  } catch (err) {
    if (err instanceof SiftpackError) throw err;
    throw new SiftpackError("SP_OUTPUT", `cannot create output directory ${outDir}: ${describeSystemError(err)}`, { cause: err });
  }
}

/** Replaces the target with the completed staging directory. */
export async function publishStaging(staging: string, outDir: string): Promise<void> {
  const old = join(dirname(outDir), `.${basename(outDir)}.old`);
  try {
    await rm(old, { recursive: true, force: true });
    const exists = await stat(outDir).then(() => true, () => false);
    if (exists) await rename(outDir, old);
    await rename(staging, outDir);
    await rm(old, { recursive: true, force: true });
  } catch (err) {
    throw new SiftpackError("SP_OUTPUT", `cannot move the finished build into ${outDir}: ${describeSystemError(err)}`, { cause: err });
  }
}
