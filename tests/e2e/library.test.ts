// The README's library example: a custom stage registered from code, run through runPipeline.
import { describe, expect, it } from "vitest";
import { mkdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { defineStage, loadPipeline, runPipeline, schema, STAGES } from "../../src/index.js";
import { tempDir } from "./cli.js";

const quiet = { info() {}, warn() {}, error() {}, debug() {} };

describe("library use", () => {
  it("runs a pipeline with a stage of the user's own", async () => {
    STAGES["drop-attachments"] = defineStage({
      name: "drop-attachments",
      summary: "drops tickets whose text only points at an attachment",
      options: schema.obj({}),
      create: () =>
        async function* (records, ctx) {
          for await (const r of records) {
            if (/^see attached\.?$/i.test(r.text)) ctx.drop(r, "attachment-only");
            else yield r;
          }
        },
    });
    const dir = tempDir("lib");
    mkdirSync(join(dir, "d"));
    writeFileSync(join(dir, "d/t.jsonl"), ['{"text":"See attached."}', '{"text":"Wheel flat on car 12 reprofiled at Northfold."}'].join("\n") + "\n");
    writeFileSync(
      join(dir, "p.yaml"),
      "siftpack: 1\nsources: [{ name: t, files: d/*.jsonl, format: jsonl }]\nstages:\n  - drop-attachments: {}\n  - tokenize: {}\n  - pack: { length: 16 }\noutput: { dir: out }\n",
    );
    const p = await loadPipeline(join(dir, "p.yaml"));
    const { manifest } = await runPipeline(p, { log: quiet });
    expect(manifest.records).toMatchObject({ read: 2, kept: 1, dropped: 1, by_reason: { "attachment-only": 1 } });
    expect(manifest.splits.train.documents).toBe(1);
    delete STAGES["drop-attachments"];
  });
});
