// The tokenize stage with `tokenizer: PATH` resolves the path against the pipeline's directory and builds the same way in a worker's batch handler.
import { mkdtempSync, mkdirSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { batchHandler } from "../../src/parallel/record-batch.js";
import { FrameWriter, decodeFrames } from "../../src/cache/record-events.js";
import { tokenizeBounds, tokenizeOptions, encoderFor, type TokenizeOptions } from "../../src/stages/tokenize.js";
import { PretokenCounter, tokenizerJson, trainBpe } from "../../src/tokenizer/index.js";
import type { Issue } from "../../src/pipeline/schema.js";

function setup(): { baseDir: string; options: TokenizeOptions } {
  const baseDir = mkdtempSync(join(tmpdir(), "sp-tokstage-"));
  mkdirSync(join(baseDir, "tok"));
  const c = new PretokenCounter();
  c.add("Door sensor on car 12 replaced. Door sensor on car 14 replaced. Pantograph checked.");
  const model = trainBpe(c.counts, { vocabSize: 300, minFrequency: 2, specialTokens: ["<|pad|>", "<|endoftext|>"] });
  writeFileSync(join(baseDir, "tok/tokenizer.json"), tokenizerJson(model));
  const issues: Issue[] = [];
  const options = tokenizeOptions.check({ tokenizer: "tok/tokenizer.json", bos: true }, ["tokenize"], issues) as TokenizeOptions;
  expect(issues).toEqual([]);
  return { baseDir, options };
}

describe("tokenize: { tokenizer: PATH }", () => {
  it("tokenizes in a batch handler (as in a worker) with the file's ids, BOS and EOS its <|endoftext|>", async () => {
    const { baseDir, options } = setup();
    const handle = await batchHandler({ stages: [{ name: "tokenize", options } as never], baseDir, seed: 0 });
    const text = "Door sensor on car 13 replaced.";
    const batch = new FrameWriter();
    batch.rec({ id: "a", source: "s", text, meta: {}, origin: { file: "f", line: 1 }, seq: 0 });
    const out = await handle(batch.take());
    const [e] = [...decodeFrames(out.frames)];
    if (e.k !== "rec") throw new Error(`expected a record, got ${e.k}`);
    const enc = encoderFor(options, baseDir);
    expect(enc.eosId).toBe(1);
    expect(Array.from(e.r.tokens!)).toEqual([1, ...enc.encode(text), 1]);
    expect(enc.encode(" sensor").length).toBe(1);
    expect(tokenizeBounds(options, baseDir)).toEqual({ eosId: 1, vocabSize: enc.vocabSize });
  });

  it("names the resolved path when the file is missing", () => {
    const { options } = setup();
    expect(() => encoderFor(options, "/nonexistent")).toThrow("tokenizer file /nonexistent/tok/tokenizer.json: no such file or directory");
  });
});
