// Tokenizers in a whole build: one trained on the corpus, then the same file loaded by a second build.
import { describe, expect, it } from "vitest";
import { readFileSync, writeFileSync, copyFileSync } from "node:fs";
import { join } from "node:path";
import { demoCopy, outputFiles, siftpack } from "./cli.js";

describe("tokenizer trained on the corpus, and loaded from its file", () => {
  const dir = demoCopy();
  const pipeline = join(dir, "pipelines/demo.yaml");
  const demo = readFileSync(pipeline, "utf8");
  expect(demo).toMatch(/tokenize: \{ encoding: gpt2, eos: true \}/);

  it("trains, saves tokenizer.json in the build, and reports held-out compression", () => {
    writeFileSync(pipeline, demo.replace(/tokenize: \{ encoding: gpt2, eos: true \}/, "tokenize: { train: { vocab_size: 1200 }, eos: true }"));
    const r = siftpack(["run", pipeline]);
    expect(r.stderr).toBe("");
    expect(r.code).toBe(0);
    const out = join(dir, "build/demo");
    const m = JSON.parse(readFileSync(join(out, "manifest.json"), "utf8"));
    expect(m.tokenizer.name).toMatch(/^trained@[0-9a-f]{16}$/);
    expect(m.tokenizer.vocab_size).toBeLessThanOrEqual(1200);
    expect(m.tokenizer.eos_id).toBe(0);
    expect(m.dtype).toBe("uint16");
    expect(m.files.map((f: { path: string }) => f.path)).toContain("tokenizer.json");
    const c = m.stage_counts;
    expect(c["tokenizer:heldout_tokens"]).toBeGreaterThan(0);
    // a small vocabulary compresses less than GPT-2's 50k, but more than one byte a token
    expect(c["tokenizer:heldout_bytes"] / c["tokenizer:heldout_tokens"]).toBeGreaterThan(1.5);
    expect(siftpack(["verify", out]).code).toBe(0);
    // the CLI encodes and decodes with the saved file
    const ids = siftpack(["encode", "--tokenizer", join(out, "tokenizer.json")], { input: "Pantograph carbon strips replaced on car 14." });
    expect(ids.code).toBe(0);
    const back = siftpack(["encode", "--tokenizer", join(out, "tokenizer.json"), "--decode"], { input: ids.stdout });
    expect(back.stdout).toBe("Pantograph carbon strips replaced on car 14.");
  });

  it("a second build with the saved file gives the same token shards", () => {
    const first = outputFiles(join(dir, "build/demo"));
    copyFileSync(join(dir, "build/demo/tokenizer.json"), join(dir, "pipelines/tokenizer.json"));
    writeFileSync(pipeline, demo.replace(/tokenize: \{ encoding: gpt2, eos: true \}/, "tokenize: { tokenizer: tokenizer.json, eos: true }"));
    const r = siftpack(["run", pipeline]);
    expect(r.stderr).toBe("");
    expect(r.code).toBe(0);
    const second = outputFiles(join(dir, "build/demo"));
    const shards = Object.keys(first).filter((k) => k.endsWith(".tokens.npy") || k.endsWith(".segments.npy"));
    expect(shards.length).toBeGreaterThan(3);
    for (const k of shards) expect(second[k], k).toBe(first[k]);
    const m = JSON.parse(readFileSync(join(dir, "build/demo/manifest.json"), "utf8"));
    expect(m.tokenizer.name).toMatch(/^tokenizer\.json@[0-9a-f]{16}$/);
  });
});
