// XXH32 in plain JavaScript over byte spans and 32-bit lanes: the per-shingle hash of near-duplicate detection.
//
// Why not xxhash-wasm (src/lib/hash.ts)? A shingle is a few dozen bytes and a document has thousands
// of them; a call into WebAssembly copies its input and costs more than hashing 20 bytes here. Plain
// JavaScript also runs in worker threads with nothing to load. The algorithm follows the XXH32 part
// of the xxHash specification (constants PRIME32_1..5, four-lane stripes of 16 bytes, avalanche);
// tests/dedup/xxh32.test.ts checks it against xxhash-wasm's h32Raw on random inputs.

const P1 = 0x9e3779b1;
const P2 = 0x85ebca77;
const P3 = 0xc2b2ae3d;
const P4 = 0x27d4eb2f;
const P5 = 0x165667b1;

function rotl(x: number, r: number): number {
  return (x << r) | (x >>> (32 - r));
}

function round(acc: number, lane: number): number {
  acc = (acc + Math.imul(lane, P2)) | 0;
  return Math.imul(rotl(acc, 13), P1);
}

function avalanche(h: number): number {
  h ^= h >>> 15;
  h = Math.imul(h, P2);
  h ^= h >>> 13;
  h = Math.imul(h, P3);
  h ^= h >>> 16;
  return h >>> 0;
}

function read32(b: Uint8Array, p: number): number {
  return b[p] | (b[p + 1] << 8) | (b[p + 2] << 16) | (b[p + 3] << 24);
}

/** XXH32 of `bytes[start, end)` with a 32-bit seed; an unsigned 32-bit result. */
export function xxh32(bytes: Uint8Array, start: number, end: number, seed: number): number {
  let p = start;
  const len = end - start;
  let h: number;
  if (len >= 16) {
    let v1 = (seed + P1 + P2) | 0;
    let v2 = (seed + P2) | 0;
    let v3 = seed | 0;
    let v4 = (seed - P1) | 0;
    const limit = end - 16;
    while (p <= limit) {
      v1 = round(v1, read32(bytes, p));
      v2 = round(v2, read32(bytes, p + 4));
      v3 = round(v3, read32(bytes, p + 8));
      v4 = round(v4, read32(bytes, p + 12));
      p += 16;
    }
    h = (rotl(v1, 1) + rotl(v2, 7) + rotl(v3, 12) + rotl(v4, 18)) | 0;
  } else {
    h = (seed + P5) | 0;
  }
  h = (h + len) | 0;
  while (p + 4 <= end) {
    h = (h + Math.imul(read32(bytes, p), P3)) | 0;
    h = Math.imul(rotl(h, 17), P4);
    p += 4;
  }
  while (p < end) {
    h = (h + Math.imul(bytes[p], P5)) | 0;
    h = Math.imul(rotl(h, 11), P1);
    p++;
  }
  return avalanche(h);
}

/**
 * XXH32 of `count` 32-bit lanes `lanes[start, start + count)` read as little-endian bytes, i.e. the
 * same value as `xxh32` over those 4·count bytes, without building them. Used to hash a word n-gram
 * from its words' hashes and a band from its signature rows.
 */
export function xxh32Lanes(lanes: Uint32Array, start: number, count: number, seed: number): number {
  let p = start;
  const end = start + count;
  let h: number;
  if (count >= 4) {
    let v1 = (seed + P1 + P2) | 0;
    let v2 = (seed + P2) | 0;
    let v3 = seed | 0;
    let v4 = (seed - P1) | 0;
    const limit = end - 4;
    while (p <= limit) {
      v1 = round(v1, lanes[p]);
      v2 = round(v2, lanes[p + 1]);
      v3 = round(v3, lanes[p + 2]);
      v4 = round(v4, lanes[p + 3]);
      p += 4;
    }
    h = (rotl(v1, 1) + rotl(v2, 7) + rotl(v3, 12) + rotl(v4, 18)) | 0;
  } else {
    h = (seed + P5) | 0;
  }
  h = (h + 4 * count) | 0;
  while (p < end) {
    h = (h + Math.imul(lanes[p], P3)) | 0;
    h = Math.imul(rotl(h, 17), P4);
    p++;
  }
  return avalanche(h);
}

/**
 * XXH32 of every window of `width` consecutive lanes: out[s] = xxh32Lanes(lanes, s, width, seed) for
 * s in [0, count). One call per document instead of one per shingle keeps the loop in one optimized
 * frame (the per-call cost was a tenth of the signing time).
 */
export function xxh32Windows(lanes: Uint32Array, count: number, width: number, seed: number, out: Uint32Array): void {
  const s1 = (seed + P1 + P2) | 0;
  const s2 = (seed + P2) | 0;
  const s3 = seed | 0;
  const s4 = (seed - P1) | 0;
  const s5 = (seed + P5) | 0;
  const len = 4 * width;
  for (let s = 0; s < count; s++) {
    let p = s;
    const end = s + width;
    let h: number;
    if (width >= 4) {
      let v1 = s1;
      let v2 = s2;
      let v3 = s3;
      let v4 = s4;
      const limit = end - 4;
      while (p <= limit) {
        v1 = round(v1, lanes[p]);
        v2 = round(v2, lanes[p + 1]);
        v3 = round(v3, lanes[p + 2]);
        v4 = round(v4, lanes[p + 3]);
        p += 4;
      }
      h = (rotl(v1, 1) + rotl(v2, 7) + rotl(v3, 12) + rotl(v4, 18)) | 0;
    } else h = s5;
    h = (h + len) | 0;
    while (p < end) {
      h = (h + Math.imul(lanes[p], P3)) | 0;
      h = Math.imul(rotl(h, 17), P4);
      p++;
    }
    out[s] = avalanche(h);
  }
}

/** A 32-bit integer mixer (the XXH32 avalanche after adding a constant): derives seeds and probe sequences. */
export function mix32(x: number): number {
  return avalanche((x + P5) | 0);
}

/** Independent 32-bit seeds for the parts of the method, all derived from the pipeline seed and a purpose tag. */
export function deriveSeed(pipelineSeed: number, purpose: number): number {
  return mix32((mix32(pipelineSeed >>> 0) ^ Math.imul(purpose + 1, P1)) | 0);
}
