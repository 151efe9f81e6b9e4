// xxHash64 (via xxhash-wasm): record fingerprints, split assignment, file checksums.
import xxhash from "xxhash-wasm";
import { createReadStream } from "node:fs";

type Api = Awaited<ReturnType<typeof xxhash>>;
let api: Api | undefined;
let loading: Promise<Api> | undefined;

/** Loads the WASM hasher once; every other function here needs it loaded first. */
export async function loadHasher(): Promise<Api> {
  if (api) return api;
  loading ??= xxhash().then((a) => (api = a));
  return loading;
}

function need(): Api {
  if (!api) throw new Error("hash.ts: call loadHasher() first");
  return api;
}

/** XXH64 of a string's UTF-8 bytes. */
export function xxh64String(text: string, seed = 0n): bigint {
  return need().h64(text, seed);
}

/** XXH64 of raw bytes. */
export function xxh64Bytes(bytes: Uint8Array, seed = 0n): bigint {
  return need().h64Raw(bytes, seed);
}

/** 16 lowercase hex digits, the form used in manifests. */
export function hex64(h: bigint): string {
  return h.toString(16).padStart(16, "0");
}

/** Streaming XXH64 of a file, with its size. */
export async function hashFile(path: string): Promise<{ size: number; xxh64: string }> {
  const { create64 } = await loadHasher();
  const state = create64(0n);
  let size = 0;
  for await (const chunk of createReadStream(path, { highWaterMark: 1 << 20 })) {
    state.update(chunk as Uint8Array);
    size += (chunk as Uint8Array).length;
  }
  return { size, xxh64: hex64(state.digest()) };
}

/** A uniform number in [0, 1) from a key and a seed: the top 53 bits of XXH64. */
export function unitHash(key: string, seed: number): number {
  const h = need().h64(key, BigInt(seed));
  return Number(h >> 11n) / 2 ** 53;
}
