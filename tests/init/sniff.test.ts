// Recognising format and compression: by name, by content when the name says nothing, and refusing names that lie.
import { afterAll, describe, expect, it } from "vitest";
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { gzipSync } from "node:zlib";
import { spawnSync } from "node:child_process";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { sniff } from "../../src/init/sniff.js";

const dir = mkdtempSync(join(tmpdir(), "siftpack-sniff-"));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const put = (name: string, data: string | Buffer) => {
  writeFileSync(join(dir, name), data);
  return join(dir, name);
};

const JSONL = '{"ticket_id":"T-1","body":"Door 3 slow to close on car 4711."}\n{"ticket_id":"T-2","body":"Sander hopper empty."}\n';

describe("sniff", () => {
  it("goes by the name when it says the format", async () => {
    expect(await sniff(put("a.jsonl", JSONL))).toEqual({ format: "jsonl", compression: "none", suffix: ".jsonl", by: "name" });
    expect(await sniff(put("a.jsonl.gz", gzipSync(JSONL)))).toEqual({ format: "jsonl", compression: "gzip", suffix: ".jsonl.gz", by: "name" });
    expect(await sniff(put("notes.csv", "note_id,body\nN-1,hello\n"))).toMatchObject({ format: "csv", suffix: ".csv" });
    expect(await sniff(put("notes.TSV", "note_id\tbody\nN-1\thello\n"))).toMatchObject({ format: "tsv", suffix: ".tsv" });
    expect(await sniff(put("manual.txt", "Pantograph inspection.\n"))).toMatchObject({ format: "text" });
  });

  it("recognises zstd by its magic number", async () => {
    const z = spawnSync("zstd", ["-q", "-c"], { input: JSONL });
    if (z.status !== 0) throw new Error("the zstd tool is needed for this test (Debian package zstd)");
    expect(await sniff(put("b.jsonl.zst", z.stdout))).toMatchObject({ format: "jsonl", compression: "zstd", suffix: ".jsonl.zst" });
  });

  it("reads the content when the name says nothing, and for .json files holding lines", async () => {
    expect(await sniff(put("export.dat", JSONL))).toMatchObject({ format: "jsonl", by: "content", suffix: ".dat" });
    expect(await sniff(put("export2.gz", gzipSync('[{"a":1}]')))).toMatchObject({ format: "json", by: "content" });
    expect(await sniff(put("lines.json", JSONL))).toMatchObject({ format: "jsonl", by: "content" });
    expect(await sniff(put("array.json", '[{"body":"x"}]'))).toMatchObject({ format: "json", by: "name" });
    expect(await sniff(put("table.out", "a\tb\tc\n1\t2\t3\n"))).toMatchObject({ format: "tsv", by: "content" });
    expect(await sniff(put("table2.out", "a,b\n1,2\n"))).toMatchObject({ format: "csv", by: "content" });
    expect(await sniff(put("prose.out", "Depot closed for the night, all trams stabled.\n"))).toMatchObject({ format: "text", by: "content" });
    expect(await sniff(put("data.bin", Buffer.from("PAR1\0\0\0\0PAR1")))).toMatchObject({ format: "parquet", by: "content" });
  });

  it("refuses names that do not match the content, naming the fix", async () => {
    await expect(sniff(put("hidden.jsonl", gzipSync(JSONL)))).rejects.toThrow(/gzip-compressed but the name does not say so.*rename it to end in \.gz/);
    await expect(sniff(put("fake.jsonl.gz", JSONL))).rejects.toThrow(/ends in \.gz but the file is not gzip data/);
    await expect(sniff(put("packed.jsonl.xz", "x"))).rejects.toThrow(/xz-compressed input/);
    await expect(sniff(put("one.json", '{"body":"a whole\\nobject"\n}'))).rejects.toThrow(/array of records or one object per line/);
    await expect(sniff(put("t.parquet.gz", gzipSync("PAR1")))).rejects.toThrow(/compressed Parquet/);
    await expect(sniff(join(dir, "absent.jsonl"))).rejects.toThrow(/cannot open/);
  });
});
