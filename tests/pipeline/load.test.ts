// The pipeline file: every problem reported at once, with file:line:col, the key, what was expected, a close match.
import { describe, expect, it } from "vitest";
import { parsePipeline } from "../../src/pipeline/load.js";
import { SiftpackError } from "../../src/errors.js";
import { readFileSync } from "node:fs";

function problems(text: string): { code: string; message: string; details: string[] } {
  try {
    parsePipeline(text, "p.yaml");
  } catch (e) {
    if (e instanceof SiftpackError) return { code: e.code, message: e.message, details: e.details };
    throw e;
  }
  throw new Error("expected the pipeline to be rejected");
}

const good = `siftpack: 1
seed: 3
sources:
  - name: tickets
    files: data/*.jsonl
    format: jsonl
    text: body
    meta: [depot]
stages:
  - normalize: { form: NFC }
  - split: { by: depot }
  - tokenize: { encoding: gpt2 }
  - pack: { length: 64 }
output:
  dir: out
`;

describe("pipeline file", () => {
  it("accepts a valid file and fills in defaults", () => {
    const c = parsePipeline(good, "p.yaml");
    expect(c.seed).toBe(3);
    expect(c.max_bad_fraction).toBe(0.01);
    expect(c.sources[0]).toMatchObject({ weight: 1, meta: ["depot"] });
    expect(c.sources[0].id).toBeUndefined();
    expect(c.stages.map((s) => s.name)).toEqual(["normalize", "split", "tokenize", "pack"]);
    expect(c.stages[0].options).toMatchObject({ form: "NFC", trim: true, max_blank_lines: 1 });
    expect(c.stages[1].options.holdout).toEqual({ val: 0.01, test: 0.01 });
    expect(c.stages[3].options).toMatchObject({ length: 64, strategy: "concat" });
    expect(c.output.shard_blocks).toBe(4096);
  });

  it("accepts the same shape as JSON", () => {
    const json = JSON.stringify({
      siftpack: 1,
      sources: [{ name: "a", files: "*.txt", format: "text" }],
      stages: [{ tokenize: {} }, { pack: { length: 16 } }],
      output: { dir: "out" },
    });
    expect(parsePipeline(json, "p.json").stages[1].options.length).toBe(16);
  });

  it("reports every problem at once with positions and suggestions", () => {
    const bad = `siftpack: 1
seed: -4
sources:
  - name: tickets
    file: data/*.jsonl
    format: jsonlines
    text: 5
stages:
  - normalise: {}
  - filter: { min_word: 5 }
  - tokenize: { encoding: gpt2 }
  - pack: { length: "long" }
output:
  dri: out
`;
    const p = problems(bad);
    expect(p.code).toBe("SP_PIPELINE_KEY");
    expect(p.message).toMatchInlineSnapshot(`"p.yaml: 10 problems in the pipeline file"`);
    expect(p.details).toMatchInlineSnapshot(`
      [
        "p.yaml:2:7: seed: expected an integer from 0 to 4294967295, got number -4",
        "p.yaml:5:5: sources[0].file: unknown key "file" (did you mean "files"?); allowed: name, files, format, text, id, meta, weight, max_line_mb, accept_truncated, turns",
        "p.yaml:4:5: sources[0].files: missing required key "files" (a string)",
        "p.yaml:6:13: sources[0].format: expected one of jsonl | json | csv | tsv | text | parquet, got "jsonlines"",
        "p.yaml:7:11: sources[0].text: expected a string, got number 5",
        "p.yaml:9:5: stages[0].normalise: unknown stage "normalise" (did you mean "normalize"?); stages: normalize, filter, redact, language, strip_repeated_lines, dedup, split, decontaminate, tokenize, pack",
        "p.yaml:10:15: stages[1].filter.min_word: unknown key "min_word" (did you mean "min_words"?); allowed: rules, min_words, max_words, min_chars, max_chars, mean_word_length, alpha_words, symbol_ratio, stop_words, bullet_lines, ellipsis_lines, duplicate_lines, duplicate_paragraphs, top_ngrams, duplicate_ngrams",
        "p.yaml:12:21: stages[3].pack.length: expected an integer from 2 to 1048576, got "long"",
        "p.yaml:14:3: output.dri: unknown key "dri" (did you mean "dir"?); allowed: dir, shard_blocks",
        "p.yaml:14:3: output.dir: missing required key "dir" (a string)",
      ]
    `);
  });

  it("checks rules across keys: stage order, split field, duplicate source names", () => {
    const bad = good
      .replace("  - split: { by: depot }\n", "  - split: { by: dept }\n")
      .replace("  - tokenize: { encoding: gpt2 }\n  - pack: { length: 64 }\n", "  - pack: { length: 64 }\n  - tokenize: { encoding: gpt2 }\n");
    const p = problems(bad);
    expect(p.details).toMatchInlineSnapshot(`
      [
        "p.yaml:12:5: stages[2].pack: "pack" must be the last stage",
        "p.yaml:13:5: stages[3].tokenize: "tokenize" must come before "pack"",
        "p.yaml:11:18: stages[1].split.by: split.by is "dept" but no source lists it in meta (did you mean "depot"?); records without it are split by id",
      ]
    `);
  });

  it("reports YAML syntax errors with a position", () => {
    const p = problems("siftpack: 1\nsources: [\n  - name: x\n");
    expect(p.code).toBe("SP_PIPELINE_FILE");
    expect(p.details[0]).toMatch(/^p\.yaml:\d+:\d+: /);
  });

  it("rejects a missing version and an empty file", () => {
    expect(problems("seed: 1\n").details.join("\n")).toMatch(/missing required key "siftpack"/);
    expect(problems("").details.join("\n")).toMatch(/missing required key "sources"/);
  });

  it("overlap settings: defaults, a mapping, or false", () => {
    expect(parsePipeline(good, "p.yaml").overlap).toEqual({ enabled: true, ngram: 13, near_duplicates: true });
    expect(parsePipeline(good + "overlap: { ngram: 8, near_duplicates: false }\n", "p.yaml").overlap).toEqual({ enabled: true, ngram: 8, near_duplicates: false });
    expect(parsePipeline(good + "overlap: false\n", "p.yaml").overlap.enabled).toBe(false);
    expect(problems(good + "overlap: { n: 8 }\n").details.join("\n")).toMatch(/overlap\.n: unknown key "n"/);
  });

  it("the demo pipeline is valid", () => {
    expect(() => parsePipeline(readFileSync("pipelines/demo.yaml", "utf8"), "pipelines/demo.yaml")).not.toThrow();
  });
});
