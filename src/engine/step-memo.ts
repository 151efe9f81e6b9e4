// Steps after reading, kept in the build cache by what they read: a unit through a pass, the
// read phase's second look at a unit, a packing group. A step's key is a hash of everything its
// files depend on — the settings, the fingerprints of the unit files it reads (a chain back to
// the input's bytes), the bytes of the decisions it applies — never of the time or the task
// count, so a rebuild after appending data links the unchanged units' and groups' files from the
// cache instead of computing them again (README, Rebuilding in CI).
//
// An entry is flat files in the cache folder: step-<key>.<n> are second names (hard links, else
// copies) of the step's files, written first; step-<key>.json lists them (path in the work
// directory, size, modification time) with what the step reported, and is written last, so an
// entry without it is never found. A file whose size or time differs from the list (edited or
// replaced since) makes the entry stale: it is not used, and the step runs again.
import { readFile, stat, rm } from "node:fs/promises";
import { join, relative } from "node:path";
import type { BuildCache } from "../cache/build-cache.js";
import { linkAtomic, linkOrCopy, writeAtomic } from "./workdir.js";
import type { Logger } from "../types.js";

/** Bumped when what a step's files hold changes within a version. */
export const STEP_FORMAT = 1;

interface Index<M> {
  files: { path: string; size: number; mtime: number }[];
  /** What the step reported (counters, record counts). */
  meta: M;
  /** Other cache entries the step used (token ids): kept while the step's entry is. */
  used: string[];
}

export class StepMemo {
  constructor(
    private readonly cache: BuildCache,
    private readonly work: string,
    private readonly log: Logger,
  ) {}

  /**
   * Links the step's files into the work directory and returns what it reported, or undefined when
   * there is no entry (or the cache is off, or the entry is stale). `counted` false: a part of a
   * step (a piece of a group's collection), left out of the report's steps.
   */
  async restore<M>(key: string, counted = true): Promise<M | undefined> {
    const at = await this.cache.lookup("step", key, ".json");
    if (!at) return undefined;
    let index: Index<M>;
    try {
      index = JSON.parse(await readFile(at, "utf8")) as Index<M>;
    } catch {
      return this.stale(key, "its list cannot be read");
    }
    const blobs = index.files.map((_, n) => this.cache.path("step", key, `.${n}`));
    for (const [n, f] of index.files.entries()) {
      const st = await stat(blobs[n]).catch(() => undefined);
      if (!st) return this.stale(key, `${f.path} is missing`);
      if (st.size !== f.size || st.mtimeMs !== f.mtime) return this.stale(key, `${f.path} changed since it was kept`);
    }
    for (const [n, f] of index.files.entries()) await linkAtomic(blobs[n], join(this.work, f.path));
    this.cache.use(blobs.map((b) => relative(this.cache.dir, b)));
    this.cache.use(index.used);
    if (counted) this.cache.report.steps.reused++;
    return index.meta;
  }

  /** Keeps the step's files (absolute paths under the work directory) and report under `key`. */
  async save<M>(key: string, files: string[], meta: M, used: string[], counted = true): Promise<void> {
    const index: Index<M> = { files: [], meta, used };
    for (const [n, file] of files.entries()) {
      const pending = this.cache.pending("step", key, `.${n}`);
      await linkOrCopy(file, pending.tmp);
      await pending.commit();
      const st = await stat(this.cache.path("step", key, `.${n}`));
      index.files.push({ path: relative(this.work, file), size: st.size, mtime: st.mtimeMs });
    }
    const list = this.cache.pending("step", key, ".json");
    await writeAtomic(list.tmp, JSON.stringify(index));
    await list.commit();
    if (counted) this.cache.report.steps.computed++;
  }

  private async stale(key: string, why: string): Promise<undefined> {
    this.log.warn({ key }, `cache entry step-${key} is stale (${why}); it is not used, and the step runs again`);
    await rm(this.cache.path("step", key, ".json"), { force: true });
    return undefined;
  }
}
