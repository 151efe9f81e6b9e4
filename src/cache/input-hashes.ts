// What reading an input unit learns by hashing it — the file's XXH64 and size, a part's XXH64 and
// line count — kept in the build cache under the file's identity as stat sees it (device, inode,
// size, modification and change times, the part's byte range), so a rebuild after an append does
// not read every unchanged input once more only to hash it.
//
// In doubt, hash. An entry is written only when the file's times lie well before the moment hashing
// began and are the same after it: a file changed in the same clock tick as it was hashed could
// differ without its times showing it ("racily clean", common practice in version control). A file
// copied, moved, restored from an archive or rewritten in place gets another inode or change time
// (which no program sets), so another key, and is hashed.
import { readFile, stat, writeFile } from "node:fs/promises";
import { toolVersion } from "../output/manifest.js";
import { BuildCache } from "./build-cache.js";

export interface InputHashes {
  /** The whole file's XXH64 and size (the first unit of a file). */
  whole?: { xxh64: string; size: number };
  /** A part's XXH64 and physical lines (a unit with a byte range). */
  part?: { xxh64: string; lines: number };
}

/** Times this close to the start of hashing (or later) are not trusted; coarse file systems tick in 2 s. Tests shrink it. */
export const inputHashLimits = { racyMs: 2000 };

type Identity = { dev: number; ino: number; size: number; mtimeMs: number; ctimeMs: number };
const identity = (s: Identity) => ({ dev: s.dev, ino: s.ino, size: s.size, mtime: s.mtimeMs, ctime: s.ctimeMs });

/** The hashes of file `abs` (a unit's `range` of it), from the cache when its identity has an entry, else by `compute`. */
export async function inputHashes(cache: BuildCache, abs: string, range: { start: number; end: number } | undefined, compute: () => Promise<InputHashes>): Promise<InputHashes> {
  const before = await stat(abs).catch(() => undefined);
  // A file that cannot be stat'ed is left to `compute`, which says why it cannot be read.
  if (!before) return compute();
  const key = BuildCache.key({ memo: "input-hashes", format: 1, siftpack: toolVersion(), path: abs, range: range ?? null, ...identity(before) });
  const hit = await cache.lookup("hash", key, ".json");
  if (hit) {
    const kept = await readFile(hit, "utf8")
      .then((t) => JSON.parse(t) as InputHashes)
      .catch(() => undefined);
    if (kept) return kept;
  }
  const started = Date.now();
  const hashes = await compute();
  const after = await stat(abs).catch(() => undefined);
  const same = after !== undefined && JSON.stringify(identity(after)) === JSON.stringify(identity(before));
  if (same && Math.max(before.mtimeMs, before.ctimeMs) < started - inputHashLimits.racyMs) {
    const pending = cache.pending("hash", key, ".json");
    await writeFile(pending.tmp, JSON.stringify(hashes));
    await pending.commit();
  }
  return hashes;
}
