// Sources: file listing, row-to-record mapping, ids, meta, and bad rows as quarantine entries.

import fs from "node:fs";
import path from "node:path";
import zlib from "node:zlib";
import { afterAll, describe, expect, it } from "vitest";
import { listFiles, readSource, type SourceSpec } from "../../src/sources/source.js";
import { collect, tempDir } from "./fixtures/tmp.js";

const tmp = tempDir("source");
afterAll(() => tmp.remove());

function spec(over: Partial<SourceSpec>): SourceSpec {
  return { name: "tickets", files: "data/*.jsonl", format: "jsonl", text: "body", meta: [], weight: 1, ...over };
}

describe("listFiles", () => {
  const base = path.join(tmp.dir, "list");
  for (const name of ["data/b.jsonl", "data/B.jsonl", "data/a.jsonl", "data/\u00e9t\u00e9.jsonl", "data/z.jsonl", "data/sub/c.jsonl", "data/notes.txt"]) {
    tmp.put(`list/${name}`, "{}\n");
  }
  fs.mkdirSync(path.join(base, "data/folder.jsonl"));

  it("globs relative to the base directory, files only, in byte order", async () => {
    expect(await listFiles(spec({}), base)).toEqual(["data/B.jsonl", "data/a.jsonl", "data/b.jsonl", "data/z.jsonl", "data/\u00e9t\u00e9.jsonl"]);
    expect(await listFiles(spec({ files: "data/**/*.jsonl" }), base)).toContain("data/sub/c.jsonl");
  });

  it("accepts absolute globs and plain paths, still answering relative to the base", async () => {
    const abs = `${base.split(path.sep).join("/")}/data/[ab].jsonl`;
    expect(await listFiles(spec({ files: abs }), base)).toEqual(["data/a.jsonl", "data/b.jsonl"]);
    expect(await listFiles(spec({ files: "data/sub/c.jsonl" }), base)).toEqual(["data/sub/c.jsonl"]);
    const sub = path.join(base, "data/sub");
    expect(await listFiles(spec({ files: "../z.jsonl" }), sub)).toEqual(["../z.jsonl"]);
    expect(await listFiles(spec({ files: "../[abz].jsonl" }), sub)).toEqual(["../a.jsonl", "../b.jsonl", "../z.jsonl"]);
  });

  it("fails with SP_INPUT_MISSING when nothing matches", async () => {
    for (const files of ["sample-data/x/*.jsonl", "data/missing.jsonl"]) {
      await expect(listFiles(spec({ files }), base)).rejects.toMatchObject({
        code: "SP_INPUT_MISSING",
        message: `source "tickets": no file matches "${files}"`,
      });
    }
  });

  it("names a path that exists but cannot be read", async () => {
    await expect(listFiles(spec({ files: "data/folder.jsonl" }), base)).rejects.toMatchObject({
      code: "SP_INPUT_MISSING",
      message: 'source "tickets": cannot read "data/folder.jsonl": is a directory',
    });
    fs.symlinkSync(path.join(base, "gone.jsonl"), path.join(base, "dangling.jsonl"));
    await expect(listFiles(spec({ files: "dangling.jsonl" }), base)).rejects.toMatchObject({
      code: "SP_INPUT_MISSING",
      message: 'source "tickets": cannot read "dangling.jsonl": no such file or directory',
    });
  });

  it("rejects an unsupported compression before anything is read", async () => {
    tmp.put("list/xz/a.jsonl.xz", "x");
    await expect(listFiles(spec({ files: "xz/*" }), base)).rejects.toMatchObject({
      code: "SP_INPUT_FORMAT",
      message: 'source "tickets": xz/a.jsonl.xz: xz-compressed input (.xz) is not supported yet; decompress it first or recompress it with gzip or zstd',
    });
  });
});

describe("readSource", () => {
  const base = path.join(tmp.dir, "read");
  tmp.put(
    "read/tickets/1.jsonl",
    [
      { ticket_id: "T-1", body: "Door fault on car 12.", depot: "Quillon Street", priority: 2 },
      "{oops",
      { ticket_id: "T-2", subject: "no body here" },
      { ticket_id: "T-3", body: 404 },
      { ticket_id: 77, body: "Numeric ids become strings.", depot: null },
    ]
      .map((r) => (typeof r === "string" ? r : JSON.stringify(r)))
      .join("\n") + "\n",
  );
  tmp.put(
    "read/tickets/2.jsonl",
    [
      { ticket_id: "T-1", body: "A second T-1 is a duplicate." },
      { body: "No id at all." },
      { ticket_id: ["T-9"], body: "An array id." },
      { ticket_id: "", body: "An empty id." },
      { ticket_id: "T-4", body: "Last good one." },
    ]
      .map((r) => JSON.stringify(r))
      .join("\n") + "\n",
  );

  it("maps rows to records and bad rows to quarantine entries, naming records by file and line", async () => {
    const items = await collect(readSource(spec({ files: "tickets/*.jsonl", meta: ["depot", "priority"] }), base));
    // A default id is the source, the file (below the pattern's folder) and the line: nothing about other files or rows.
    const rec = (file: string, line: number, text: string, meta: object) => ({
      kind: "record",
      id: `tickets:${file.slice("tickets/".length)}:${line}`,
      source: "tickets",
      text,
      meta,
      origin: { file, line },
    });
    const bad = (file: string, line: number, error: string) => ({ kind: "bad", entry: { source: "tickets", file, line, error } });
    expect(items).toEqual([
      rec("tickets/1.jsonl", 1, "Door fault on car 12.", { depot: "Quillon Street", priority: 2 }),
      bad("tickets/1.jsonl", 2, "malformed JSON: expected property name or '}' in JSON at position 1"),
      bad("tickets/1.jsonl", 3, 'field "body" is missing'),
      bad("tickets/1.jsonl", 4, 'field "body" is not a string (got number)'),
      rec("tickets/1.jsonl", 5, "Numeric ids become strings.", { depot: null, priority: null }),
      rec("tickets/2.jsonl", 1, "A second T-1 is a duplicate.", { depot: null, priority: null }),
      rec("tickets/2.jsonl", 2, "No id at all.", { depot: null, priority: null }),
      rec("tickets/2.jsonl", 3, "An array id.", { depot: null, priority: null }),
      rec("tickets/2.jsonl", 4, "An empty id.", { depot: null, priority: null }),
      rec("tickets/2.jsonl", 5, "Last good one.", { depot: null, priority: null }),
    ]);
  });

  it("uses an explicit id field: strings and numbers, missing, wrong type, empty, duplicate", async () => {
    const items = await collect(readSource(spec({ files: "tickets/*.jsonl", id: "ticket_id" }), base));
    const summary = items.map((i) => (i.kind === "record" ? i.id : `${i.entry.file}:${i.entry.line} ${i.entry.error}`));
    expect(summary).toEqual([
      "T-1",
      "tickets/1.jsonl:2 malformed JSON: expected property name or '}' in JSON at position 1",
      'tickets/1.jsonl:3 field "body" is missing',
      'tickets/1.jsonl:4 field "body" is not a string (got number)',
      "77",
      'tickets/2.jsonl:1 duplicate id "T-1"',
      'tickets/2.jsonl:2 id field "ticket_id" is missing',
      'tickets/2.jsonl:3 id field "ticket_id" is not a string or number (got array)',
      'tickets/2.jsonl:4 id field "ticket_id" is empty',
      "T-4",
    ]);
  });

  it("does not find fields on the object prototype", async () => {
    const items = await collect(readSource(spec({ files: "tickets/2.jsonl", text: "constructor" }), base));
    expect(items[0]).toMatchObject({ kind: "bad", entry: { error: 'field "constructor" is missing' } });
  });

  it("reads CSV sources with the text column and meta", async () => {
    tmp.put("read/depots.csv", 'depot,note\nQuillon Street,"Gate code changed, ask the office"\nHarbour Loop,Quiet week\n');
    const items = await collect(readSource(spec({ name: "depots", files: "depots.csv", format: "csv", text: "note", meta: ["depot"] }), base));
    expect(items).toEqual([
      {
        kind: "record",
        id: "depots:depots.csv:1",
        source: "depots",
        text: "Gate code changed, ask the office",
        meta: { depot: "Quillon Street" },
        origin: { file: "depots.csv", line: 1 },
      },
      { kind: "record", id: "depots:depots.csv:2", source: "depots", text: "Quiet week", meta: { depot: "Harbour Loop" }, origin: { file: "depots.csv", line: 2 } },
    ]);
  });

  it("reads text sources with the portable path in meta, and reports an empty file", async () => {
    tmp.put("read/memos/a.txt", "Sweep platform 3 before 7.");
    tmp.put("read/memos/b.txt", "");
    const items = await collect(readSource(spec({ name: "memos", files: "memos/*.txt", format: "text", text: "ignored", meta: ["path"] }), base));
    expect(items).toEqual([
      { kind: "record", id: "memos:a.txt", source: "memos", text: "Sweep platform 3 before 7.", meta: { path: "memos/a.txt" }, origin: { file: "memos/a.txt", line: 1 } },
      { kind: "bad", entry: { source: "memos", file: "memos/b.txt", line: 0, error: "empty file" } },
    ]);
  });

  it("reports a corrupt .gz mid-file as truncated, after its rows, and goes on with the next file", async () => {
    const lines = Array.from({ length: 3000 }, (_, i) => JSON.stringify({ body: `Axle counter reset ${i + 1} in sector ${i % 4}` })).join("\n");
    const gz = zlib.gzipSync(lines);
    fs.mkdirSync(path.join(base, "logs"), { recursive: true });
    fs.writeFileSync(path.join(base, "logs/a.jsonl.gz"), gz.subarray(0, gz.length - 200));
    tmp.put("read/logs/b.jsonl", '{"body":"after the damage"}\n');
    const items = await collect(readSource(spec({ name: "logs", files: "logs/*" }), base));
    expect(items.filter((i) => i.kind === "bad")).toHaveLength(0);
    const cut = items.filter((i) => i.kind === "truncated");
    expect(cut).toHaveLength(1);
    const at = items.indexOf(cut[0]);
    const size = gz.length - 200;
    expect(cut[0]).toEqual({ kind: "truncated", source: "logs", file: "logs/a.jsonl.gz", rows_read: at, truncated: { error: "corrupt gzip data: unexpected end of file", bytes_read: size, size } });
    expect(at).toBeGreaterThan(100);
    // The loss is not a row, and the next file's records are named by their own file and line.
    expect(items[items.length - 1]).toMatchObject({ kind: "record", id: "logs:b.jsonl:1", text: "after the damage", origin: { file: "logs/b.jsonl", line: 1 } });
  });
});
