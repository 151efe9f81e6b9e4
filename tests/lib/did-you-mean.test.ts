import { describe, expect, it } from "vitest";
import { closest, editDistance } from "../../src/lib/did-you-mean.js";

describe("did you mean", () => {
  it("edit distance counts a swap of neighbours as one edit", () => {
    expect(editDistance("kitten", "sitting")).toBe(3); // the textbook Levenshtein example
    expect(editDistance("dri", "dir")).toBe(1);
    expect(editDistance("", "abc")).toBe(3);
  });
  it("suggests typos and stems, not unrelated words", () => {
    expect(closest("treshold", ["threshold", "ngram"])).toBe("threshold");
    expect(closest("dri", ["dir", "shard_blocks"])).toBe("dir");
    expect(closest("shards", ["dir", "shard_blocks"])).toBe("shard_blocks");
    expect(closest("colour", ["dir", "shard_blocks"])).toBeUndefined();
  });
});
