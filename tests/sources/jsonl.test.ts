// JSON Lines reader: good lines, each kind of bad line, blank lines, gzip, and read failures.

import fs from "node:fs";
import zlib from "node:zlib";
import { afterAll, describe, expect, it } from "vitest";
import { readJsonl } from "../../src/sources/jsonl.js";
import { bytes, collect, tempDir } from "./fixtures/tmp.js";

const tmp = tempDir("jsonl");
afterAll(() => tmp.remove());

const tickets = [
  { ticket_id: "T-1001", body: "Tram 14 door sensor sticks at the Quillon Street depot.", line: 14 },
  { ticket_id: "T-1002", body: "Pantograph on car 7 sparks in wet weather.", line: 7 },
  { ticket_id: "T-1003", body: "Night shift reports a flat wheel on car 22 — noisy on the loop.", line: 22 },
];
const asJsonl = (rows: object[], eol = "\n") => rows.map((r) => JSON.stringify(r)).join(eol) + eol;

describe("readJsonl", () => {
  it("reads one object per line with 1-based physical line numbers", async () => {
    const rows = await collect(readJsonl(tmp.put("tickets.jsonl", asJsonl(tickets))));
    expect(rows).toEqual(tickets.map((fields, k) => ({ line: k + 1, fields })));
  });

  it("reads a gzipped file the same way", async () => {
    const rows = await collect(readJsonl(tmp.put("tickets.jsonl.gz", asJsonl(tickets))));
    expect(rows).toEqual(tickets.map((fields, k) => ({ line: k + 1, fields })));
  });

  it("handles CRLF, a BOM, a missing final newline, and skips blank lines without renumbering", async () => {
    const text = `\ufeff${JSON.stringify(tickets[0])}\r\n\r\n   \n${JSON.stringify(tickets[1])}\r\n\t\n${JSON.stringify(tickets[2])}`;
    const rows = await collect(readJsonl(tmp.put("crlf.jsonl", text)));
    expect(rows).toEqual([
      { line: 1, fields: tickets[0] },
      { line: 4, fields: tickets[1] },
      { line: 6, fields: tickets[2] },
    ]);
  });

  it("quarantines a malformed line and keeps its neighbours", async () => {
    const text = `${JSON.stringify(tickets[0])}\n{"ticket_id": "T-1009", "body": }\n${JSON.stringify(tickets[1])}\n`;
    const rows = await collect(readJsonl(tmp.put("malformed.jsonl", text)));
    expect(rows).toEqual([
      { line: 1, fields: tickets[0] },
      { line: 2, error: "malformed JSON: unexpected token '}'" },
      { line: 3, fields: tickets[1] },
    ]);
  });

  it("does not echo a long malformed line into the message", async () => {
    const text = `{"body": "${"rail grinding ".repeat(200)}" oops}\n`;
    const [row] = await collect(readJsonl(tmp.put("long-malformed.jsonl", text)));
    expect(row).toEqual({ line: 1, error: expect.stringMatching(/^malformed JSON: /) });
    expect((row as { error: string }).error.length).toBeLessThanOrEqual(200);
  });

  it("quarantines a truncated last line", async () => {
    const text = `${JSON.stringify(tickets[0])}\n{"ticket_id": "T-1010", "bo`;
    const rows = await collect(readJsonl(tmp.put("truncated.jsonl", text)));
    expect(rows).toEqual([
      { line: 1, fields: tickets[0] },
      { line: 2, error: "malformed JSON: unterminated string in JSON at position 27" },
    ]);
  });

  it("quarantines JSON that is not an object", async () => {
    const text = `[1, 2]\n"a note"\nnull\n42\n${JSON.stringify(tickets[0])}\n`;
    const rows = await collect(readJsonl(tmp.put("not-objects.jsonl", text)));
    expect(rows).toEqual([
      { line: 1, error: "expected a JSON object, got array" },
      { line: 2, error: "expected a JSON object, got string" },
      { line: 3, error: "expected a JSON object, got null" },
      { line: 4, error: "expected a JSON object, got number" },
      { line: 5, fields: tickets[0] },
    ]);
  });

  it("quarantines only the line holding invalid UTF-8", async () => {
    const file = tmp.put(
      "bad-utf8.jsonl",
      bytes(`${JSON.stringify(tickets[0])}\n{"body":"Wagenhalle `, [0xff], ` B"}\n{"body":"caf\u00e9 at the depot"}\n`),
    );
    const rows = await collect(readJsonl(file));
    expect(rows).toEqual([
      { line: 1, fields: tickets[0] },
      { line: 2, error: "invalid UTF-8 at byte offset 20" },
      { line: 3, fields: { body: "café at the depot" } },
    ]);
  });

  it("rejects overlong encodings and lone surrogates as invalid UTF-8", async () => {
    const file = tmp.put("sneaky-utf8.jsonl", bytes('{"a":"', [0xc0, 0xaf], '"}\n{"a":"', [0xed, 0xa0, 0x80], '"}\n{"a":"ok"}\n'));
    const rows = await collect(readJsonl(file));
    expect(rows).toEqual([
      { line: 1, error: "invalid UTF-8 at byte offset 6" },
      { line: 2, error: "invalid UTF-8 at byte offset 6" },
      { line: 3, fields: { a: "ok" } },
    ]);
  });

  it("reports a 0-byte file and a file of blank lines as empty", async () => {
    expect(await collect(readJsonl(tmp.put("empty.jsonl", "")))).toEqual([{ line: 0, error: "empty file" }]);
    expect(await collect(readJsonl(tmp.put("blank.jsonl", "\n  \r\n\n")))).toEqual([{ line: 0, error: "empty file" }]);
    expect(await collect(readJsonl(tmp.put("empty.jsonl.gz", "")))).toEqual([{ line: 0, error: "empty file" }]);
  });

  it("quarantines a line over the size limit without holding it, then goes on", async () => {
    const text = `{"a":1}\n{"body":"${"x".repeat(5000)}"}\n{"b":2}\n`;
    const rows = await collect(readJsonl(tmp.put("long-line.jsonl", text), { maxRecordBytes: 1024 }));
    expect(rows).toEqual([
      { line: 1, fields: { a: 1 } },
      { line: 2, error: "line longer than 1 KiB" },
      { line: 3, fields: { b: 2 } },
    ]);
  });

  it("turns a truncated .gz into a truncated row at the line reached, after the lines before it", async () => {
    const lines = Array.from({ length: 5000 }, (_, i) => JSON.stringify({ n: i + 1, body: `Inspection note ${i + 1} for bay ${i % 9}` }));
    const gz = zlib.gzipSync(lines.join("\n") + "\n");
    const file = `${tmp.dir}/cut.jsonl.gz`;
    fs.writeFileSync(file, gz.subarray(0, Math.floor(gz.length / 2)));
    const rows = await collect(readJsonl(file));
    const last = rows[rows.length - 1];
    const good = rows.slice(0, -1);
    expect(good.length).toBeGreaterThan(100);
    expect(good).toEqual(good.map((_, k) => ({ line: k + 1, fields: JSON.parse(lines[k]) })));
    const error = "corrupt gzip data: unexpected end of file";
    const size = Math.floor(gz.length / 2);
    expect(last).toEqual({ line: good.length + 1, error, truncated: { error, bytes_read: size, size } });
  });

  it("reports a .gz that is not gzip at all", async () => {
    const file = `${tmp.dir}/plain.jsonl.gz`;
    fs.writeFileSync(file, asJsonl(tickets));
    const error = "corrupt gzip data: incorrect header check";
    // Nothing of it can be read: the whole file is lost, which is a truncation at its first line.
    expect(await collect(readJsonl(file))).toEqual([{ line: 1, error, truncated: { error, bytes_read: expect.any(Number), size: fs.statSync(file).size } }]);
  });
});
