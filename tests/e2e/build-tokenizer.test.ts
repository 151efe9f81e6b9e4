// `inspect` and `encode --build` with every kind of tokenizer a build can have: a named encoding
// (cl100k_base, ids past GPT-2's vocabulary), a tokenizer trained by the build, and a tokenizer file.
import { beforeAll, describe, expect, it } from "vitest";
import { copyFileSync, readFileSync, renameSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { get_encoding } from "tiktoken";
import { ROOT, siftpack, tempDir, demoVariant } from "./cli.js";

/** The demo pipeline (inputs by absolute path) with another tokenize line, in its own folder. */
const variant = (dir: string, tokenizeLine: string) => demoVariant(dir, "tokenize", tokenizeLine);

function build(dir: string, tokenizeLine: string): string {
  const out = join(dir, "out");
  const r = siftpack(["run", variant(dir, tokenizeLine), "--out", out, "--quiet"]);
  expect(r.stderr).toBe("");
  expect(r.code).toBe(0);
  return out;
}

interface Inspected {
  tokens: number[];
  pieces: { segment: number; start: number; end: number; text: string }[];
}

function inspect(dir: string, extra: string[] = []): Inspected {
  const r = siftpack(["inspect", dir, "--split", "val", "--block", "0", "--json", ...extra]);
  expect(r.stderr).toBe("");
  expect(r.code).toBe(0);
  return JSON.parse(r.stdout);
}

/** Each piece's ids decoded by `encode --decode --build` give the text inspect printed for it. */
function decodesLikeInspect(dir: string, block: Inspected): void {
  for (const p of block.pieces.filter((x) => x.segment !== 0)) {
    const r = siftpack(["encode", "--decode", "--build", dir], { input: JSON.stringify(block.tokens.slice(p.start, p.end)) });
    expect(r.stderr).toBe("");
    expect(r.stdout).toBe(p.text);
  }
}

let cl100k: string;
let trained: string;
let fileDir: string;
let fromFile: string;
beforeAll(() => {
  cl100k = build(tempDir("tk-cl100k"), "{ encoding: cl100k_base, eos: true }");
  trained = build(tempDir("tk-trained"), "{ train: { vocab_size: 600 }, eos: true }");
  // The trained tokenizer, saved as a file a second pipeline names.
  fileDir = tempDir("tk-file");
  copyFileSync(join(trained, "tokenizer.json"), join(fileDir, "depot-tok.json"));
  fromFile = build(fileDir, "{ tokenizer: depot-tok.json, eos: true }");
});

describe("a build's own tokenizer", () => {
  it("cl100k_base: inspect decodes, and encode --decode --build agrees with the reference decoder (tiktoken)", () => {
    const block = inspect(cl100k);
    expect(Math.max(...block.tokens)).toBeGreaterThanOrEqual(50257); // ids GPT-2 does not have
    decodesLikeInspect(cl100k, block);
    // Reference: the tiktoken npm package's cl100k_base.
    const ref = get_encoding("cl100k_base");
    const p = block.pieces[0];
    expect(block.pieces[0].text).toBe(new TextDecoder().decode(ref.decode(Uint32Array.from(block.tokens.slice(p.start, p.end)))));
    ref.free();
  });

  it("without --build, ids past the default vocabulary are named with what to pass", () => {
    const block = inspect(cl100k);
    const at = block.tokens.findIndex((t) => t >= 50257);
    const r = siftpack(["encode", "--decode"], { input: JSON.stringify(block.tokens) });
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(
      `siftpack: error: --decode: entry ${at} of the list: ${block.tokens[at]} is not below 50257, the vocabulary size of gpt2 (the default); name the tokenizer the ids come from: --build DIR (a build's own), --encoding NAME (gpt2, r50k_base, p50k_base, cl100k_base, o200k_base) or --tokenizer FILE\n`,
    );
  });

  it("trained: inspect and encode --build use the build's tokenizer.json", () => {
    const block = inspect(trained);
    expect(Math.max(...block.tokens)).toBeLessThan(600);
    decodesLikeInspect(trained, block);
    const text = siftpack(["inspect", trained, "--split", "val", "--block", "0"]);
    expect(text.stdout.split("\n")[0]).toMatch(/ · trained@[0-9a-f]{16}$/);
    // The same file read for a pipeline gives the same ids and the same texts.
    expect(inspect(fromFile)).toEqual(block);
  });

  it("tokenizer file: found through the pipeline's folder; when moved, named with --tokenizer; another file is refused", () => {
    decodesLikeInspect(fromFile, inspect(fromFile));
    const moved = join(tempDir("tk-moved"), "depot-tok.json");
    renameSync(join(fileDir, "depot-tok.json"), moved);
    try {
      const lost = siftpack(["inspect", fromFile, "--split", "val", "--block", "0"]);
      expect(lost.code).toBe(2);
      expect(lost.stderr).toMatch(/^siftpack: error: .*out was built with the tokenizer file depot-tok\.json@[0-9a-f]{16}, but .*depot-tok\.json \(the pipeline's tokenizer file\) is gone: pass it with --tokenizer FILE\n$/);
      expect(inspect(fromFile, ["--tokenizer", moved]).tokens.length).toBeGreaterThan(0);
      const r = siftpack(["encode", "--decode", "--build", fromFile, "--tokenizer", moved], { input: "[300, 301]" });
      expect(r.code).toBe(0);
      // A file with other content is never used to decode.
      const other = join(tempDir("tk-other"), "depot-tok.json");
      writeFileSync(other, readFileSync(moved, "utf8") + "\n "); // the same tokens, another file
      const wrong = siftpack(["inspect", fromFile, "--split", "val", "--block", "0", "--tokenizer", other]);
      expect(wrong.code).toBe(2);
      expect(wrong.stderr).toContain(`${other} is not the tokenizer`);
    } finally {
      renameSync(moved, join(fileDir, "depot-tok.json"));
    }
  });
});
