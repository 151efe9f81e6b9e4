// The truncated row kind: a file that cannot be read to its end is one truncated row, last, which is not
// a record (readSourceFile sets it apart without moving the record count); and V8's parse messages cut
// so that quarantine lines do not quote input text.
import fs from "node:fs";
import path from "node:path";
import zlib from "node:zlib";
import { afterAll, describe, expect, it } from "vitest";
import { parquetWriteBuffer } from "hyparquet-writer";
import { readJsonl, shortenParseError } from "../../src/sources/jsonl.js";
import { readText } from "../../src/sources/text.js";
import { readParquet } from "../../src/sources/parquet.js";
import { isBad, isTruncated, truncatedRow } from "../../src/sources/row.js";
import { RecordMapper, readSource, type SourceSpec } from "../../src/sources/source.js";
import { collect, tempDir } from "./fixtures/tmp.js";

const tmp = tempDir("truncated-rows");
afterAll(() => tmp.remove());

const spec = (over: Partial<SourceSpec>): SourceSpec => ({ name: "tickets", files: "*.jsonl.gz", format: "jsonl", text: "body", meta: [], weight: 1, ...over });

/** Service tickets of the (invented) Harrow Lane tram depot, as JSON lines. */
function ticketLines(n: number): string {
  return Array.from({ length: n }, (_, i) => JSON.stringify({ ticket: `HL-${i + 1}`, body: `Car ${4700 + (i % 40)}: pantograph ${i % 3 === 0 ? "worn" : "checked"} on road ${1 + (i % 6)}.` })).join("\n") + "\n";
}

/** Writes raw bytes (no gzip by name, unlike tmp.put) and returns the path. */
function putRaw(name: string, bytes: Buffer): string {
  const file = path.join(tmp.dir, name);
  fs.mkdirSync(path.dirname(file), { recursive: true });
  fs.writeFileSync(file, bytes);
  return file;
}

describe("truncated rows", () => {
  it("are bad rows to consumers that know only good and bad ones, and tell themselves apart", () => {
    const row = truncatedRow(7, { error: "corrupt gzip data: unexpected end of file", bytes_read: 10, size: 10 });
    expect(row).toEqual({ line: 7, error: "corrupt gzip data: unexpected end of file", truncated: { error: "corrupt gzip data: unexpected end of file", bytes_read: 10, size: 10 } });
    expect(isBad(row)).toBe(true);
    expect(isTruncated(row)).toBe(true);
    expect(isTruncated({ line: 7, error: "malformed JSON" })).toBe(false);
    expect(isTruncated({ line: 7, fields: {} })).toBe(false);
  });

  it("end a cut .jsonl.gz, with every byte of the cut file consumed", async () => {
    const gz = zlib.gzipSync(ticketLines(3000));
    const size = Math.floor(gz.length / 2);
    const rows = await collect(readJsonl(putRaw("cut.jsonl.gz", gz.subarray(0, size))));
    expect(rows.slice(0, -1).every((r) => "fields" in r)).toBe(true);
    expect(rows.filter(isTruncated)).toEqual([{ line: rows.length, error: "corrupt gzip data: unexpected end of file", truncated: { error: "corrupt gzip data: unexpected end of file", bytes_read: size, size } }]);
  });

  it("count only the compressed bytes consumed when gzip data is corrupt mid-way", async () => {
    const gz = zlib.gzipSync(Buffer.from(Array.from({ length: 20000 }, (_, i) => `{"body":"Depot Quayside log ${i * 7919}"}`).join("\n")));
    const at = Math.floor(gz.length / 2);
    const bad = Buffer.from(gz);
    bad.fill(0xff, at, at + 64);
    const rows = await collect(readJsonl(putRaw("corrupt.jsonl.gz", bad)));
    const last = rows.at(-1)!;
    expect(isTruncated(last)).toBe(true);
    const t = (last as { truncated: { bytes_read: number; size: number; error: string } }).truncated;
    expect(t.error).toMatch(/^corrupt gzip data: /);
    expect(t.size).toBe(gz.length);
    expect(t.bytes_read).toBeGreaterThan(0);
    expect(t.bytes_read).toBeLessThan(gz.length);
  });

  it("end a text file whose .gz is cut: its one document is lost", async () => {
    const gz = zlib.gzipSync(Buffer.from("Night shift report, Northfold depot.\n".repeat(4000)));
    const size = gz.length - 30;
    const file = putRaw("memo.txt.gz", gz.subarray(0, size));
    expect(await collect(readText(file))).toEqual([{ line: 1, error: "corrupt gzip data: unexpected end of file", truncated: { error: "corrupt gzip data: unexpected end of file", bytes_read: size, size } }]);
  });

  it("are a read error of an uncompressed file, with the bytes read so far", async () => {
    // A directory opens but cannot be read: the one read error that can be made portably.
    const dir = path.join(tmp.dir, "not-a-file.jsonl");
    fs.mkdirSync(dir);
    const rows = await collect(readJsonl(dir));
    expect(rows).toEqual([{ line: 1, error: "read error: is a directory", truncated: { error: "read error: is a directory", bytes_read: 0, size: fs.statSync(dir).size } }]);
  });

  it("count the rows of every damaged Parquet row group, in one row after the rows read", async () => {
    const n = 1500;
    const buf = parquetWriteBuffer({
      columnData: [{ name: "body", data: Array.from({ length: n }, (_, i) => `Tram ${4700 + (i % 50)} wheel flat, report ${i + 1}`), type: "STRING" }],
      rowGroupSize: 500,
      codec: "GZIP",
      compressors: { GZIP: (b: Uint8Array) => new Uint8Array(zlib.gzipSync(b)) },
    });
    const bytes = Buffer.from(buf);
    bytes.fill(0x00, 200, 400);
    const file = putRaw("rg/damaged.parquet", bytes);
    const rows = await collect(readParquet(file));
    expect(rows.filter((r) => "fields" in r)).toHaveLength(1000);
    expect(rows.at(-1)).toEqual({ line: 1, error: expect.stringMatching(/^row group 1 \(rows 1 to 500\) cannot be read: /), truncated: { error: expect.any(String), rows_lost: 500 } });
    const items = await collect(readSource(spec({ files: "rg/*.parquet", format: "parquet" }), tmp.dir));
    expect(items.at(-1)).toMatchObject({ kind: "truncated", source: "tickets", file: "rg/damaged.parquet", rows_read: 1000, truncated: { rows_lost: 500 } });
    expect(items.filter((i) => i.kind === "truncated")).toHaveLength(1);
  });

  it("are not rows: the mapper refuses them and the row count does not move", async () => {
    const mapper = new RecordMapper(spec({}));
    expect(() => mapper.map(truncatedRow(1, { error: "read error: input/output error" }), "a.jsonl")).toThrow(/not a row/);
    expect(mapper.rows).toBe(0);
    const gz = zlib.gzipSync(ticketLines(2000));
    putRaw("ids/a.jsonl.gz", gz.subarray(0, gz.length - 100));
    fs.writeFileSync(path.join(tmp.dir, "ids/b.jsonl"), '{"body":"Tram 4711 cleaned at Harrow Lane."}\n');
    const items = await collect(readSource(spec({ files: "ids/*" }), tmp.dir));
    const cut = items.findIndex((i) => i.kind === "truncated");
    expect(items[cut]).toMatchObject({ rows_read: cut, file: "ids/a.jsonl.gz" });
    expect(items.at(-1)).toMatchObject({ kind: "record", id: "tickets:b.jsonl:1" });
    // The records before the loss are named by their own lines.
    expect(items[cut - 1]).toMatchObject({ kind: "record", id: `tickets:a.jsonl.gz:${cut}` });
  });
});

describe("shortenParseError", () => {
  // The message forms are those of Node 20's JSON.parse, seen by running it.
  it("cuts the quoted input in every form V8 gives it", () => {
    expect(shortenParseError(`Unexpected token 'D', "Depot Nord"... is not valid JSON`)).toBe("unexpected token 'D'");
    expect(shortenParseError(`Unexpected token 'x', ..."3,3,3,3,x]" is not valid JSON`)).toBe("unexpected token 'x'");
    expect(shortenParseError(`Unexpected token 'q', ..."road 4 qui"... is not valid JSON`)).toBe("unexpected token 'q'");
    expect(shortenParseError(`Unexpected token 'o', "oops" is not valid JSON`)).toBe("unexpected token 'o'");
    expect(shortenParseError("Unexpected non-whitespace character after JSON at position 8")).toBe("unexpected non-whitespace character after JSON at position 8");
  });

  it("keeps the start of a malformed line out of its quarantine error", async () => {
    const file = tmp.put("quote.jsonl", '{"body":"fine"}\nDepot Nord: tram 4702 left the yard before inspection, see log book page 12\n');
    const rows = await collect(readJsonl(file));
    expect(rows[1]).toEqual({ line: 2, error: "malformed JSON: unexpected token 'D'" });
    expect(JSON.stringify(rows[1])).not.toContain("Nord");
  });

  it("matches what JSON.parse says here", () => {
    for (const input of ["Depot Nord bay 4 was cleared late", "oops", `[1,2,${"3,".repeat(30)}x]`]) {
      let message = "";
      try {
        JSON.parse(input);
      } catch (err) {
        message = (err as Error).message;
      }
      expect(shortenParseError(message)).not.toMatch(/is not valid JSON/);
    }
  });
});
