// The hashing threads' grouping of train keys by partition.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { byPartition, keyPartition } from "../../src/analysis/overlap-hash.js";
import { HI } from "../../src/analysis/distinct-keys.js";

describe("byPartition", () => {
  it("puts each key in its partition's range, keeping their order within it, and loses none", () => {
    const half = fc.oneof(fc.constantFrom(0, 1, 0x7fffffff, 0x80000000, 0xffffffff), fc.integer({ min: 0, max: 0xffffffff }));
    fc.assert(
      fc.property(fc.array(fc.tuple(half, half), { maxLength: 200 }), fc.integer({ min: 1, max: 9 }), (pairs, P) => {
        const w = new Uint32Array(pairs.flat());
        const { keys, starts } = byPartition(w, P);
        expect(starts[0]).toBe(0);
        expect(starts[P]).toBe(pairs.length);
        for (let p = 0; p < P; p++) {
          const want = pairs.filter((k) => keyPartition(k[HI], P) === p).flat();
          expect([...keys.subarray(2 * starts[p], 2 * starts[p + 1])]).toEqual(want);
        }
      }),
      { numRuns: 500 },
    );
  });
});
