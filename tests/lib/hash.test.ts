// XXH64 checked against the xxHash specification (doc/xxhash_spec.md, "XXH64 Algorithm Description").
import { describe, expect, it, beforeAll } from "vitest";
import fc from "fast-check";
import { hex64, loadHasher, unitHash, xxh64Bytes, xxh64String, hashFile } from "../../src/lib/hash.js";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";

const M = (1n << 64n) - 1n;
const P1 = 0x9e3779b185ebca87n;
const P2 = 0xc2b2ae3d27d4eb4fn;
const P3 = 0x165667b19e3779f9n;
const P4 = 0x85ebca77c2b2ae63n;
const P5 = 0x27d4eb2f165667c5n;
const rotl = (x: bigint, r: bigint) => ((x << r) | (x >> (64n - r))) & M;
const read64 = (b: Uint8Array, i: number) => {
  let v = 0n;
  for (let k = 7; k >= 0; k--) v = (v << 8n) | BigInt(b[i + k]);
  return v;
};
const read32 = (b: Uint8Array, i: number) => BigInt(b[i] | (b[i + 1] << 8) | (b[i + 2] << 16)) + (BigInt(b[i + 3]) << 24n);
const round = (acc: bigint, lane: bigint) => (rotl((acc + lane * P2) & M, 31n) * P1) & M;
const merge = (acc: bigint, v: bigint) => ((((acc ^ round(0n, v)) * P1) & M) + P4) & M;

/** A direct, slow transcription of the specification, independent of the WASM library. */
function specXxh64(b: Uint8Array, seed: bigint): bigint {
  let i = 0;
  let acc: bigint;
  if (b.length >= 32) {
    let v1 = (seed + P1 + P2) & M, v2 = (seed + P2) & M, v3 = seed, v4 = (seed - P1) & M;
    for (; i + 32 <= b.length; i += 32) {
      v1 = round(v1, read64(b, i));
      v2 = round(v2, read64(b, i + 8));
      v3 = round(v3, read64(b, i + 16));
      v4 = round(v4, read64(b, i + 24));
    }
    acc = (rotl(v1, 1n) + rotl(v2, 7n) + rotl(v3, 12n) + rotl(v4, 18n)) & M;
    acc = merge(merge(merge(merge(acc, v1), v2), v3), v4);
  } else acc = (seed + P5) & M;
  acc = (acc + BigInt(b.length)) & M;
  for (; i + 8 <= b.length; i += 8) acc = (((rotl(acc ^ round(0n, read64(b, i)), 27n) * P1) & M) + P4) & M;
  if (i + 4 <= b.length) {
    acc = (((rotl(acc ^ ((read32(b, i) * P1) & M), 23n) * P2) & M) + P3) & M;
    i += 4;
  }
  for (; i < b.length; i++) acc = (rotl(acc ^ ((BigInt(b[i]) * P5) & M), 11n) * P1) & M;
  acc ^= acc >> 33n;
  acc = (acc * P2) & M;
  acc ^= acc >> 29n;
  acc = (acc * P3) & M;
  acc ^= acc >> 32n;
  return acc;
}

beforeAll(loadHasher);

describe("xxh64", () => {
  it("matches published vectors", () => {
    // Values from xxHash's own sanity checks and spec examples (quoted from memory, and agreeing with
    // the specification transcription above): empty input, one zero byte, "a", "abc".
    const prime32 = 2654435761n;
    expect(hex64(xxh64Bytes(new Uint8Array(0), 0n))).toBe("ef46db3751d8e999");
    expect(hex64(xxh64Bytes(new Uint8Array(0), prime32))).toBe("ac75fda2929b17ef");
    expect(hex64(xxh64Bytes(new Uint8Array(1), 0n))).toBe("e934a84adb052768");
    expect(hex64(xxh64Bytes(new Uint8Array(1), prime32))).toBe("5014607643a9b4c3");
    expect(hex64(xxh64String("a"))).toBe("d24ec4f1a98c6e5b");
    expect(hex64(xxh64String("abc"))).toBe("44bc2cf5ad770999");
  });

  it("equals the specification's algorithm on random inputs of every length class", () => {
    fc.assert(
      fc.property(fc.uint8Array({ minLength: 0, maxLength: 300 }), fc.bigInt({ min: 0n, max: M }), (bytes, seed) => {
        expect(xxh64Bytes(bytes, seed)).toBe(specXxh64(bytes, seed));
      }),
      { numRuns: 300 },
    );
  });

  it("hashes strings as their UTF-8 bytes and files in streaming chunks", async () => {
    const s = "Quayside depot — tram 14 ✓";
    expect(xxh64String(s)).toBe(specXxh64(new TextEncoder().encode(s), 0n));
    const dir = mkdtempSync(join(tmpdir(), "sp-hash-"));
    const big = new Uint8Array(3 * 1024 * 1024 + 17).map((_, i) => (i * 31) & 255);
    writeFileSync(join(dir, "f.bin"), big);
    const got = await hashFile(join(dir, "f.bin"));
    expect(got).toEqual({ size: big.length, xxh64: hex64(xxh64Bytes(big)) });
  });

  it("unitHash is uniform enough for split thresholds", () => {
    const n = 20000;
    let below = 0;
    for (let i = 0; i < n; i++) if (unitHash(`doc-${i}`, 7) < 0.1) below++;
    // Binomial(20000, 0.1): sd ≈ 42; 5 sd bound.
    expect(Math.abs(below - 2000)).toBeLessThan(5 * 42);
  });
});
