// The ids of a rendered conversation against an outside encoder: tiktoken (the reference library
// for the named encodings) encodes each help-desk demo conversation rendered whole, its
// <|endoftext|> markers allowed as special tokens, and gets the ids siftpack builds marker by marker.
import { afterAll, describe, expect, it } from "vitest";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { get_encoding } from "tiktoken";
import { parse } from "yaml";
import { CompiledTemplate } from "../../src/chat/template.js";
import { TokenBuffer, loadEncoding } from "../../src/tokenizer/index.js";
import { turnsOfRow } from "../../src/chat/turns.js";
import { template } from "./helpers.js";

const ROOT = join(import.meta.dirname, "../..");
const pipeline = parse(readFileSync(join(ROOT, "pipelines/helpdesk.yaml"), "utf8"));
const T = template(pipeline.stages.find((s: any) => s.tokenize).tokenize.template);
const source = pipeline.sources[0];
const ref = get_encoding("gpt2");
afterAll(() => ref.free());

describe("help-desk conversations: ids equal tiktoken's for the rendered text", () => {
  it("every well-formed conversation of the demo", () => {
    const enc = loadEncoding("gpt2");
    const c = new CompiledTemplate(T);
    let checked = 0;
    for (const line of readFileSync(join(ROOT, "sample-data/helpdesk/helpdesk.jsonl"), "utf8").trim().split("\n")) {
      const conv = turnsOfRow(JSON.parse(line), source.turns);
      if ("error" in conv) continue;
      const { tokens } = c.encode(enc, conv, false, false, new TokenBuffer());
      const rendered = c.render(enc, conv);
      expect([...tokens]).toEqual([...ref.encode(rendered, ["<|endoftext|>"])]);
      checked++;
    }
    expect(checked).toBe(44);
  });
});
