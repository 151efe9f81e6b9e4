// Training a tokenizer in the tokenize stage: two passes through a spill file, tokenizer.json saved, held-out compression; the file then used by `siftpack encode --tokenizer`.
import { existsSync, readFileSync, readdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import tokenizeStage, { createTokenize, tokenizeOptions, type TokenizeOptions } from "../../src/stages/tokenize.js";
import type { Issue } from "../../src/pipeline/schema.js";
import type { DocRecord, StageContext } from "../../src/types.js";
import { siftpack, tempDir } from "./cli.js";

const LICENSE_TEXT = readFileSync("/usr/share/common-licenses/GPL-3", "utf8");

function records(): DocRecord[] {
  const paras = LICENSE_TEXT.split(/\n\s*\n/).filter((p) => p.trim().length > 0);
  // Every fifth paragraph is held out (val); the rest train.
  return paras.map((text, seq) => ({ id: `p${seq}`, source: "gpl", text, meta: { n: seq }, origin: { file: "GPL-3", line: seq + 1 }, seq, split: seq % 5 === 4 ? "val" : "train" }));
}

async function* stream<T>(items: T[]): AsyncGenerator<T> {
  for (const x of items) yield x;
}

function resolveOptions(raw: unknown): { options: TokenizeOptions; issues: Issue[] } {
  const issues: Issue[] = [];
  const options = tokenizeOptions.check(raw, ["tokenize"], issues) as TokenizeOptions;
  return { options, issues };
}

async function runTraining(workDir: string) {
  const { options, issues } = resolveOptions({ train: { vocab_size: 600, min_frequency: 2 } });
  expect(issues).toEqual([]);
  const counts: Record<string, number> = {};
  const files: string[] = [];
  const ctx: StageContext = {
    seed: 0,
    workDir,
    log: { info() {}, warn() {}, error() {}, debug() {} },
    drop: () => {
      throw new Error("no record should be dropped");
    },
    addOutputFile: (f) => files.push(f),
    count: (name, n = 1) => (counts[name] = (counts[name] ?? 0) + n),
  };
  const t = createTokenize(options, { baseDir: workDir });
  expect(() => t.encoder()).toThrow(/not trained yet/);
  const out: DocRecord[] = [];
  for await (const r of t.stage(stream(records()), ctx)) out.push(r);
  return { out, counts, files, encoder: t.encoder() };
}

describe("tokenize with train", () => {
  it("emits every record in input order with ids of the trained tokenizer, saves tokenizer.json and removes its spill", async () => {
    const dir = tempDir("train");
    const { out, counts, files, encoder } = await runTraining(dir);
    const input = records();
    expect(out.map((r) => r.id)).toEqual(input.map((r) => r.id));
    expect(out[3].meta).toEqual({ n: 3 });
    expect(files).toEqual(["tokenizer.json"]);
    expect(readdirSync(dir)).toEqual(["tokenizer.json"]);
    expect(encoder.vocabSize).toBe(600);
    expect(encoder.eosId).toBe(0);
    for (const r of out) {
      const ids = Array.from(r.tokens as Uint32Array);
      expect(ids[ids.length - 1]).toBe(0);
      expect(encoder.decode(ids.slice(0, -1))).toBe(r.text);
    }
    // Held-out compression: UTF-8 bytes over ids without the EOS of each held-out record.
    const val = input.filter((r) => r.split === "val");
    expect(counts["tokenizer:heldout_bytes"]).toBe(val.reduce((a, r) => a + Buffer.byteLength(r.text), 0));
    expect(counts["tokenizer:heldout_tokens"]).toBe(out.filter((r) => r.split === "val").reduce((a, r) => a + (r.tokens as Uint32Array).length - 1, 0));
    expect(counts["tokenizer:heldout_bytes"] / counts["tokenizer:heldout_tokens"]).toBeGreaterThan(2);
    expect(counts["tokenizer:merges"]).toBeGreaterThanOrEqual(600 - 257);

    // The same records give a byte-identical tokenizer.json.
    const again = tempDir("train2");
    await runTraining(again);
    expect(readFileSync(join(again, "tokenizer.json"), "utf8")).toBe(readFileSync(join(dir, "tokenizer.json"), "utf8"));

    // The saved file drives the CLI: same ids as the stage (EOS aside), and --decode back.
    const text = out[4].text;
    const enc = siftpack(["encode", "--tokenizer", join(dir, "tokenizer.json")], { input: text });
    expect(enc.code).toBe(0);
    expect(JSON.parse(enc.stdout)).toEqual(Array.from(out[4].tokens as Uint32Array).slice(0, -1));
    const back = siftpack(["encode", "--tokenizer", join(dir, "tokenizer.json"), "--decode"], { input: enc.stdout });
    expect(back.stdout).toBe(text);
  });

  it("refuses to run where there is no work directory (a worker thread)", async () => {
    const { options } = resolveOptions({ train: { vocab_size: 300 } });
    const stage = await tokenizeStage.create(options, { baseDir: "." });
    const ctx = { seed: 0, workDir: "", log: console, drop() {}, addOutputFile() {}, count() {} } as unknown as StageContext;
    await expect(async () => {
      for await (const _ of stage(stream(records().slice(0, 2)), ctx)) void _;
    }).rejects.toThrow(/cannot run per record in a worker/);
  });

  it("checks the options: alternatives, eos among the special tokens, vocab floor", () => {
    expect(resolveOptions({ encoding: "gpt2", tokenizer: "t.json" }).issues.map((i) => i.message)).toEqual([
      '"encoding" and "tokenizer" are alternatives: give one of encoding, tokenizer, train',
    ]);
    expect(resolveOptions({ train: { vocab_size: 300, special_tokens: ["<pad>"] } }).issues.map((i) => i.message)).toEqual([
      'must include the eos token "<|endoftext|>"',
    ]);
    expect(resolveOptions({ train: { vocab_size: 257 } }).issues.map((i) => i.message)).toEqual(["expected at least 258 (256 bytes, the special tokens and one merge)"]);
    expect(resolveOptions({ eos_token: "</s>" }).issues).toHaveLength(1);
    expect(resolveOptions({}).options).toEqual({ encoding: "gpt2", eos: true, bos: false });
  });

  it("siftpack plan reports both alternatives given, exit 2; encode refuses a WordPiece file naming it", () => {
    const dir = tempDir("trainplan");
    writeFileSync(
      join(dir, "p.yaml"),
      "siftpack: 1\nsources:\n  - { name: a, files: '*.txt', format: text }\nstages:\n  - tokenize: { encoding: gpt2, train: { vocab_size: 1000 } }\n  - pack: {}\noutput: { dir: out }\n",
    );
    const r = siftpack(["plan", join(dir, "p.yaml")]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('"encoding" and "train" are alternatives');
    writeFileSync(join(dir, "wp.json"), JSON.stringify({ model: { type: "WordPiece", vocab: {} } }));
    const w = siftpack(["encode", "--tokenizer", join(dir, "wp.json")], { input: "x" });
    expect(w.code).toBe(1);
    expect(w.stderr).toBe(`siftpack: error: tokenizer file ${join(dir, "wp.json")}: unsupported model type "WordPiece"; only byte-level "BPE" is supported\n`);
    expect(existsSync(join(dir, "out"))).toBe(false);
  });
});
