// Token statistics per split and source, on a hand-made example: the build's steps (cut into two
// packing groups, two partitions) and the one-pass definition give the figures worked out by hand.
import { describe, expect, it } from "vitest";
import { tokenStatsAnalyzer } from "./token-stats-one-pass.js";
import { tokenStatsSteps } from "../../src/analysis/token-stats-steps.js";
import { contextOf, runSteps } from "./steps-harness.js";
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
    const a = (await tokenStatsAnalyzer.create())!;
    // train: lengths 1..10 from source s (10 bytes each), one of length 100 from source t (50 bytes, "é" is 2 bytes).
    const records: DocRecord[] = [];
    for (let i = 1; i <= 10; i++) records.push(rec("s", "train", "x".repeat(10), i));
    records.push(rec("t", "train", "é".repeat(25), 100));
    records.push(rec("s", "val", "abcd", 2));
    for (const r of records) a.add(r);
    const onePass = (await a.finish()) as any;
    const ctx = contextOf({ seed: 1, ngram: 13, nearDuplicates: false, permutations: 16, threshold: 0.8, vocab: 300 });
    const out = (await runSteps(tokenStatsSteps, ctx, records, [5], 2)).figures as any;
    expect(out).toEqual(onePass);
    expect(Object.keys(out)).toEqual(["train", "val"]);
    expect(out.train.all).toMatchObject({ documents: 11, tokens: 155, target_tokens: 144, bytes: 150 });
    expect(out.train.all.bytes_per_token).toBeCloseTo(150 / 155);
    // sorted lengths 1..10, 100: p50 = 6th = 6, p90 = ceil(9.9) = 10th = 10, p99 = 11th = 100
    expect(out.train.all.percentiles).toEqual({ p50: 6, p90: 10, p99: 100, max: 100 });
    expect(out.train.by_source.t).toMatchObject({ documents: 1, tokens: 100, bytes: 50, mean_tokens: 100 });
    expect(out.val.by_source.s).toMatchObject({ documents: 1, tokens: 2, target_tokens: 1, bytes_per_token: 2 });
  });
});
