// The hashing threads' radix sort of train keys against the native sort of a BigUint64Array.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { sortedDistinct } from "../../src/analysis/overlap-hash.js";

function reference(w: Uint32Array): bigint[] {
  const keys = [...new BigUint64Array(w.slice().buffer)].sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
  return keys.filter((k, i) => i === 0 || k !== keys[i - 1]);
}

describe("sortedDistinct", () => {
  it("gives the distinct keys in ascending order, as a native sort does", () => {
    // Few distinct 32-bit halves make repeats and equal digits (skipped passes) common.
    const half = fc.oneof(fc.constantFrom(0, 1, 0xffff, 0x10000, 0xffffffff, 0x80000000), fc.integer({ min: 0, max: 0xffffffff }));
    fc.assert(
      fc.property(fc.array(fc.tuple(half, half), { maxLength: 300 }), (pairs) => {
        const w = new Uint32Array(pairs.flat());
        const got = sortedDistinct(w.slice());
        expect([...new BigUint64Array(got.buffer, got.byteOffset, got.length / 2)]).toEqual(reference(w));
      }),
      { numRuns: 1000 },
    );
  });

  it("sorts a large random batch", () => {
    const w = new Uint32Array(2 * 200_000).map(() => (Math.random() * 2 ** 32) >>> 0);
    const got = sortedDistinct(w.slice());
    expect([...new BigUint64Array(got.buffer, got.byteOffset, got.length / 2)]).toEqual(reference(w));
  });
});
