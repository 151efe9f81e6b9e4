// The pack stage's options: defaults, the shuffle forms, and the errors a user sees in the pipeline file.
import { describe, expect, it } from "vitest";
import { parsePipeline } from "../../src/pipeline/load.js";
import { SiftpackError } from "../../src/errors.js";
import pack, { shufflesSplit } from "../../src/stages/pack.js";
import { Rng, seedFor } from "../../src/pack/rng.js";
import { options } from "./rows.js";

const pipeline = (packLine: string) => `siftpack: 1
sources:
  - { name: t, files: d/*.jsonl, format: jsonl }
stages:
  - tokenize: {}
  - pack: ${packLine}
output: { dir: out }
`;

function problems(packLine: string): string[] {
  try {
    parsePipeline(pipeline(packLine), "p.yaml");
  } catch (e) {
    if (e instanceof SiftpackError) return e.details;
    throw e;
  }
  return [];
}

describe("pack options", () => {
  it("fills in defaults: concat, shuffle the train split in a 4096-row window, no buffer_docs", () => {
    expect(options({})).toEqual({ length: 1024, strategy: "concat", emit: [], shuffle: ["train"], shuffle_window: 4096, group_mb: 32 });
    expect(shufflesSplit(["train"], "train")).toBe(true);
    expect(shufflesSplit(["train"], "val")).toBe(false);
    expect(shufflesSplit(true, "test")).toBe(true);
    expect(shufflesSplit(false, "train")).toBe(false);
  });

  it("accepts a single split name for shuffle", () => {
    expect(options({ shuffle: "val" }).shuffle).toEqual(["val"]);
  });

  it("reports wrong values with the position, the expected form and a close match", () => {
    expect(problems("{ strategy: bestfit, shuffle: [trian], buffer_docs: 0 }")).toEqual([
      'p.yaml:6:23: stages[1].pack.strategy: expected one of concat | best-fit | single, got "bestfit" (did you mean "best-fit"?)',
      "p.yaml:6:63: stages[1].pack.buffer_docs: expected an integer from 1 to 10000000, got number 0",
      'p.yaml:6:42: stages[1].pack.shuffle[0]: expected one of train | val | test, got "trian" (did you mean "train"?)',
    ]);
    expect(problems("{ strategy: concat, buffer_docs: 100 }")).toEqual(["p.yaml:6:31: stages[1].pack.buffer_docs: buffer_docs applies to strategy best-fit only (strategy is concat)"]);
    expect(problems("{ shuffle: maybe }")[0]).toMatch(/pack.shuffle\[0\]: expected one of train \| val \| test, got "maybe"/);
  });

  it("plan shows the resolved best-fit buffer and the memory bounds", () => {
    expect(pack.explain!(options({ strategy: "best-fit", length: 1024 }))).toEqual({ buffer_docs: 10000, buffer_memory_mb: 40, shuffle_memory_mb: 32 });
    expect(pack.explain!(options({ shuffle: false }))).toEqual({});
  });
});

describe("row-shuffle random numbers", () => {
  it("below(n) stays in range and is close to uniform (chi-square, 10 cells, 100 000 draws)", () => {
    const rng = new Rng(seedFor(7, "shuffle:train"));
    const counts = new Array(10).fill(0);
    for (let i = 0; i < 100_000; i++) {
      const x = rng.below(10);
      expect(x >= 0 && x < 10 && Number.isInteger(x)).toBe(true);
      counts[x]++;
    }
    const chi2 = counts.reduce((a, c) => a + (c - 10_000) ** 2 / 10_000, 0);
    // 9 degrees of freedom: P(χ² > 27.9) = 0.001; the seed is fixed, so this cannot flake.
    expect(chi2).toBeLessThan(27.9);
  });

  it("seeds differ by split label and by pipeline seed", () => {
    expect(seedFor(7, "shuffle:train")).not.toBe(seedFor(7, "shuffle:val"));
    expect(seedFor(7, "shuffle:train")).not.toBe(seedFor(8, "shuffle:train"));
  });
});
