// Conversations with a tokenizer trained in the build: the template's special tokens are checked
// against train.special_tokens where the pipeline file names them, and the trained build's targets
// decode to the help-desk's answers with their closing marker.
import { describe, expect, it } from "vitest";
import { readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { python, ROOT, siftpack, tempDir } from "./cli.js";
import { loadTokenizerFile } from "../../src/tokenizer/index.js";

function pipeline(specials: string): string {
  const dir = tempDir("conv-train");
  const text = readFileSync(join(ROOT, "pipelines/helpdesk.yaml"), "utf8")
    .replaceAll("../sample-data/", `${ROOT}/sample-data/`)
    .replace("      encoding: gpt2\n", `      train: { vocab_size: 700, special_tokens: ${specials} }\n`)
    .replace('after: "\\n[[<|endoftext|>]]"', 'after: "[[<|answer_end|>]]"');
  const file = join(dir, "helpdesk.yaml");
  writeFileSync(file, text);
  return file;
}

describe("conversations with a tokenizer trained in the build", () => {
  it("a special token missing from train.special_tokens is a pipeline error at its place", () => {
    const r = siftpack(["run", pipeline('["<|endoftext|>"]'), "--out", join(tempDir("conv-train-bad"), "out")]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/helpdesk\.yaml:\d+:\d+: stages\[6\]\.tokenize\.template\.roles\.helpdesk\.after: \[\[<\|answer_end\|>\]\] is not a special token of the tokenizer \(it has <\|endoftext\|>\)/);
  });

  it("trains, renders with the trained ids, and trains on the answers only", () => {
    const out = join(tempDir("conv-train-out"), "out");
    const r = siftpack(["run", pipeline('["<|endoftext|>", "<|answer_end|>"]'), "--out", out, "--quiet"]);
    expect(r.stderr).toBe("");
    expect(r.code).toBe(0);
    const enc = loadTokenizerFile(join(out, "tokenizer.json"));
    expect(enc.specialTokens["<|answer_end|>"]).toBe(1);
    // NumPy gathers every target token of the build in row order; decoded, they are the answers, each closed by its marker.
    const got = JSON.parse(
      python(
        `import json, sys, numpy as np
d = sys.argv[1]; m = json.load(open(d + "/manifest.json")); out = []
for s in m["splits"].values():
    for sh in s["shards"]:
        t = np.load(d + "/" + sh["tokens"]); k = np.load(d + "/" + sh["target_mask"])
        out += t[k == 1].tolist()
print(json.dumps(out))`,
        [out],
      ),
    ) as number[];
    const text = enc.decode(got);
    const answers = text.split("<|answer_end|>").filter((x) => x !== "");
    expect(answers.length).toBe(got.filter((id) => id === 1).length);
    expect(answers.every((a) => /^[A-Z]/.test(a) && !a.includes("### Technician"))).toBe(true);
    expect(text).toContain("Keep the car in. Note every step you have done on the job card");
  });
});
