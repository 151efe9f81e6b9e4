// split stability and group integrity; filter length bounds (the quality rules are tested in tests/filter/).
import { beforeAll, describe, expect, it } from "vitest";
import fc from "fast-check";
import { assignSplit, splitKey } from "../../src/stages/split.js";
import { codePoints, countWords, filterReason } from "../../src/stages/filter.js";
import { loadHasher } from "../../src/lib/hash.js";
import type { DocRecord } from "../../src/types.js";

beforeAll(loadHasher);
const rec = (id: string, meta: Record<string, unknown> = {}): DocRecord => ({ id, source: "s", text: "", meta, origin: { file: "f", line: 1 }, seq: 0 });
const holdout = { val: 0.1, test: 0.1 };

describe("split", () => {
  it("a record's split depends only on its key and the seed, not on other records", () => {
    fc.assert(
      fc.property(fc.uniqueArray(fc.string({ minLength: 1 }), { minLength: 1, maxLength: 200 }), fc.integer({ min: 0, max: 1000 }), (ids, seed) => {
        const before = ids.map((id) => assignSplit(splitKey(rec(id), undefined), seed, holdout));
        const more = [...ids, ...ids.slice(0, Math.ceil(ids.length / 10)).map((x) => x + "-new")];
        const after = more.map((id) => assignSplit(splitKey(rec(id), undefined), seed, holdout));
        expect(after.slice(0, ids.length)).toEqual(before);
      }),
    );
  });

  it("puts every record with the same group value in the same split", () => {
    const seen = new Map<string, string>();
    for (let i = 0; i < 3000; i++) {
      const depot = `depot-${i % 37}`;
      const s = assignSplit(splitKey(rec(`t${i}`, { depot }), "depot"), 7, holdout);
      expect(seen.get(depot) ?? s).toBe(s);
      seen.set(depot, s);
    }
    expect(new Set(seen.values()).size).toBe(3);
  });

  it("falls back to the id for records without the group field", () => {
    expect(splitKey(rec("a", { depot: null }), "depot")).toBe(splitKey(rec("a"), undefined));
  });

  it("hits the requested fractions within sampling error", () => {
    const n = 20000;
    const counts = { train: 0, val: 0, test: 0 };
    for (let i = 0; i < n; i++) counts[assignSplit(`k${i}`, 11, holdout)]++;
    // Binomial sd for p = 0.1 at n = 20000 is ≈ 42; allow 5 sd.
    expect(Math.abs(counts.val - 2000)).toBeLessThan(210);
    expect(Math.abs(counts.test - 2000)).toBeLessThan(210);
  });
});

describe("filter", () => {
  const o = { min_words: 3, max_words: 5, min_chars: 1, max_chars: 30 };
  it("counts words as runs of non-space and characters as code points", () => {
    expect(countWords("  brake  pad\tworn\nout ")).toBe(4);
    expect(codePoints("tram 🚋")).toBe(6);
  });
  it("names the bound a text fails by its option (ledger reason filter:<option>)", () => {
    expect(filterReason("", o)).toBe("filter:min_chars");
    expect(filterReason("asdf asdf", o)).toBe("filter:min_words");
    expect(filterReason("one two three four five six", o)).toBe("filter:max_words");
    expect(filterReason("x".repeat(31), { ...o, min_words: 0 })).toBe("filter:max_chars");
    expect(filterReason("door sensor replaced", o)).toBeUndefined();
  });
  it("applies bounds inclusively: min and max themselves pass", () => {
    expect(filterReason("one two three", o)).toBeUndefined();
    expect(filterReason("one two three four five", o)).toBeUndefined();
    expect(filterReason("abcdefgh ijklmnop qrstuvwx yz1", { ...o, max_chars: 30 })).toBeUndefined(); // 30 characters
  });
});
