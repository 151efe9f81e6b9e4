// The build cache beside the output: results of per-input-file units, keyed by a hash of
// everything they depend on, so a rerun (after a crash or a settings change) redoes only what changed.
import { mkdir, readdir, rename, rm, stat } from "node:fs/promises";
import { basename, dirname, join } from "node:path";
import { threadId } from "node:worker_threads";
import { canonicalJson } from "../lib/canonical-json.js";
import { hex64, xxh64String } from "../lib/hash.js";
import { describeSystemError } from "../errors.js";
import type { Logger } from "../types.js";

/** read: a unit's records as read; tokens: token ids; step: a later step's files; hash: an input's hashes (input-hashes.ts). */
export type UnitKind = "read" | "tokens" | "step" | "hash";

export interface CacheReport {
  /** Per kind: units (input files) whose cache entry was found or not; for tokens also records. */
  read: { reused: number; computed: number };
  tokens: { reused: number; computed: number; records_reused: number; records_computed: number };
  /** Steps after reading (a unit through a pass, a packing group) whose files were linked from the cache, or computed and kept. */
  steps: { reused: number; computed: number };
  /** The cache folder after the build: entries kept, their bytes, and entries removed as unused (by this or another siftpack version). */
  size: { entries: number; bytes: number; removed: number };
}

/** An empty report (a build that did not run). */
export function noCacheReport(): CacheReport {
  return { read: { reused: 0, computed: 0 }, tokens: { reused: 0, computed: 0, records_reused: 0, records_computed: 0 }, steps: { reused: 0, computed: 0 }, size: { entries: 0, bytes: 0, removed: 0 } };
}

/** Adds `sign` × `from`'s counts (read, tokens, steps; not the folder's size) to `into`. */
export function addCounts(into: CacheReport, from: CacheReport, sign = 1): void {
  for (const kind of ["read", "tokens", "steps"] as const) {
    const a = into[kind] as Record<string, number>;
    const b = from[kind] as Record<string, number>;
    for (const k of Object.keys(a)) a[k] += sign * b[k];
  }
}

/** Files a folder walk asks about at once: one at a time, pruning and sizing the 200 MB bench build's cache (~1,240 entries) took 130–160 ms, 64 at a time 35–50 ms. */
const AT_ONCE = 64;

/** f(x) for every item, AT_ONCE at a time; the results in the items' order. */
async function inBatches<T, R>(items: T[], f: (x: T) => Promise<R>): Promise<R[]> {
  const out: R[] = [];
  for (let i = 0; i < items.length; i += AT_ONCE) out.push(...(await Promise.all(items.slice(i, i + AT_ONCE).map(f))));
  return out;
}

/** Entries and bytes of the cache folder `dir` as it is now. */
export async function cacheSize(dir: string): Promise<{ entries: number; bytes: number }> {
  let entries = 0;
  let bytes = 0;
  // Entries are often second names of one file (a piece of a group's collection and the group
  // itself, linked from the same work file): its bytes are on disk once, and counted once.
  const seen = new Set<string>();
  const names = await readdir(dir).catch(() => [] as string[]);
  const stats = await inBatches(names, (name) => stat(join(dir, name)).catch(() => undefined));
  for (const st of stats) {
    if (!st?.isFile()) continue;
    entries++;
    const inode = `${st.dev}:${st.ino}`;
    if (st.nlink > 1 && seen.has(inode)) continue;
    if (st.nlink > 1) seen.add(inode);
    bytes += st.size;
  }
  return { entries, bytes };
}

export function cacheDirOf(outDir: string): string {
  return join(dirname(outDir), `.${basename(outDir)}.cache`);
}

export class BuildCache {
  readonly dir: string;
  /** When false, existing entries are ignored (and replaced): `run --no-cache`. */
  private readonly reuse: boolean;
  private readonly used = new Set<string>();
  /** Open watches (`watch`): each gets every entry name used while it is open. */
  private readonly watches = new Set<string[]>();
  readonly report: CacheReport = noCacheReport();

  constructor(dir: string, reuse: boolean) {
    this.dir = dir;
    this.reuse = reuse;
  }

  async open(): Promise<void> {
    await mkdir(this.dir, { recursive: true });
  }

  /** A stable key: XXH64 of the canonical JSON of what the unit's result depends on. */
  static key(material: unknown): string {
    return hex64(xxh64String(canonicalJson(material)));
  }

  path(kind: UnitKind, key: string, ext: string): string {
    return join(this.dir, `${kind}-${key}${ext}`);
  }

  /** The path of a complete entry, if there is one and reuse is on. Marks it as used either way. */
  async lookup(kind: UnitKind, key: string, ext: string): Promise<string | undefined> {
    const p = this.path(kind, key, ext);
    this.use([basename(p)]);
    if (!this.reuse) return undefined;
    return stat(p).then(
      () => p,
      () => undefined,
    );
  }

  /** Where to write a new entry; `commit` renames it into place once complete. */
  pending(kind: UnitKind, key: string, ext: string): { tmp: string; commit: () => Promise<void> } {
    const p = this.path(kind, key, ext);
    this.use([basename(p)]);
    // A name of its own per thread too: a local run's tasks run side by side in threads, and two units of the same bytes share a key.
    const tmp = `${p}.${process.pid}-${threadId}.tmp`;
    return { tmp, commit: () => rename(tmp, p) };
  }

  /** Marks entries (names in the folder) as used by this build, so pruning keeps them. */
  use(names: Iterable<string>): void {
    for (const name of names) {
      this.used.add(name);
      for (const w of this.watches) w.push(name);
    }
  }

  /** Starts collecting the names of entries used from now on; the returned function stops and gives them. */
  watch(): () => string[] {
    const names: string[] = [];
    this.watches.add(names);
    return () => {
      this.watches.delete(names);
      return [...new Set(names)];
    };
  }

  /** The entries used since the last call (a task thread hands them to the run, which prunes). */
  takeUsed(): string[] {
    const names = [...this.used];
    this.used.clear();
    return names;
  }

  /** What a task run elsewhere (a task thread, with a cache object of its own) used and counted. */
  absorb(used: string[], report: CacheReport | undefined): void {
    this.use(used);
    if (report) addCounts(this.report, report);
  }

  /**
   * After a successful build: removes entries this build did not use (older settings or inputs, and
   * every entry of another siftpack version, whose keys hold the version) and stale temporaries, so
   * the cache holds what the next unchanged build needs and no more; the report gets its size.
   */
  async prune(): Promise<number> {
    const unused = (await readdir(this.dir).catch(() => [] as string[])).filter((name) => !this.used.has(name));
    await inBatches(unused, (name) => rm(join(this.dir, name), { force: true }));
    this.report.size = { ...(await cacheSize(this.dir)), removed: unused.length };
    return unused.length;
  }

  /** `prune`, once the build is published: an entry that cannot be removed is worth a warning, not a failure. */
  pruneOrWarn(log: Logger): Promise<number> {
    return this.prune().catch((err) => {
      log.warn({ cache: this.dir }, `cannot prune the cache ${this.dir}: ${describeSystemError(err)}`);
      return 0;
    });
  }
}
