// manifest.json: what was built from what, with counts, a checksum of every output file and one of the manifest itself.
import { readFile } from "node:fs/promises";
import { basename, dirname, join } from "node:path";
import { existsSync, readFileSync } from "node:fs";
import { createRequire } from "node:module";
import { writeFileAtomic } from "./atomic.js";
import { hashFile, hex64, loadHasher, xxh64String } from "../lib/hash.js";
import { canonicalJson } from "../lib/canonical-json.js";
import { SiftpackError, describeSystemError } from "../errors.js";
import type { Dtype } from "./npy.js";
import type { SplitStats, WrittenFile } from "./shard-writer.js";
import type { LedgerCounts } from "./ledger.js";
import type { LoadedPipeline } from "../pipeline/load.js";
import type { Encoder } from "../tokenizer/index.js";

/** The format written. 2: every shard has an origins index (`<stem>.origins.jsonl`, listed as `origins`). */
export const FORMAT = "siftpack/2";
/** Formats siftpack still reads (and replaces as an earlier build): 1 lacks only the origins index. */
export const READABLE_FORMATS: readonly string[] = ["siftpack/1", FORMAT];

/** Whether a parsed manifest's `format` is one of siftpack's. */
export function isSiftpackFormat(format: unknown): boolean {
  return typeof format === "string" && READABLE_FORMATS.includes(format);
}

export interface Manifest {
  format: string;
  tool: { name: string; version: string; dependencies: Record<string, string> };
  pipeline: { file: string; hash: string; resolved: unknown };
  seed: number;
  inputs: { source: string; path: string; size: number; xxh64: string }[];
  tokenizer: { name: string; vocab_size: number; special_ids: Record<string, number>; eos_id: number; pad_id: number; bos: boolean; eos: boolean };
  length: number;
  strategy: string;
  dtype: Dtype;
  segments_dtype: Dtype;
  splits: Record<string, SplitStats>;
  records: LedgerCounts;
  files: WrittenFile[];
  /** XXH64 over the canonical JSON of `files`: one value that changes when any output byte does. */
  build_hash: string;
  /**
   * XXH64 over the canonical JSON of this manifest without this key: covers the manifest's own
   * figures (counts, splits, settings), which no file hash does. It guards against edits and
   * damage, not against someone who recomputes it.
   */
  manifest_xxh64?: string;
  /** Figures added by analyzers (e.g. overlap between splits). */
  [analysis: string]: unknown;
}

const require = createRequire(import.meta.url);

/** A dependency's version from its package.json, found above its resolved entry point (its exports map may hide package.json). */
function versionOf(pkg: string): string {
  try {
    let dir = dirname(require.resolve(pkg));
    for (;;) {
      const candidate = join(dir, "package.json");
      if (existsSync(candidate)) {
        const json = JSON.parse(readFileSync(candidate, "utf8"));
        if (json.name === pkg) return json.version;
      }
      const up = dirname(dir);
      if (up === dir) return "unknown";
      dir = up;
    }
  } catch {
    return "unknown";
  }
}

/** siftpack's own version: package.json two levels up from both src/output and dist/output. */
export function toolVersion(): string {
  return require("../../package.json").version;
}

export interface ManifestInput {
  pipeline: LoadedPipeline;
  inputs: Manifest["inputs"];
  encoder: Encoder;
  /** Documents start with BOS / end with EOS. */
  bos: boolean;
  eos: boolean;
  /** Block length and packing strategy. */
  length: number;
  strategy: string;
  tokenDtype: Dtype;
  segmentDtype: Dtype;
  splits: Record<string, SplitStats>;
  counts: LedgerCounts;
  files: WrittenFile[];
  /** Files stages wrote themselves (relative paths), hashed here. */
  extraFiles?: string[];
  /** Figures from analyzers, merged in under their keys. */
  analysis?: Record<string, unknown>;
}

export async function writeManifest(dir: string, m: ManifestInput): Promise<Manifest> {
  const files = [...m.files];
  for (const name of ["ledger.jsonl.gz", "quarantine.jsonl", ...(m.extraFiles ?? [])]) files.push({ path: name, ...(await hashFile(join(dir, name))) });
  files.sort((a, b) => (a.path < b.path ? -1 : a.path > b.path ? 1 : 0));
  const resolved = { ...m.pipeline.config, output: { shard_blocks: m.pipeline.config.output.shard_blocks }, cluster: undefined };
  const manifest = {
    format: FORMAT,
    tool: {
      name: "siftpack",
      version: toolVersion(),
      // Versions of the packages whose code decides output bytes (rank tables, hashing, stop-word lists; gzip and ICU's word segments are Node's own).
      dependencies: { "js-tiktoken": versionOf("js-tiktoken"), "xxhash-wasm": versionOf("xxhash-wasm"), node_zlib: process.versions.zlib, stopword: versionOf("stopword"), node_icu: process.versions.icu ?? "none" },
    },
    pipeline: { file: basename(m.pipeline.file), hash: m.pipeline.hash, resolved },
    seed: m.pipeline.config.seed,
    inputs: m.inputs,
    tokenizer: {
      name: m.encoder.name,
      vocab_size: m.encoder.vocabSize,
      special_ids: m.encoder.specialTokens,
      eos_id: m.encoder.eosId,
      pad_id: m.encoder.eosId,
      bos: m.bos,
      eos: m.eos,
    },
    length: m.length,
    strategy: m.strategy,
    dtype: m.tokenDtype,
    segments_dtype: m.segmentDtype,
    splits: m.splits,
    records: m.counts,
    ...(m.analysis ?? {}),
    files,
    build_hash: hex64(xxh64String(canonicalJson(files))),
  };
  // Hashed as it will be read back (JSON drops undefined values), so verify recomputes the same value.
  const sealed: Manifest = { ...manifest, manifest_xxh64: manifestHash(JSON.parse(JSON.stringify(manifest))) };
  await writeFileAtomic(join(dir, "manifest.json"), [Buffer.from(JSON.stringify(sealed, null, 2) + "\n")]);
  return sealed;
}

/** XXH64 of a parsed manifest's canonical JSON, `manifest_xxh64` left out (the hasher must be loaded). */
export function manifestHash(m: Record<string, unknown>): string {
  const { manifest_xxh64: _, ...rest } = m;
  return hex64(xxh64String(canonicalJson(rest)));
}

export async function readManifest(dir: string): Promise<Manifest> {
  const path = join(dir, "manifest.json");
  let text: string;
  try {
    text = await readFile(path, "utf8");
  } catch (err) {
    throw new SiftpackError("SP_MANIFEST", `${path}: cannot read the manifest: ${describeSystemError(err)}`, { cause: err });
  }
  let m: Manifest;
  try {
    m = JSON.parse(text);
  } catch (err) {
    throw new SiftpackError("SP_MANIFEST", `${path}: not valid JSON: ${(err as Error).message}`, { cause: err });
  }
  if (!isSiftpackFormat(m?.format)) throw new SiftpackError("SP_MANIFEST", `${path}: not a siftpack manifest (format is ${JSON.stringify(m?.format)}, expected "${FORMAT}")`);
  return m;
}

export interface VerifyProblem {
  path: string;
  problem: string;
}

/** Re-hashes every file listed in the manifest; returns the mismatches (empty when all is well). */
export async function verifyOutput(dir: string, m: Manifest): Promise<VerifyProblem[]> {
  const problems: VerifyProblem[] = [];
  await loadHasher();
  // First the manifest itself: an edited count or setting changes no file hash, only this one.
  if (typeof m.manifest_xxh64 !== "string") problems.push({ path: "manifest.json", problem: "has no manifest_xxh64, so its own figures cannot be checked (the key was removed, or an older siftpack wrote the manifest)" });
  else {
    const own = manifestHash(m);
    if (own !== m.manifest_xxh64) problems.push({ path: "manifest.json", problem: `edited since the build: its content hashes to ${own}, manifest_xxh64 says ${m.manifest_xxh64}` });
  }
  for (const f of m.files) {
    const got = await hashFile(join(dir, f.path)).catch((err) => ({ error: describeSystemError(err) }));
    if ("error" in got) problems.push({ path: f.path, problem: `cannot read: ${got.error}` });
    else if (got.size !== f.size) problems.push({ path: f.path, problem: `size ${got.size}, manifest says ${f.size}` });
    else if (got.xxh64 !== f.xxh64) problems.push({ path: f.path, problem: `xxh64 ${got.xxh64}, manifest says ${f.xxh64}` });
  }
  const buildHash = hex64(xxh64String(canonicalJson(m.files)));
  if (buildHash !== m.build_hash) problems.push({ path: "manifest.json", problem: `build_hash ${buildHash} does not match the file list (manifest says ${m.build_hash})` });
  return problems;
}
