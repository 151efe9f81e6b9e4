// The build is written into a staging directory beside the target and swapped in only when complete,
// so a failed or interrupted build never leaves a half-written dataset under the target's name. The
// target is replaced whole, so only a folder that is provably an earlier siftpack build is replaced.
import { mkdir, readdir, readFile, realpath, rename, rm, stat } from "node:fs/promises";
import { basename, dirname, isAbsolute, join, relative, resolve, sep } from "node:path";
import { SiftpackError, describeSystemError } from "../errors.js";
import { FORMAT, isSiftpackFormat } from "./manifest.js";
import { unlistedFiles } from "./build-files.js";

export function stagingDirOf(outDir: string): string {
  return join(dirname(outDir), `.${basename(outDir)}.partial`);
}

/** True when `inner` is `outer` or lies under it. */
function within(inner: string, outer: string): boolean {
  const r = relative(outer, inner);
  return r === "" || (r !== ".." && !r.startsWith(`..${sep}`) && !isAbsolute(r));
}

/** The path with symbolic links resolved as far as it exists (the rest appended), so that links cannot hide nesting. */
async function realPath(p: string): Promise<string> {
  const abs = resolve(p);
  try {
    return await realpath(abs);
  } catch {
    const up = dirname(abs);
    return up === abs ? abs : join(await realPath(up), basename(abs));
  }
}

/**
 * Refuses an output directory that is, or holds, the pipeline's directory or an input file: a build
 * replaces its output directory whole, so those would be deleted with it.
 */
export async function checkOutputPlace(outDir: string, pipelineFile: string, inputs: readonly string[]): Promise<void> {
  const out = await realPath(outDir);
  const pipelineDir = await realPath(dirname(resolve(pipelineFile)));
  const refuse = (what: string) =>
    new SiftpackError("SP_OUTPUT", `refusing to build into ${outDir}: it ${what}, and a build replaces its output directory whole; set output.dir (or --out) to a folder of its own, such as build/NAME`);
  if (within(pipelineDir, out)) throw refuse(out === pipelineDir ? `is the pipeline file's directory` : `contains the pipeline file's directory ${pipelineDir}`);
  for (const input of inputs) if (within(await realPath(input), out)) throw refuse(`contains the input file ${input}`);
}

/**
 * Why `dir` (an existing, non-empty directory) is not provably a siftpack build, naming the first
 * foreign file in path order; undefined when every file in it is one the build wrote.
 */
async function notABuild(dir: string): Promise<string | undefined> {
  const names = (await readdir(dir)).sort();
  if (names.length === 0) return undefined;
  const notOurs = (why: string) => `${why}, so it is not a siftpack output; choose a new or empty output directory`;
  let files: unknown;
  try {
    const m = JSON.parse(await readFile(join(dir, "manifest.json"), "utf8"));
    if (!isSiftpackFormat(m?.format)) return notOurs(`its manifest.json is not a siftpack manifest (${m?.format === undefined ? "it has no format" : `format ${JSON.stringify(m.format)}`}, not "${FORMAT}")`);
    files = m.files;
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    if (code === "ENOENT") return notOurs(`it is not empty and holds no manifest.json (first file: ${names[0]})`);
    if (code === "EISDIR") return notOurs("its manifest.json is a directory");
    if (code) throw err;
    return notOurs("its manifest.json is not valid JSON");
  }
  if (!Array.isArray(files)) return notOurs("its manifest.json lists no files");
  const listed = new Set(files.map((f) => (f as { path?: unknown })?.path));
  const foreign = (await unlistedFiles(dir, listed, 1))[0]?.path;
  return foreign ? `it holds ${foreign}, which its manifest does not list; move that file away or choose another output directory` : undefined;
}

/** Refuses a target that exists but is not a directory, or not provably a siftpack build (`plan` checks it too). */
export async function checkReplaceable(outDir: string): Promise<void> {
  const st = await stat(outDir).catch((e) => (e.code === "ENOENT" ? undefined : Promise.reject(e)));
  if (!st) return;
  if (!st.isDirectory()) throw new SiftpackError("SP_OUTPUT", `output directory ${outDir} exists and is not a directory`);
  const why = await notABuild(outDir);
  if (why) throw new SiftpackError("SP_OUTPUT", `refusing to replace ${outDir}: ${why}`);
}

/** Staging directories this process created (the only ones discardStaging may remove), and whether each holds a finished build. */
const created = new Map<string, "building" | "finished">();

/** Creates an empty staging directory; refuses a target that exists but is not a siftpack output. */
export async function prepareStaging(outDir: string): Promise<string> {
  const staging = stagingDirOf(outDir);
  try {
    await checkReplaceable(outDir);
    await rm(staging, { recursive: true, force: true });
    await mkdir(staging, { recursive: true });
    created.set(staging, "building");
    return staging;
  } catch (err) {
    if (err instanceof SiftpackError) throw err;
    throw new SiftpackError("SP_OUTPUT", `cannot create output directory ${outDir}: ${describeSystemError(err)}`, { cause: err });
  }
}

/**
 * Replaces the target with the completed staging directory, checking again that the target is
 * still a siftpack build (a long build gives time to put files there). When the swap fails halfway
 * the previous build is moved back.
 */
export async function publishStaging(staging: string, outDir: string): Promise<void> {
  const old = join(dirname(outDir), `.${basename(outDir)}.old`);
  let moved = false;
  if (created.has(staging)) created.set(staging, "finished");
  try {
    await checkReplaceable(outDir);
    await rm(old, { recursive: true, force: true });
    const exists = await stat(outDir).then(() => true, () => false);
    if (exists) {
      await rename(outDir, old);
      moved = true;
    }
    await rename(staging, outDir);
    created.delete(staging);
  } catch (err) {
    if (moved) await rename(old, outDir).catch(() => {});
    if (err instanceof SiftpackError) throw err;
    throw new SiftpackError("SP_OUTPUT", `cannot move the finished build into ${outDir}: ${describeSystemError(err)}`, { cause: err });
  }
  // The new build is in place; a previous one that cannot be removed now is removed by the next publish.
  await rm(old, { recursive: true, force: true }).catch(() => {});
}

/**
 * After a failed run: removes the staging directory this process created, which holds at most part
 * of a build (nothing anyone can use; the next run would remove it anyway). A finished build that
 * could not be moved into place is kept, and a staging directory another process made is never
 * touched (a second run into the same output fails on the lock before it makes one). Says what was
 * left behind: nothing, the finished build, or a folder that could not be removed.
 */
export async function discardStaging(outDir: string): Promise<{ kept: "finished" | "unremovable"; path: string } | undefined> {
  const staging = stagingDirOf(outDir);
  const state = created.get(staging);
  if (state === undefined) return undefined;
  if (state === "finished") return { kept: "finished", path: staging };
  created.delete(staging);
  return rm(staging, { recursive: true, force: true }).then(
    () => undefined,
    () => ({ kept: "unremovable" as const, path: staging }),
  );
}
