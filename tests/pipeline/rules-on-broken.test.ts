// The rules across keys run even when the schema found problems: on any broken pipeline file they
// add their own findings and never fail on what the schema refused.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { stringify } from "yaml";
import { checkPipelineText } from "../../src/pipeline/load.js";

const anyValue = fc.oneof(fc.constant(null), fc.integer(), fc.string({ maxLength: 6 }), fc.boolean(), fc.constant([]), fc.constant({}));
const stageName = fc.constantFrom("split", "tokenize", "pack", "decontaminate", "dedup", "tokenise", "filter");
const stage = fc.oneof(anyValue, fc.dictionary(stageName, fc.oneof(anyValue, fc.record({ by: anyValue, against: anyValue, holdot: anyValue }, { requiredKeys: [] })), { maxKeys: 2 }));
const source = fc.oneof(anyValue, fc.record({ name: anyValue, files: anyValue, format: fc.oneof(anyValue, fc.constantFrom("jsonl", "text")), meta: fc.oneof(anyValue, fc.array(anyValue, { maxLength: 3 })), max_line_mb: anyValue }, { requiredKeys: [] }));
const pipeline = fc.record(
  { siftpack: fc.oneof(fc.constant(1), anyValue), sources: fc.oneof(anyValue, fc.array(source, { maxLength: 3 })), stages: fc.oneof(anyValue, fc.array(stage, { maxLength: 5 })), output: fc.oneof(anyValue, fc.record({ dir: anyValue }, { requiredKeys: [] })) },
  { requiredKeys: [] },
);

describe("rules across keys on a broken pipeline file", () => {
  it("never throw, and every problem has a position", () => {
    fc.assert(
      fc.property(pipeline, (p) => {
        const { issues, describe: where } = checkPipelineText(stringify(p), "p.yaml");
        for (const i of issues) expect(where(i)).toMatch(/^p\.yaml:\d+:\d+: /);
      }),
      { numRuns: 500 },
    );
  });

  it("report a split.by typo together with schema problems", () => {
    const text = "siftpack: 1\nseed: -1\nsources: [{ name: m, files: a.jsonl, format: jsonl, meta: [page] }]\nstages:\n  - split: { by: pgae }\n  - tokenize: {}\n  - pack: { length: 16 }\noutput: { dri: out }\n";
    const { issues } = checkPipelineText(text, "p.yaml");
    expect(issues.map((i) => i.message)).toEqual([
      "expected an integer from 0 to 4294967295, got number -1",
      'unknown key "dri" (did you mean "dir"?); allowed: dir, shard_blocks',
      'missing required key "dir" (a string)',
      'split.by is "pgae" but no source lists it in meta (did you mean "page"?); records without it are split by id',
    ]);
  });
});
