// Parquet inputs: files written by a general-purpose writer (hyparquet-writer) read back record for record.
//
// Reference writer: the hyparquet-writer package; zstd pages are compressed by Debian's zstd tool.
import { spawnSync } from "node:child_process";
import fs from "node:fs";
import path from "node:path";
import zlib from "node:zlib";
import { afterAll, describe, expect, it, vi } from "vitest";
import { parquetWriteBuffer } from "hyparquet-writer";
import * as hyparquet from "hyparquet";
import { readParquet } from "../../src/sources/parquet.js";
import { readSource, type SourceSpec } from "../../src/sources/source.js";
import { parsePipeline } from "../../src/pipeline/load.js";
import { collect, tempDir } from "./fixtures/tmp.js";

// The reader's calls into hyparquet are recorded, to see that it asks for one row group at a time.
vi.mock("hyparquet", async (importOriginal) => {
  const real = await importOriginal<typeof import("hyparquet")>();
  return { ...real, parquetReadObjects: vi.fn(real.parquetReadObjects) };
});

const tmp = tempDir("parquet");
afterAll(() => tmp.remove());

const DEPOTS = ["Harrow Lane", "Quayside", "Northfold", null];
const N = 2500;
const tickets = Array.from({ length: N }, (_, i) => ({
  ticket_id: `T-2026-${String(i + 1).padStart(4, "0")}`,
  body: `Door ${1 + (i % 6)} on car ${4700 + (i % 90)} reported slow to close.${i % 7 === 0 ? "\nDriver: \"happened twice\" — ü ✓ 🚋" : ""}`,
  depot: DEPOTS[i % 4],
  year: BigInt(2025 + (i % 2)),
  priority: 1 + (i % 4),
}));

function zstdPage(input: Uint8Array): Uint8Array {
  const r = spawnSync("zstd", ["-q", "-c"], { input });
  if (r.error || r.status !== 0) throw new Error(`the zstd tool is needed for this test (Debian package zstd): ${r.error?.message ?? r.stderr}`);
  return new Uint8Array(r.stdout);
}

function write(name: string, opts: { codec?: "SNAPPY" | "GZIP" | "ZSTD" | "UNCOMPRESSED"; rowGroupSize?: number; rows?: typeof tickets } = {}): string {
  const rows = opts.rows ?? tickets;
  const buffer = parquetWriteBuffer({
    columnData: [
      { name: "ticket_id", data: rows.map((t) => t.ticket_id), type: "STRING" },
      { name: "body", data: rows.map((t) => t.body), type: "STRING" },
      { name: "depot", data: rows.map((t) => t.depot), type: "STRING" },
      { name: "year", data: rows.map((t) => t.year), type: "INT64" },
      { name: "priority", data: rows.map((t) => t.priority), type: "INT32" },
    ],
    codec: opts.codec ?? "SNAPPY",
    compressors: { GZIP: (b: Uint8Array) => new Uint8Array(zlib.gzipSync(b)), ZSTD: zstdPage },
    rowGroupSize: opts.rowGroupSize ?? 1000,
  });
  return tmp.put(name, Buffer.from(buffer));
}

const spec = (files: string): SourceSpec => ({ name: "tickets", files, format: "parquet", text: "body", id: "ticket_id", meta: ["depot", "year"], weight: 1 });

describe("parquet reader", () => {
  for (const codec of ["SNAPPY", "GZIP", "ZSTD", "UNCOMPRESSED"] as const) {
    it(`reads every row of a ${codec} file with several row groups, in order`, async () => {
      const file = write(`t-${codec}.parquet`, { codec });
      const rows = await collect(readParquet(file));
      expect(rows).toHaveLength(N);
      rows.forEach((row, i) => {
        const t = tickets[i];
        expect(row).toEqual({ line: i + 1, fields: { ticket_id: t.ticket_id, body: t.body, depot: t.depot, year: Number(t.year), priority: t.priority } });
      });
    });
  }

  it("maps rows to records with the chosen text column, id and meta", async () => {
    write("src/a.parquet", { rowGroupSize: 700 });
    const items = await collect(readSource(spec("src/*.parquet"), tmp.dir));
    expect(items).toHaveLength(N);
    expect(items[0]).toEqual({
      kind: "record",
      id: "T-2026-0001",
      source: "tickets",
      text: tickets[0].body,
      meta: { depot: "Harrow Lane", year: 2025 },
      origin: { file: "src/a.parquet", line: 1 },
    });
    expect(items[N - 1]).toMatchObject({ id: "T-2026-2500", meta: { depot: null, year: 2026 }, origin: { line: N } });
  });

  it("reads one row group at a time: the first rows arrive before later groups are decoded", async () => {
    const file = write("stream.parquet", { rowGroupSize: 100 });
    const calls = vi.mocked(hyparquet.parquetReadObjects).mock.calls;
    calls.length = 0;
    const rows = readParquet(file);
    expect((await rows.next()).value).toMatchObject({ line: 1 });
    expect(calls.map(([o]) => [o.rowStart, o.rowEnd])).toEqual([[0, 100]]);
    for (let i = 1; i <= 100; i++) await rows.next();
    expect(calls.map(([o]) => [o.rowStart, o.rowEnd])).toEqual([
      [0, 100],
      [100, 200],
    ]);
    await rows.return(undefined);
  });

  it("quarantines a row whose string column is not valid UTF-8, and keeps the others", async () => {
    const bad = new Uint8Array([0x44, 0x6f, 0x6f, 0x72, 0xff, 0x21]);
    const buffer = parquetWriteBuffer({
      columnData: [
        { name: "body", data: [new TextEncoder().encode("Horn weak on car 4702."), bad, new TextEncoder().encode("Mirror loose.")], type: "BYTE_ARRAY" },
      ],
    });
    const rows = await collect(readParquet(tmp.put("bad-utf8.parquet", Buffer.from(buffer))));
    expect(rows).toEqual([
      { line: 1, fields: { body: "Horn weak on car 4702." } },
      { line: 2, error: 'column "body": invalid UTF-8 at byte offset 4' },
      { line: 3, fields: { body: "Mirror loose." } },
    ]);
  });

  it("reports a file that is not Parquet, a truncated one and an empty table", async () => {
    // An unreadable footer loses the whole file: a truncated row, with no row read.
    const unreadable = (size: number) => [{ line: 0, error: expect.stringMatching(/^not a readable Parquet file: /), truncated: { error: expect.stringMatching(/^not a readable Parquet file: /), bytes_read: 0, size } }];
    expect(await collect(readParquet(tmp.put("fake.parquet", "ticket_id,body\nT-1,door\n")))).toEqual(unreadable(24));
    const whole = fs.readFileSync(write("whole.parquet"));
    const cut = tmp.put("cut.parquet", whole.subarray(0, whole.length - 100));
    expect(await collect(readParquet(cut))).toEqual(unreadable(whole.length - 100));
    expect(await collect(readParquet(tmp.put("zero.parquet", "")))).toEqual([{ line: 0, error: "empty file" }]);
    const empty = parquetWriteBuffer({ columnData: [{ name: "body", data: [], type: "STRING" }] });
    expect(await collect(readParquet(tmp.put("empty.parquet", Buffer.from(empty))))).toEqual([{ line: 0, error: "empty file" }]);
  });

  it("reports a damaged row group as a truncated row at the end, after reading the next", async () => {
    const file = write("damaged.parquet", { rowGroupSize: 1000, codec: "GZIP" });
    const bytes = fs.readFileSync(file);
    // Overwrite bytes inside the first row group's data (past the 4-byte magic, well before the second group).
    bytes.fill(0x00, 200, 400);
    fs.writeFileSync(file, bytes);
    const rows = await collect(readParquet(file));
    const bad = rows.filter((r) => "error" in r);
    const error = expect.stringMatching(/^row group 1 \(rows 1 to 1000\) cannot be read: /);
    expect(bad).toEqual([{ line: 1, error, truncated: { error, rows_lost: 1000 } }]);
    expect(rows[rows.length - 1]).toBe(bad[0]);
    expect(rows.filter((r) => "fields" in r).map((r) => r.line)).toEqual(Array.from({ length: 1500 }, (_, i) => 1001 + i));
  });

  it("is a format the pipeline file accepts", () => {
    const c = parsePipeline(
      "siftpack: 1\nsources: [{ name: t, files: data/*.parquet, format: parquet, text: body }]\nstages: [tokenize, pack]\noutput: { dir: out }\n",
      path.join(tmp.dir, "p.yaml"),
    );
    expect(c.sources[0].format).toBe("parquet");
  });
});
