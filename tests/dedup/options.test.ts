// The dedup options: exact and minhash in one schema, defaults, and the messages for keys that do not belong.
import { describe, expect, it } from "vitest";
import { parsePipeline } from "../../src/pipeline/load.js";
import { SiftpackError } from "../../src/errors.js";
import { dedupOptions } from "../../src/stages/dedup.js";
import type { Issue } from "../../src/pipeline/schema.js";

const pipeline = (stages: string) => `siftpack: 1
sources:
  - { name: tickets, files: "*.jsonl", format: jsonl }
  - { name: manuals, files: "*.txt", format: text }
stages:
${stages}
  - tokenize: { encoding: gpt2 }
  - pack: { length: 64 }
output:
  dir: out
`;

function problems(stages: string): string[] {
  try {
    parsePipeline(pipeline(stages), "p.yaml");
  } catch (e) {
    if (e instanceof SiftpackError) return e.details ?? [];
    throw e;
  }
  return [];
}

function check(raw: unknown): { value: unknown; issues: Issue[] } {
  const issues: Issue[] = [];
  return { value: dedupOptions.check(raw, [], issues), issues };
}

describe("dedup options", () => {
  it("accept exact then minhash in one pipeline and fill the minhash defaults", () => {
    const c = parsePipeline(pipeline("  - dedup: { method: exact }\n  - dedup: { method: minhash, threshold: 0.85 }"), "p.yaml");
    expect(c.stages[0].options).toEqual({ method: "exact" });
    expect(c.stages[1].options).toEqual({
      method: "minhash",
      threshold: 0.85,
      shingle: "word",
      ngram: 5,
      lowercase: true,
      permutations: 128,
      miss_weight: 0.9,
      confirm: "signature",
      keep: "first",
      action: "drop",
      memory_mb: 2048,
      workers: 0,
    });
  });

  it("default to exact, and to 9-character shingles for shingle: char", () => {
    expect(check(undefined).value).toEqual({ method: "exact" });
    expect(check({}).value).toEqual({ method: "exact" });
    expect(check({ method: "minhash", shingle: "char" }).value).toMatchObject({ shingle: "char", ngram: 9 });
  });

  it("reject minhash options under method exact, naming the key and the method", () => {
    expect(problems("  - dedup: { threshold: 0.8, keep: longest }\n  - dedup: { method: exact, bands: 4 }")).toMatchInlineSnapshot(`
      [
        "p.yaml:6:14: stages[0].dedup.threshold: "threshold" applies only to method: minhash (this dedup is method: exact)",
        "p.yaml:6:30: stages[0].dedup.keep: "keep" applies only to method: minhash (this dedup is method: exact)",
        "p.yaml:7:29: stages[1].dedup.bands: "bands" applies only to method: minhash (this dedup is method: exact)",
      ]
    `);
  });

  it("check values and the keys that depend on each other", () => {
    expect(
      problems(
        [
          "  - dedup: { method: minhash, threshold: 1.5, permutations: 8, treshold: 0.8 }",
          "  - dedup: { method: minhash, keep: source-priority }",
          "  - dedup: { method: minhash, sources: [tickets] }",
          "  - dedup: { method: minhash, bands: 200 }",
          "  - dedup: { method: near }",
        ].join("\n"),
      ),
    ).toMatchInlineSnapshot(`
      [
        "p.yaml:6:64: stages[0].dedup.treshold: unknown key "treshold" (did you mean "threshold"?); allowed: method, threshold, shingle, ngram, lowercase, permutations, bands, miss_weight, confirm, keep, sources, action, memory_mb, workers",
        "p.yaml:6:42: stages[0].dedup.threshold: expected a number > 0 ≤ 1, got number 1.5",
        "p.yaml:6:61: stages[0].dedup.permutations: expected an integer from 16 to 1024, got number 8",
        "p.yaml:7:37: stages[1].dedup.keep: keep: source-priority needs "sources", the source names in priority order",
        "p.yaml:8:31: stages[2].dedup.sources: "sources" applies only to keep: source-priority (keep is first)",
        "p.yaml:9:38: stages[3].dedup.bands: bands must be at most permutations (128), got 200",
        "p.yaml:10:22: stages[4].dedup.method: expected one of exact | minhash, got "near"",
      ]
    `);
  });

  it("accept source-priority with its list", () => {
    const { value, issues } = check({ method: "minhash", keep: "source-priority", sources: ["manuals", "tickets"] });
    expect(issues).toEqual([]);
    expect(value).toMatchObject({ keep: "source-priority", sources: ["manuals", "tickets"] });
  });
});
