// Token statistics per split and source, on a hand-made example.
import { describe, expect, it } from "vitest";
import { tokenStatsAnalyzer } from "../../src/analysis/token-stats.js";
import type { DocRecord } from "../../src/types.js";

const rec = (source: string, split: string, text: string, n: number): DocRecord => ({
  id: text,
  source,
  split,
  text,
  meta: {},
  origin: { file: "f", line: 1 },
  seq: 0,
  tokens: new Uint32Array(n),
});

describe("token statistics", () => {
  it("counts documents, tokens, targets, bytes per token and nearest-rank percentiles", async () => {
    const a = (await tokenStatsAnalyzer.create({} as never))!;
    // train: lengths 1..10 from source s (10 bytes each), one of length 100 from source t (50 bytes, "é" is 2 bytes).
    for (let i = 1; i <= 10; i++) a.add(rec("s", "train", "x".repeat(10), i));
    a.add(rec("t", "train", "é".repeat(25), 100));
    a.add(rec("s", "val", "abcd", 2));
    const out = (await a.finish()) as any;
    expect(Object.keys(out)).toEqual(["train", "val"]);
    expect(out.train.all).toMatchObject({ documents: 11, tokens: 155, target_tokens: 144, bytes: 150 });
    expect(out.train.all.bytes_per_token).toBeCloseTo(150 / 155);
    // sorted lengths 1..10, 100: p50 = 6th = 6, p90 = ceil(9.9) = 10th = 10, p99 = 11th = 100
    expect(out.train.all.percentiles).toEqual({ p50: 6, p90: 10, p99: 100, max: 100 });
    expect(out.train.by_source.t).toMatchObject({ documents: 1, tokens: 100, bytes: 50, mean_tokens: 100 });
    expect(out.val.by_source.s).toMatchObject({ documents: 1, tokens: 2, target_tokens: 1, bytes_per_token: 2 });
  });
});
