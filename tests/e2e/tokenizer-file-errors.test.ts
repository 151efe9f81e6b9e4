// A bad tokenizer file named by the pipeline: `plan` and `run` exit 2 with one line naming the file
// and the entry, no stack trace, no hang, and no work directory left behind.
import { existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { PretokenCounter, tokenizerJson, trainBpe } from "../../src/tokenizer/index.js";
import { demoCopy, siftpack } from "./cli.js";

/** A valid file from the project's trainer, on a few lines of the demo's tram-depot tickets. */
function trainedFile(): string {
  const c = new PretokenCounter();
  c.add("Door sensor on car 12 replaced at Quayside depot. Door sensor on car 14 replaced at Northfold depot.");
  c.add("Pantograph carbon strips checked on tram 7; wheel flats found on bogie 2.");
  return tokenizerJson(trainBpe(c.counts, { vocabSize: 320, minFrequency: 1, specialTokens: ["<|endoftext|>"] }));
}

const GOOD = trainedFile();
const edit = (mutate: (j: any) => void): string => {
  const j = JSON.parse(GOOD);
  mutate(j);
  return JSON.stringify(j, null, 2);
};

/** Each bad file, and the message after "tokenizer file pipelines/tok/tokenizer.json: ". */
const CASES: Array<[string, string | undefined, RegExp]> = [
  ["an id of 2^40", edit((j) => (j.model.vocab["Ġdepot"] = 2 ** 40)), /^vocab entry "Ġdepot" has id 1099511627776, above the largest id 4294967295$/],
  ["an id of 4e9", edit((j) => (j.added_tokens[0].id = 4_000_000_000)), /^added token "<\|endoftext\|>" has id 4000000000, but the file has only \d+ ids: /],
  ["a duplicate id", edit((j) => (j.model.vocab["Ġdepot"] = j.model.vocab["e"])), /^vocab entries "e" and "Ġdepot" both have id \d+$/],
  ["a merge of unknown tokens", edit((j) => (j.model.merges[3] = ["Ġtram", "shed"])), /^merge 3 \["Ġtram","shed"\] uses a token missing from the vocab: "Ġtram"$/],
  ["a WordPiece model", edit((j) => (j.model = { type: "WordPiece", unk_token: "[UNK]", vocab: { "[UNK]": 0, depot: 1 } })), /^unsupported model type "WordPiece"; only byte-level "BPE" is supported$/],
  ["truncated JSON", GOOD.slice(0, GOOD.length >> 1), /^not JSON: [^\n]+$/],
  ["no file", undefined, /^no such file or directory$/],
];

describe("a bad tokenizer file named by the pipeline", () => {
  const dir = demoCopy();
  const pipeline = join(dir, "pipelines/demo.yaml");
  const demo = readFileSync(pipeline, "utf8");
  expect(demo).toMatch(/tokenize: \{ encoding: gpt2, eos: true \}/);
  writeFileSync(pipeline, demo.replace(/tokenize: \{ encoding: gpt2, eos: true \}/, "tokenize: { tokenizer: tok/tokenizer.json, eos: true }"));
  mkdirSync(join(dir, "pipelines/tok"));
  const file = join(dir, "pipelines/tok/tokenizer.json");
  const use = (content: string | undefined) => (content === undefined ? rmSync(file, { force: true }) : writeFileSync(file, content));
  // Run from the copy, so the file is named as from there (paths outside the working directory stay absolute).
  const cli = (args: string[]) => siftpack(args, { cwd: dir });

  it("plan and run accept the trainer's file", () => {
    use(GOOD);
    for (const args of [["plan", "pipelines/demo.yaml"], ["run", "pipelines/demo.yaml"]]) {
      const r = cli(args);
      expect(r.stderr, args.join(" ")).toBe("");
      expect(r.code, args.join(" ")).toBe(0);
    }
    const m = JSON.parse(readFileSync(join(dir, "build/demo/manifest.json"), "utf8"));
    expect(m.tokenizer.name).toMatch(/^tokenizer\.json@[0-9a-f]{16}$/);
    expect(m.dtype).toBe("uint16");
    rmSync(join(dir, "build"), { recursive: true });
  });

  for (const [name, content, why] of CASES) {
    it(`${name}: plan and run exit 2 with one line, and leave no work directory`, () => {
      use(content);
      for (const args of [["plan", "pipelines/demo.yaml"], ["plan", "--tasks", "pipelines/demo.yaml"], ["run", "pipelines/demo.yaml"]]) {
        const r = cli(args);
        expect(r.signal, args.join(" ")).toBeNull();
        expect(r.code, `${args.join(" ")}: ${r.stderr}`).toBe(2);
        const lines = r.stderr.split("\n");
        expect(lines.length, r.stderr).toBe(2); // one line and the final newline
        expect(lines[1]).toBe("");
        const prefix = "siftpack: error: tokenizer file pipelines/tok/tokenizer.json: ";
        expect(lines[0].startsWith(prefix), lines[0]).toBe(true);
        expect(lines[0].slice(prefix.length)).toMatch(why);
        expect(r.stderr).not.toMatch(/\n\s+at |internal error/);
        expect(r.stdout).toBe("");
      }
      expect(existsSync(join(dir, "build/.demo.run"))).toBe(false);
      expect(existsSync(join(dir, "build/demo"))).toBe(false);
    });
  }
});
