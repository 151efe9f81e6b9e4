// A template naming special tokens of a tokenizer file (its added tokens): the markers become their
// ids, the build decodes to the rendered conversations, and only the trained role is a target.
import { describe, expect, it } from "vitest";
import { readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { siftpack, tempDir } from "./cli.js";
import { tokenizerJson, trainBpe } from "../../src/tokenizer/index.js";
import { readNpyRow } from "../../src/pack/npy-row.js";
import type { Manifest } from "../../src/output/manifest.js";

describe("conversations with a tokenizer file's special tokens", () => {
  it("renders [[<|tech|>]] and [[<|desk|>]] as their ids and trains on the desk's turns only", async () => {
    const dir = tempDir("conv-tokfile");
    const counts = new Map([["door", 5], ["fault", 5], [" the", 9]]);
    const model = trainBpe(counts, { vocabSize: 300, minFrequency: 2, specialTokens: ["<|endoftext|>", "<|tech|>", "<|desk|>"] });
    writeFileSync(join(dir, "tokenizer.json"), tokenizerJson(model));
    writeFileSync(
      join(dir, "c.jsonl"),
      [
        { id: "a", messages: [{ role: "tech", text: "Door fault on car 4711, left side." }, { role: "desk", text: "Check the limit switch." }] },
        { id: "b", messages: [{ role: "tech", text: "Horn is weak on car 5203 today." }, { role: "desk", text: "Replace the horn fuse." }] },
      ]
        .map((r) => JSON.stringify(r))
        .join("\n") + "\n",
    );
    writeFileSync(
      join(dir, "p.yaml"),
      `siftpack: 1
sources: [{ name: c, files: c.jsonl, format: jsonl, id: id, turns: { field: messages, roles: [tech, desk] } }]
overlap: false
stages:
  - tokenize: { tokenizer: tokenizer.json, eos: true, template: { roles: { tech: { before: "[[<|tech|>]]" }, desk: { before: "[[<|desk|>]]" } }, train_on: [desk] } }
  - pack: { length: 64, strategy: single, emit: [target_mask], shuffle: false }
output: { dir: out }
`,
    );
    const r = siftpack(["run", join(dir, "p.yaml"), "--quiet"]);
    expect(r.stderr).toBe("");
    expect(r.code).toBe(0);
    const out = join(dir, "out");
    const m = JSON.parse(readFileSync(join(out, "manifest.json"), "utf8")) as Manifest;
    const shard = m.splits.train.shards[0];
    const decode = (ids: ArrayLike<number>) => siftpack(["encode", "--tokenizer", join(dir, "tokenizer.json"), "--decode"], { input: JSON.stringify([...ids]) }).stdout;
    const texts = [];
    for (let row = 0; row < 2; row++) {
      const tokens = (await readNpyRow(join(out, shard.tokens), row)).values;
      const seg = (await readNpyRow(join(out, shard.segments), row)).values;
      const target = (await readNpyRow(join(out, shard.target_mask!), row)).values;
      const n = seg.filter((s) => s !== 0).length;
      // <|tech|> = 1 and <|desk|> = 2 open the turns; <|endoftext|> = 0 ends the document (and pads).
      expect(tokens[0]).toBe(1);
      const desk = tokens.indexOf(2);
      expect(desk).toBeGreaterThan(1);
      expect(tokens[n - 1]).toBe(0);
      // Targets: the desk's text only (its before marker, the question and EOS are read, not trained).
      expect([...target].map((t, i) => (t ? i : -1)).filter((i) => i >= 0)).toEqual(Array.from({ length: n - 2 - desk }, (_, k) => desk + 1 + k));
      texts.push(decode(tokens.subarray(0, n)));
    }
    expect(texts.sort()).toEqual([
      "<|tech|>Door fault on car 4711, left side.<|desk|>Check the limit switch.<|endoftext|>",
      "<|tech|>Horn is weak on car 5203 today.<|desk|>Replace the horn fuse.<|endoftext|>",
    ]);
  });
});
