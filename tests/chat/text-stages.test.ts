// The stages that change text change each turn of a conversation on its own, keeping its turn edges.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import normalize from "../../src/stages/normalize.js";
import redact from "../../src/stages/redact.js";
import strip from "../../src/stages/strip-repeated-lines.js";
import { loadHasher } from "../../src/lib/hash.js";
import { turnTexts } from "../../src/chat/turns.js";
import type { DocRecord, StageContext, Turn } from "../../src/types.js";
import type { StageDefinition } from "../../src/stages/stage.js";
import type { Issue } from "../../src/pipeline/schema.js";

const work = mkdtempSync(join(tmpdir(), "siftpack-chat-stages-"));
afterAll(() => rmSync(work, { recursive: true, force: true }));
beforeAll(loadHasher);

function record(i: number, turns: [string, string][]): DocRecord {
  return { id: `HD-${i}`, source: "desk", text: turns.map(([, t]) => t).join("\n"), turns: turns.map(([role, t]): Turn => ({ role, chars: t.length })), meta: {}, origin: { file: "d.jsonl", line: i + 1 }, seq: i };
}

async function run(def: StageDefinition, options: unknown, records: DocRecord[]) {
  const issues: Issue[] = [];
  const o = def.options.check(options, [], issues);
  expect(issues).toEqual([]);
  const counts: Record<string, number> = {};
  const quiet = () => {};
  const ctx: StageContext = { seed: 0, drop: quiet, count: (n, k = 1) => (counts[n] = (counts[n] ?? 0) + k), log: { info: quiet, warn: quiet, error: quiet, debug: quiet }, workDir: work, addOutputFile: quiet };
  async function* input() {
    yield* records;
  }
  const s = await def.create(o, { baseDir: "." });
  const out: DocRecord[] = [];
  for await (const r of s(input(), ctx)) out.push(r);
  return { out, counts };
}

describe("text stages on conversations", () => {
  it("normalize trims and cleans each turn", async () => {
    const { out } = await run(normalize, {}, [record(0, [["tech", "  ﬁlter blocked on car 4711  "], ["desk", "Replace it.\r\n\r\n\r\n\r\nThen test.  "]])]);
    expect(turnTexts(out[0])).toEqual(["filter blocked on car 4711", "Replace it.\n\nThen test."]);
    expect(out[0].turns!.map((t) => t.role)).toEqual(["tech", "desk"]);
  });

  it("redact replaces within a turn and never across two", async () => {
    const { out, counts } = await run(redact, ["email", "phone"], [record(0, [["tech", "Call me on 0161 496 0732"], ["desk", "Or write to desk@example.org please."]])]);
    expect(turnTexts(out[0])).toEqual(["Call me on <PHONE>", "Or write to <EMAIL> please."]);
    expect(counts).toMatchObject({ "redact:phone": 1, "redact:email": 1 });
  });

  it("strip_repeated_lines counts lines over every turn and strips each turn", async () => {
    const sig = "Sent from the depot help-desk portal, do not reply.";
    const records = [0, 1, 2].map((i) => record(i, [["tech", `Door ${i} sticks on car 47${i}1.`], ["desk", `Adjust door ${i}.\n${sig}`]]));
    const { out, counts } = await run(strip, { min_docs: 3 }, records);
    expect(out.map((r) => turnTexts(r))).toEqual([0, 1, 2].map((i) => [`Door ${i} sticks on car 47${i}1.`, `Adjust door ${i}.`]));
    expect(counts).toMatchObject({ "strip_repeated_lines:lines_removed": 3 });
  });
});
