// Whether an earlier build is still what the pipeline would build, answered from hashes without
// building: the tool and Node versions, the pipeline's hash, every input file (size, modification
// and change times, else its XXH64) and every file a stage reads besides the records (protected
// texts, a tokenizer file), against what the build recorded. `run` says so and leaves the build as
// it is. An input whose size and times are as recorded is taken as unchanged; any other is hashed,
// and only different bytes count.
//
// What the build recorded lives in build-info.json (`freshness`), which holds machine facts and is
// kept out of the manifest's checksums: modification times differ from machine to machine, the
// manifest must not. The snapshot is taken *before* the build reads anything, so a file changed
// while the build ran has a newer time than recorded and is hashed at the next check.
import { readFile, stat } from "node:fs/promises";
import { isAbsolute, join, resolve } from "node:path";
import { hashFile, loadHasher } from "../lib/hash.js";
import { listFiles } from "../sources/source.js";
import { STAGES } from "../stages/index.js";
import type { LoadedPipeline } from "../pipeline/load.js";
import { isSiftpackFormat, manifestHash, toolVersion, type Manifest } from "./manifest.js";
import { writeFileAtomic } from "./atomic.js";

export interface Freshness {
  siftpack: string;
  node: string;
  pipeline_hash: string;
  /**
   * Input files as the manifest lists them, with the size, modification and change times seen
   * before the build read them (the change time catches a rewrite whose modification time was set
   * back, as `cp -p`, `tar` or `rsync -t` do: no program can set it; absent in older records).
   */
  inputs: { source: string; path: string; size: number; mtime_ms: number; ctime_ms?: number }[];
  /** Files stages read besides the records, with their XXH64. */
  reads: { path: string; xxh64: string }[];
}

/** The pipeline's inputs and the files its stages read, as they are now (stat only, except `reads`, which are hashed). */
export async function snapshot(p: LoadedPipeline): Promise<Freshness> {
  const inputs: Freshness["inputs"] = [];
  for (const source of p.config.sources)
    for (const path of await listFiles(source, p.baseDir)) {
      const st = await stat(join(p.baseDir, path));
      inputs.push({ source: source.name, path, size: st.size, mtime_ms: st.mtimeMs, ctime_ms: st.ctimeMs });
    }
  const reads: Freshness["reads"] = [];
  await loadHasher();
  for (const s of p.config.stages) {
    const files = (await STAGES[s.name]?.reads?.(s.options, p.baseDir)) ?? [];
    for (const f of files) reads.push({ path: f, xxh64: (await hashFile(isAbsolute(f) ? f : resolve(p.baseDir, f))).xxh64 });
  }
  return { siftpack: toolVersion(), node: process.version, pipeline_hash: p.hash, inputs, reads };
}

/** Adds the snapshot taken before a build to the build's build-info.json. */
export async function recordFreshness(outDir: string, f: Freshness): Promise<void> {
  const path = join(outDir, "build-info.json");
  const info = JSON.parse(await readFile(path, "utf8")) as Record<string, unknown>;
  await writeFileAtomic(path, [Buffer.from(JSON.stringify({ ...info, freshness: f }, null, 2) + "\n")]);
}

/**
 * `now`: the inputs as they are, when the check got that far (recorded when `hashed` > 0, so touched
 * files are not hashed again; or taken as the snapshot of the build that follows).
 */
export type Verdict = { fresh: true; manifest: Manifest; hashed: number; now: Freshness } | { fresh: false; why: string; now?: Freshness };

/**
 * Whether the build in `outDir` is what `p` would build now. `hashed`: how many input files had to be
 * hashed (their modification time had changed). Cheap when nothing changed: a stat per input and
 * per output file, a hash of each file stages read.
 */
export async function checkFreshness(p: LoadedPipeline, outDir: string): Promise<Verdict> {
  const json = async (name: string) => JSON.parse(await readFile(join(outDir, name), "utf8"));
  let manifest: Manifest;
  let recorded: Freshness | undefined;
  try {
    manifest = await json("manifest.json");
    recorded = (await json("build-info.json")).freshness;
  } catch {
    return { fresh: false, why: "no earlier build with its build-info.json" };
  }
  if (!isSiftpackFormat(manifest.format)) return { fresh: false, why: "the output holds no siftpack build" };
  if (!recorded) return { fresh: false, why: "the earlier build recorded no input snapshot (built as cluster tasks, or by an older siftpack)" };
  await loadHasher();
  if (typeof manifest.manifest_xxh64 !== "string" || manifestHash(manifest as unknown as Record<string, unknown>) !== manifest.manifest_xxh64) return { fresh: false, why: "manifest.json was edited" };
  if (manifest.tool.version !== toolVersion() || recorded.siftpack !== toolVersion()) return { fresh: false, why: `siftpack ${manifest.tool.version} built it, this is ${toolVersion()}` };
  if (recorded.node !== process.version) return { fresh: false, why: `Node.js ${recorded.node} built it, this is ${process.version}` };
  if (manifest.pipeline.hash !== p.hash || recorded.pipeline_hash !== p.hash) return { fresh: false, why: "the pipeline's settings changed" };
  for (const f of manifest.files) {
    const st = await stat(join(outDir, f.path)).catch(() => undefined);
    if (!st || st.size !== f.size) return { fresh: false, why: `output file ${f.path} is ${st ? "of another size" : "missing"}` };
  }
  const now = await snapshot(p);
  const key = (i: { source: string; path: string }) => `${i.source}\u0000${i.path}`;
  const listed = new Map(manifest.inputs.map((i) => [key(i), i]));
  const seen = new Map(recorded.inputs.map((i) => [key(i), i]));
  if (now.inputs.length !== listed.size) return { fresh: false, why: `${now.inputs.length} input files now, ${listed.size} then`, now };
  let hashed = 0;
  for (const i of now.inputs) {
    const m = listed.get(key(i));
    if (!m) return { fresh: false, why: `input added: ${i.path}`, now };
    if (m.size !== i.size) return { fresh: false, why: `input changed: ${i.path} (size)`, now };
    const r = seen.get(key(i));
    if (r && r.size === i.size && r.mtime_ms === i.mtime_ms && r.ctime_ms === i.ctime_ms) continue;
    // Touched (or copied) but maybe not changed: its bytes decide.
    hashed++;
    if ((await hashFile(join(p.baseDir, i.path))).xxh64 !== m.xxh64) return { fresh: false, why: `input changed: ${i.path}`, now };
  }
  const then = new Map(recorded.reads.map((r) => [r.path, r.xxh64]));
  if (now.reads.length !== then.size) return { fresh: false, why: "the files stages read changed", now };
  for (const r of now.reads) if (then.get(r.path) !== r.xxh64) return { fresh: false, why: `${r.path} changed`, now };
  return { fresh: true, manifest, hashed, now };
}
