// build-info.json: when, where and from which paths a build ran. Kept out of manifest.json and its
// checksums on purpose, so that the manifest and build_hash are identical wherever a build runs.
import { hostname } from "node:os";
import { join, resolve } from "node:path";
import { readFile } from "node:fs/promises";
import { writeFileAtomic } from "./atomic.js";
import { toolVersion } from "./manifest.js";
import type { LoadedPipeline } from "../pipeline/load.js";

export interface BuildInfo {
  started_at: string;
  finished_at: string;
  pipeline_file: string;
  /** Directory input paths in the manifest are relative to. */
  base_dir: string;
  host: string;
  node: string;
  siftpack: string;
}

export async function writeBuildInfo(dir: string, p: LoadedPipeline, startedAt: Date): Promise<void> {
  const info: BuildInfo = {
    started_at: startedAt.toISOString(),
    finished_at: new Date().toISOString(),
    pipeline_file: resolve(p.file),
    base_dir: p.baseDir,
    host: hostname(),
    node: process.version,
    siftpack: toolVersion(),
  };
  await writeFileAtomic(join(dir, "build-info.json"), [Buffer.from(JSON.stringify(info, null, 2) + "\n")]);
}

export async function readBuildInfo(dir: string): Promise<BuildInfo | undefined> {
  try {
    return JSON.parse(await readFile(join(dir, "build-info.json"), "utf8"));
  } catch {
    return undefined;
  }
}
