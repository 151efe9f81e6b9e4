// Conversation sources in each format that holds lists: JSON lines, a JSON array and Parquet (a list
// of structs, as a Parquet writer lays it out), read through the real readers.
import { describe, expect, it } from "vitest";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { parquetWriteBuffer } from "hyparquet-writer";
import { readSource, type SourceSpec } from "../../src/sources/source.js";

const ROWS = [
  { conv: "HD-1", messages: [{ from: "technician", value: "Door fault F210 on car 4711?" }, { from: "helpdesk", value: "Check the limit switch gap." }] },
  { conv: "HD-2", messages: [{ from: "technician", value: "Horn weak on car 5203." }, { from: "driver", value: "It is." }] },
];

async function read(format: SourceSpec["format"], file: string, dir: string) {
  const spec: SourceSpec = { name: "desk", files: file, format, text: "text", id: "conv", meta: [], weight: 1, turns: { field: "messages", role: "from", text: "value", roles: ["technician", "helpdesk"] } };
  const out = [];
  for await (const e of readSource(spec, dir)) out.push(e);
  return out;
}

const EXPECTED = [
  { kind: "record", id: "HD-1", text: "Door fault F210 on car 4711?\nCheck the limit switch gap.", turns: [{ role: "technician", chars: 28 }, { role: "helpdesk", chars: 27 }] },
  { kind: "bad", entry: { source: "desk", line: 2, error: 'turn 2 of "messages": unknown role "driver" (the source\'s roles are technician, helpdesk)' } },
];

describe("conversation sources by format", () => {
  const dir = mkdtempSync(join(tmpdir(), "siftpack-conv-formats-"));

  it("JSON lines", async () => {
    writeFileSync(join(dir, "c.jsonl"), ROWS.map((r) => JSON.stringify(r)).join("\n") + "\n");
    expect(await read("jsonl", "c.jsonl", dir)).toMatchObject(EXPECTED);
  });

  it("a JSON array", async () => {
    writeFileSync(join(dir, "c.json"), JSON.stringify(ROWS));
    expect(await read("json", "c.json", dir)).toMatchObject(EXPECTED);
  });

  it("Parquet", async () => {
    const buffer = parquetWriteBuffer({ columnData: [{ name: "conv", data: ROWS.map((r) => r.conv), type: "STRING" }, { name: "messages", data: ROWS.map((r) => r.messages) }] });
    writeFileSync(join(dir, "c.parquet"), Buffer.from(buffer));
    expect(await read("parquet", "c.parquet", dir)).toMatchObject(EXPECTED);
  });
});
