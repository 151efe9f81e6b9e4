// CSV/TSV reader: header mapping, quoting, line numbers, bad rows, bad headers, gzip.

import fs from "node:fs";
import zlib from "node:zlib";
import { afterAll, describe, expect, it } from "vitest";
import { readCsv } from "../../src/sources/csv.js";
import { readerFor } from "../../src/sources/formats.js";
import { bytes, collect, tempDir } from "./fixtures/tmp.js";

const tmp = tempDir("csv");
afterAll(() => tmp.remove());

const depotCsv = [
  "ticket_id,depot,body",
  "T-2001,Quillon Street,Tram 9 horn too quiet",
  'T-2002,"Harbour Loop, east yard","Driver notes: ""brakes squeal"" near stop 4"',
  'T-2003,Quillon Street,"Line one',
  "line two, with a comma",
  'line three"',
  "T-2004,,empty depot field",
  "",
].join("\r\n");

describe("readCsv", () => {
  it("maps rows to the header, unquotes, keeps newlines and commas inside quotes", async () => {
    const rows = await collect(readCsv(tmp.put("tickets.csv", depotCsv)));
    expect(rows).toEqual([
      { line: 1, fields: { ticket_id: "T-2001", depot: "Quillon Street", body: "Tram 9 horn too quiet" } },
      { line: 2, fields: { ticket_id: "T-2002", depot: "Harbour Loop, east yard", body: 'Driver notes: "brakes squeal" near stop 4' } },
      { line: 3, fields: { ticket_id: "T-2003", depot: "Quillon Street", body: "Line one\r\nline two, with a comma\r\nline three" } },
      { line: 4, fields: { ticket_id: "T-2004", depot: "", body: "empty depot field" } },
    ]);
  });

  it("reads .csv.gz and a BOM", async () => {
    const rows = await collect(readCsv(tmp.put("tickets.csv.gz", "\ufeff" + depotCsv)));
    expect(rows.map((r) => ("fields" in r ? r.fields.ticket_id : r))).toEqual(["T-2001", "T-2002", "T-2003", "T-2004"]);
  });

  it("reads tsv through readerFor('tsv'), quotes included", async () => {
    const tsv = 'id\tbody\n1\tplain text, commas are data\n2\t"tab\tinside"\n';
    const rows = await collect(readerFor("tsv")(tmp.put("notes.tsv", tsv)));
    expect(rows).toEqual([
      { line: 1, fields: { id: "1", body: "plain text, commas are data" } },
      { line: 2, fields: { id: "2", body: "tab\tinside" } },
    ]);
  });

  it("quarantines a row with the wrong number of fields, naming its physical line", async () => {
    const csv = 'id,body\n1,"two\nlines"\n2,too,many\n3\n4,fine\n';
    expect(await collect(readCsv(tmp.put("counts.csv", csv)))).toEqual([
      { line: 1, fields: { id: "1", body: "two\nlines" } },
      { line: 2, error: "expected 2 fields, got 3 (file line 4)" },
      { line: 3, error: "expected 2 fields, got 1 (file line 5)" },
      { line: 4, fields: { id: "4", body: "fine" } },
    ]);
  });

  it("skips empty lines without counting them as rows", async () => {
    const csv = "id,body\n\n1,a\n\r\n\n2,b\n\n";
    expect(await collect(readCsv(tmp.put("gaps.csv", csv)))).toEqual([
      { line: 1, fields: { id: "1", body: "a" } },
      { line: 2, fields: { id: "2", body: "b" } },
    ]);
  });

  it("quarantines only the row holding invalid UTF-8", async () => {
    const file = tmp.put("utf8.csv", bytes("id,body\n1,Gleis 3\n2,Stra", [0xdf], "e\n3,\u00fcber\n"));
    expect(await collect(readCsv(file))).toEqual([
      { line: 1, fields: { id: "1", body: "Gleis 3" } },
      { line: 2, error: 'invalid UTF-8 in field "body" (file line 3)' },
      { line: 3, fields: { id: "3", body: "über" } },
    ]);
  });

  it("keeps a literal U+FFFD that was validly encoded", async () => {
    const rows = await collect(readCsv(tmp.put("fffd.csv", "id,body\n1,before \ufffd after\n")));
    expect(rows).toEqual([{ line: 1, fields: { id: "1", body: "before \ufffd after" } }]);
  });

  it("quarantines text after a closing quote and finds the next row", async () => {
    const csv = 'id,body\n1,"quoted"tail\n2,"ok"\n';
    expect(await collect(readCsv(tmp.put("after-quote.csv", csv)))).toEqual([
      { line: 1, error: "unexpected character after a closing quote (file line 2)" },
      { line: 2, fields: { id: "2", body: "ok" } },
    ]);
  });

  it("treats a quote inside an unquoted field as data", async () => {
    const rows = await collect(readCsv(tmp.put("inner-quote.csv", 'id,body\n1,12" gauge\n')));
    expect(rows).toEqual([{ line: 1, fields: { id: "1", body: '12" gauge' } }]);
  });

  it("reports an unterminated quote where it opened", async () => {
    const csv = 'id,body\n1,fine\n2,"never closed\n3,lost\n';
    expect(await collect(readCsv(tmp.put("unterminated.csv", csv)))).toEqual([
      { line: 1, fields: { id: "1", body: "fine" } },
      { line: 2, error: "unterminated quoted field (file line 3)" },
    ]);
  });

  it("bounds a runaway record and resumes after it", async () => {
    const csv = `id,body\n1,"${"y".repeat(4000)}"\n2,short\n`;
    expect(await collect(readCsv(tmp.put("runaway.csv", csv), { maxRecordBytes: 1000 }))).toEqual([
      { line: 1, error: "record longer than 1000 bytes (file line 2)" },
      { line: 2, fields: { id: "2", body: "short" } },
    ]);
  });

  it("yields nothing for a header-only file, and 'empty file' for no records at all", async () => {
    expect(await collect(readCsv(tmp.put("header-only.csv", "id,body\n")))).toEqual([]);
    expect(await collect(readCsv(tmp.put("empty.csv", "")))).toEqual([{ line: 0, error: "empty file" }]);
    expect(await collect(readCsv(tmp.put("blank.csv", "\n\r\n\n")))).toEqual([{ line: 0, error: "empty file" }]);
  });

  it("gives up on a file whose header is unusable", async () => {
    expect(await collect(readCsv(tmp.put("dup.csv", "id,body,id\n1,a,2\n")))).toEqual([
      { line: 0, error: 'header row: duplicate column name "id" (file line 1)' },
    ]);
    expect(await collect(readCsv(tmp.put("bad-header.csv", bytes("id,b", [0xff], "dy\n1,a\n"))))).toEqual([
      { line: 0, error: "header row: invalid UTF-8 (file line 1)" },
    ]);
  });

  it("makes a column named __proto__ an ordinary field", async () => {
    const [row] = await collect(readCsv(tmp.put("proto.csv", "__proto__,body\nx,y\n")));
    expect(row).toEqual({ line: 1, fields: { ["__proto__"]: "x", body: "y" } });
    expect(Object.getPrototypeOf((row as { fields: object }).fields)).toBe(Object.prototype);
  });

  it("reports corrupt gzip after the rows it could read", async () => {
    const lines = ["id,body", ...Array.from({ length: 6000 }, (_, i) => `${i + 1},Shunting log entry ${i + 1} for siding ${i % 7}`)];
    const gz = zlib.gzipSync(lines.join("\n") + "\n");
    const file = `${tmp.dir}/cut.csv.gz`;
    fs.writeFileSync(file, gz.subarray(0, Math.floor(gz.length / 2)));
    const rows = await collect(readCsv(file));
    const good = rows.slice(0, -1);
    expect(good.length).toBeGreaterThan(100);
    expect(good.every((r, k) => r.line === k + 1 && "fields" in r && r.fields.id === String(k + 1))).toBe(true);
    const error = "corrupt gzip data: unexpected end of file";
    const size = Math.floor(gz.length / 2);
    expect(rows[rows.length - 1]).toEqual({ line: good.length + 1, error, truncated: { error, bytes_read: size, size } });
  });
});
