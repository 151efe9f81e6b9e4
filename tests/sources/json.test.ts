// JSON array reader: elements as rows, non-object elements, invalid UTF-8, truncation, wrong shapes.

import fs from "node:fs";
import zlib from "node:zlib";
import { afterAll, describe, expect, it } from "vitest";
import { readJson } from "../../src/sources/json.js";
import { bytes, collect, tempDir } from "./fixtures/tmp.js";

const tmp = tempDir("json");
afterAll(() => tmp.remove());

const notes = [
  { note_id: 1, text: "Depot B: sanding hopper on car 3 refilled.", tags: ["sand", "car-3"] },
  { note_id: 2, text: "Overhead line inspection moved to Thursday.", nested: { shift: "night", crew: 4 } },
  { note_id: 3, text: "Timetable board at the loop shows \"Platform 2\" twice.", ok: true, none: null },
];

describe("readJson", () => {
  it("streams the elements of a top-level array, line = 1-based element index", async () => {
    const rows = await collect(readJson(tmp.put("notes.json", JSON.stringify(notes, null, 2))));
    expect(rows).toEqual(notes.map((fields, k) => ({ line: k + 1, fields })));
  });

  it("reads .json.gz, a BOM and an empty array", async () => {
    expect(await collect(readJson(tmp.put("notes.json.gz", "\ufeff" + JSON.stringify(notes))))).toEqual(
      notes.map((fields, k) => ({ line: k + 1, fields })),
    );
    expect(await collect(readJson(tmp.put("none.json", " [ ] \n")))).toEqual([]);
  });

  it("quarantines non-object elements and goes on", async () => {
    const text = `[${JSON.stringify(notes[0])}, 17, "loose note", [1, 2], null, ${JSON.stringify(notes[1])}]`;
    const rows = await collect(readJson(tmp.put("mixed.json", text)));
    expect(rows).toEqual([
      { line: 1, fields: notes[0] },
      { line: 2, error: "expected a JSON object, got number" },
      { line: 3, error: "expected a JSON object, got string" },
      { line: 4, error: "expected a JSON object, got array" },
      { line: 5, error: "expected a JSON object, got null" },
      { line: 6, fields: notes[1] },
    ]);
  });

  it("quarantines only the element holding invalid UTF-8", async () => {
    const before = `[{"text":"ok"},\n {"text":"Stra`; // 30 bytes, so the bad byte is at offset 30
    const file = tmp.put("bad-utf8.json", bytes(before, [0xdf], `enbahn"},\n {"text":"also ok"}]`));
    expect(before.length).toBe(30);
    expect(await collect(readJson(file))).toEqual([
      { line: 1, fields: { text: "ok" } },
      { line: 2, error: "invalid UTF-8 at byte offset 30" },
      { line: 3, fields: { text: "also ok" } },
    ]);
  });

  it("keeps the elements before a syntax error and reports the element it stopped in", async () => {
    const text = `[${JSON.stringify(notes[0])},${JSON.stringify(notes[1])},{"text": "half" "x"}, {"text":"never read"}]`;
    expect(await collect(readJson(tmp.put("syntax.json", text)))).toEqual([
      { line: 1, fields: notes[0] },
      { line: 2, fields: notes[1] },
      { line: 3, error: "malformed JSON: expected ',' (the rest of the file is skipped)" },
    ]);
  });

  it("reports a truncated file after the elements it did read", async () => {
    const full = JSON.stringify(notes);
    const text = full.slice(0, full.indexOf('"note_id":3') + 5);
    expect(await collect(readJson(tmp.put("truncated.json", text)))).toEqual([
      { line: 1, fields: notes[0] },
      { line: 2, fields: notes[1] },
      { line: 3, error: "truncated JSON: the file ends before the array is closed" },
    ]);
  });

  it("reports a file that is not an array as a whole-file error", async () => {
    expect(await collect(readJson(tmp.put("object.json", JSON.stringify(notes[0]))))).toEqual([
      { line: 0, error: "not a JSON array: the top-level value is an object" },
    ]);
    expect(await collect(readJson(tmp.put("string.json", '"just a note"')))).toEqual([
      { line: 0, error: "not a JSON array: the top-level value is a string" },
    ]);
    expect(await collect(readJson(tmp.put("prose.json", "Depot closed on Sunday.")))).toEqual([
      { line: 0, error: "not a JSON array: malformed JSON: expected a value" },
    ]);
  });

  it("keeps the array and reports content after it", async () => {
    expect(await collect(readJson(tmp.put("trailing.json", `[{"a":1}] {"b":2}`)))).toEqual([
      { line: 1, fields: { a: 1 } },
      { line: 0, error: "trailing content after the JSON array" },
    ]);
  });

  it("reports a 0-byte or whitespace-only file as empty", async () => {
    expect(await collect(readJson(tmp.put("empty.json", "")))).toEqual([{ line: 0, error: "empty file" }]);
    expect(await collect(readJson(tmp.put("space.json", " \n\t ")))).toEqual([{ line: 0, error: "empty file" }]);
  });

  it("turns corrupt gzip into a truncated row at the element reached", async () => {
    const many = Array.from({ length: 4000 }, (_, i) => ({ n: i + 1, text: `Brake test log ${i + 1}, bay ${i % 5}` }));
    const gz = zlib.gzipSync(JSON.stringify(many));
    const file = `${tmp.dir}/cut.json.gz`;
    fs.writeFileSync(file, gz.subarray(0, Math.floor(gz.length / 2)));
    const rows = await collect(readJson(file));
    const good = rows.slice(0, -1);
    expect(good.length).toBeGreaterThan(100);
    expect(good).toEqual(good.map((_, k) => ({ line: k + 1, fields: many[k] })));
    const error = "corrupt gzip data: unexpected end of file";
    // A cut file is read to its (early) end: every byte of it consumed.
    expect(rows[rows.length - 1]).toEqual({ line: good.length + 1, error, truncated: { error, bytes_read: Math.floor(gz.length / 2), size: Math.floor(gz.length / 2) } });
  });
});
