// .zst inputs: files compressed by Debian's zstd tool read back byte for byte; damage becomes a read error.
//
// Reference compressor: the `zstd` command-line tool (Debian package zstd), not siftpack code.
import { spawnSync } from "node:child_process";
import { afterAll, describe, expect, it } from "vitest";
import { InputReadError, compressionOf, openInput, readChunks } from "../../src/sources/open.js";
import { readJsonl } from "../../src/sources/jsonl.js";
import { readCsv } from "../../src/sources/csv.js";
import { readText } from "../../src/sources/text.js";
import { collect, tempDir } from "./fixtures/tmp.js";

const tmp = tempDir("zstd");
afterAll(() => tmp.remove());

function zstd(data: Buffer | string, args: string[] = []): Buffer {
  const r = spawnSync("zstd", ["-q", "-c", ...args], { input: data, maxBuffer: 1 << 28 });
  if (r.error) throw new Error(`the zstd tool is needed for this test (Debian package zstd): ${r.error.message}`);
  if (r.status !== 0) throw new Error(`zstd failed: ${r.stderr}`);
  return r.stdout;
}

const timetable = Array.from({ length: 20000 }, (_, i) => `${String(6 + (i % 18)).padStart(2, "0")}:${String(i % 60).padStart(2, "0")} car ${4700 + (i % 97)} leaves Quillon Street`).join("\n");

async function read(file: string): Promise<Buffer> {
  return Buffer.concat(await collect(readChunks(await openInput(file))));
}

describe(".zst input", () => {
  it("is recognised by its extension in any case", () => {
    expect(compressionOf("a.jsonl.zst")).toBe("zstd");
    expect(compressionOf("A.CSV.ZST")).toBe("zstd");
  });

  it("decompresses a large file, several frames and a long window to the original bytes", async () => {
    const one = tmp.put("one.txt.zst", zstd(timetable, ["-19"]));
    expect((await read(one)).toString()).toBe(timetable);
    // Two frames back to back (what `cat a.zst b.zst` gives) decode to both texts in order.
    const two = tmp.put("two.txt.zst", Buffer.concat([zstd("first frame\n"), zstd(timetable)]));
    expect((await read(two)).toString()).toBe(`first frame\n${timetable}`);
    const long = tmp.put("long.txt.zst", zstd(timetable, ["--long=24", "-5"]));
    expect((await read(long)).toString()).toBe(timetable);
  });

  it("feeds the JSONL, CSV and text readers", async () => {
    const jsonl = tmp.put("t.jsonl.zst", zstd('{"ticket_id":"T-1","body":"Door 3 sticks."}\n{"ticket_id":"T-2","body":"Horn weak."}\n'));
    expect(await collect(readJsonl(jsonl))).toEqual([
      { line: 1, fields: { ticket_id: "T-1", body: "Door 3 sticks." } },
      { line: 2, fields: { ticket_id: "T-2", body: "Horn weak." } },
    ]);
    const csv = tmp.put("n.csv.zst", zstd('note_id,body\nSN-1,"Pit lights out,\nroad 4"\n'));
    expect(await collect(readCsv(csv))).toEqual([{ line: 1, fields: { note_id: "SN-1", body: "Pit lights out,\nroad 4" } }]);
    const text = tmp.put("m.txt.zst", zstd("Manual MN-09\nStep one."));
    expect(await collect(readText(text))).toEqual([{ line: 1, fields: { text: "Manual MN-09\nStep one.", path: text } }]);
  });

  it("turns corrupt or truncated data into an InputReadError after the good bytes", async () => {
    const good = zstd(timetable);
    const truncated = tmp.put("cut.txt.zst", good.subarray(0, Math.floor(good.length / 2)));
    const e1 = await read(truncated).catch((e: unknown) => e);
    expect(e1).toBeInstanceOf(InputReadError);
    expect((e1 as Error).message).toMatch(/^corrupt zstd data: /);
    const notZstd = tmp.put("plain.txt.zst", "this was never compressed");
    const e2 = await read(notZstd).catch((e: unknown) => e);
    expect(e2).toBeInstanceOf(InputReadError);
    expect((e2 as Error).message).toMatch(/^corrupt zstd data: /);
    // A reader reports the damage as a truncated row and keeps what came before.
    const lines = Array.from({ length: 3000 }, (_, i) => JSON.stringify({ body: `ticket ${i} ${"x".repeat(50)}` })).join("\n");
    const z = zstd(lines);
    const rows = await collect(readJsonl(tmp.put("cut.jsonl.zst", z.subarray(0, z.length - 20))));
    expect(rows.length).toBeGreaterThan(1);
    const error = expect.stringMatching(/^corrupt zstd data: /);
    expect(rows.at(-1)).toMatchObject({ error, truncated: { error, size: z.length - 20 } });
    // The bytes decoded before the failure are known to within the decoder's 64 KiB steps.
    const { bytes_read } = (rows.at(-1) as { truncated: { bytes_read: number } }).truncated;
    expect(bytes_read).toBeLessThanOrEqual(z.length - 20);
    expect(bytes_read).toBeGreaterThanOrEqual(Math.max(0, z.length - 20 - (1 << 16)));
  });

  it("is an empty file when the frame holds nothing", async () => {
    expect(await collect(readJsonl(tmp.put("empty.jsonl.zst", zstd(""))))).toEqual([{ line: 0, error: "empty file" }]);
  });
});
