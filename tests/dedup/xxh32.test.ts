// XXH32 in JavaScript against xxhash-wasm's h32Raw (an independent build of the reference C code).
import { beforeAll, describe, expect, it } from "vitest";
import fc from "fast-check";
import xxhash from "xxhash-wasm";
import { xxh32, xxh32Lanes, xxh32Windows } from "../../src/dedup/xxh32.js";

let ref: Awaited<ReturnType<typeof xxhash>>;
beforeAll(async () => {
  ref = await xxhash();
});

const bytesOf = (lanes: Uint32Array) => new Uint8Array(Uint32Array.from(lanes).buffer);

describe("xxh32", () => {
  it("equals xxhash-wasm's h32Raw on random bytes, lengths 0–100, and random seeds", () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 100 }), fc.nat({ max: 0xffffffff }), fc.nat({ max: 5 }), (data, seed, pad) => {
        // Hash a span inside a larger buffer, as the shingler does.
        const buf = new Uint8Array(data.length + 2 * pad);
        buf.set(data, pad);
        expect(xxh32(buf, pad, pad + data.length, seed)).toBe(ref.h32Raw(data, seed));
      }),
      { numRuns: 2000 },
    );
  });

  it("hashes 32-bit lanes as their little-endian bytes", () => {
    fc.assert(
      fc.property(fc.array(fc.nat({ max: 0xffffffff }), { maxLength: 40 }), fc.nat({ max: 0xffffffff }), (values, seed) => {
        const lanes = Uint32Array.from(values);
        expect(xxh32Lanes(lanes, 0, lanes.length, seed)).toBe(ref.h32Raw(bytesOf(lanes), seed));
      }),
      { numRuns: 1000 },
    );
  });

  it("hashes every window of lanes like one call per window", () => {
    fc.assert(
      fc.property(fc.array(fc.nat({ max: 0xffffffff }), { minLength: 1, maxLength: 60 }), fc.integer({ min: 1, max: 12 }), fc.nat({ max: 0xffffffff }), (values, width, seed) => {
        const lanes = Uint32Array.from(values);
        const count = Math.max(0, lanes.length - width + 1);
        const out = new Uint32Array(count);
        xxh32Windows(lanes, count, width, seed, out);
        for (let s = 0; s < count; s++) expect(out[s]).toBe(ref.h32Raw(bytesOf(lanes.subarray(s, s + width)), seed));
      }),
      { numRuns: 500 },
    );
  });
});
