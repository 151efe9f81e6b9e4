// The lock file for CI: input fingerprints, settings hash and build hash of a known-good build,
// and a readable comparison of a new build against it.
import { readFile } from "node:fs/promises";
import { writeFileAtomic } from "./atomic.js";
import { SiftpackError, describeSystemError } from "../errors.js";
import type { Manifest } from "./manifest.js";

export const LOCK_FORMAT = "siftpack-lock/1";

export interface Lock {
  format: string;
  siftpack: string;
  pipeline_hash: string;
  inputs: { source: string; path: string; size: number; xxh64: string }[];
  splits: Record<string, { documents: number; blocks: number; tokens: number }>;
  build_hash: string;
}

export function lockOf(m: Manifest): Lock {
  return {
    format: LOCK_FORMAT,
    siftpack: m.tool.version,
    pipeline_hash: m.pipeline.hash,
    inputs: m.inputs,
    splits: Object.fromEntries(Object.entries(m.splits).map(([k, s]) => [k, { documents: s.documents, blocks: s.blocks, tokens: s.tokens }])),
    build_hash: m.build_hash,
  };
}

export async function readLock(path: string): Promise<Lock | undefined> {
  let text: string;
  try {
    text = await readFile(path, "utf8");
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === "ENOENT") return undefined;
    throw new SiftpackError("SP_LOCK", `${path}: cannot read the lock file: ${describeSystemError(err)}`, { cause: err });
  }
  try {
    const lock = JSON.parse(text) as Lock;
    if (lock.format !== LOCK_FORMAT) throw new Error(`format is ${JSON.stringify(lock.format)}, expected "${LOCK_FORMAT}"`);
    return lock;
  } catch (err) {
    throw new SiftpackError("SP_LOCK", `${path}: not a siftpack lock file: ${(err as Error).message}`, { cause: err });
  }
}

export async function writeLock(path: string, lock: Lock): Promise<void> {
  try {
    await writeFileAtomic(path, [Buffer.from(JSON.stringify(lock, null, 2) + "\n")]);
  } catch (err) {
    throw new SiftpackError("SP_OUTPUT", `${path}: cannot write the lock file: ${describeSystemError(err)}`, { cause: err });
  }
}

/** Differences between a locked build and a new one, one line each; empty when they agree. */
export function compareLocks(locked: Lock, now: Lock): string[] {
  const out: string[] = [];
  if (locked.siftpack !== now.siftpack) out.push(`siftpack version: ${locked.siftpack} → ${now.siftpack}`);
  if (locked.pipeline_hash !== now.pipeline_hash) out.push(`pipeline settings changed (hash ${locked.pipeline_hash} → ${now.pipeline_hash})`);
  const key = (i: Lock["inputs"][number]) => `${i.source}\u0000${i.path}`;
  const before = new Map(locked.inputs.map((i) => [key(i), i]));
  const after = new Map(now.inputs.map((i) => [key(i), i]));
  for (const [k, i] of before) {
    const j = after.get(k);
    if (!j) out.push(`input removed: ${i.path} (source ${i.source})`);
    else if (i.xxh64 !== j.xxh64 || i.size !== j.size) out.push(`input changed: ${i.path} (source ${i.source}): ${i.size} bytes xxh64 ${i.xxh64} → ${j.size} bytes xxh64 ${j.xxh64}`);
  }
  for (const [k, j] of after) if (!before.has(k)) out.push(`input added: ${j.path} (source ${j.source})`);
  for (const split of new Set([...Object.keys(locked.splits), ...Object.keys(now.splits)])) {
    const a = locked.splits[split];
    const b = now.splits[split];
    if (!a) out.push(`split ${split}: new (${b.documents} documents, ${b.tokens} tokens)`);
    else if (!b) out.push(`split ${split}: gone (had ${a.documents} documents)`);
    else
      for (const f of ["documents", "blocks", "tokens"] as const)
        if (a[f] !== b[f]) out.push(`split ${split}: ${f} ${a[f]} → ${b[f]} (${b[f] - a[f] > 0 ? "+" : ""}${b[f] - a[f]})`);
  }
  if (locked.build_hash !== now.build_hash) out.push(`build_hash: ${locked.build_hash} → ${now.build_hash}`);
  return out;
}
