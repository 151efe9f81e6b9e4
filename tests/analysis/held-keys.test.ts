// Numbering the held-out keys of a partition (split by top byte, a small table per part) against a
// plain Map: every entry's number names its key, the distinct keys come out sorted with their
// numbers, and the split by spill file keeps key order within each file.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { HI, LO, spillOf } from "../../src/analysis/distinct-keys.js";
import { bySpill, numberKeys } from "../../src/analysis/held-keys.js";

const big = (hi: number, lo: number) => (BigInt(hi) << 32n) | BigInt(lo);

describe("numberKeys", () => {
  it("numbers each distinct key once, and lists the distinct keys sorted with their numbers", () => {
    // Halves near the edges of the top byte and of 32 bits, and repeats: parts, ties and order all met.
    const half = fc.oneof(fc.integer({ min: 0, max: 3 }), fc.constantFrom(0x00ffffff, 0x01000000, 0x7fffffff, 0x80000000, 0xfeffffff, 0xff000000, 0xffffffff));
    fc.assert(
      fc.property(fc.array(fc.tuple(half, half), { maxLength: 80 }), fc.integer({ min: 0, max: 4 }), (entries, spills) => {
        // In runs of entries of three words (key halves, then something else), as the partition files hold them.
        const cut = Math.floor(entries.length / 2);
        const run = (part: [number, number][]) => Uint32Array.from(part.flatMap(([hi, lo], i) => [hi, lo, i]));
        const keys = numberKeys([run(entries.slice(0, cut)), run([]), run(entries.slice(cut))], 3);
        const distinct = [...new Set(entries.map(([hi, lo]) => big(hi, lo)))].sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
        expect(keys.distinct).toBe(distinct.length);
        // The number of a key, the same for all its entries and different from every other key's.
        const numberOfKey = new Map<bigint, number>();
        entries.forEach(([hi, lo], e) => {
          const k = big(hi, lo);
          if (!numberOfKey.has(k)) numberOfKey.set(k, keys.keyOf[e]);
          expect(keys.keyOf[e]).toBe(numberOfKey.get(k));
        });
        expect(new Set(numberOfKey.values()).size).toBe(distinct.length);
        const listed = Array.from({ length: keys.distinct }, (_, j) => big(keys.sorted[2 * j + HI], keys.sorted[2 * j + LO]));
        expect(listed).toEqual(distinct);
        listed.forEach((k, j) => expect(keys.numberOf[j]).toBe(numberOfKey.get(k)));

        // By spill file: each file's keys are the sorted keys whose low half goes there, in order, with their numbers.
        const lists = bySpill(keys, spills);
        expect(lists.length).toBe(Math.max(1, spills));
        lists.forEach((l, s) => {
          const want = distinct.filter((k) => spills === 0 || spillOf(Number(k & 0xffffffffn), spills) === s);
          const got = Array.from({ length: l.numberOf.length }, (_, j) => big(l.sorted[2 * j + HI], l.sorted[2 * j + LO]));
          expect(got).toEqual(want);
          got.forEach((k, j) => expect(l.numberOf[j]).toBe(numberOfKey.get(k)));
        });
      }),
      { numRuns: 500 },
    );
  });
});
