// Opening inputs: plain and gzip, unsupported compressions, missing files, read errors.

import fs from "node:fs";
import zlib from "node:zlib";
import { afterAll, describe, expect, it } from "vitest";
import { SiftpackError } from "../../src/errors.js";
import { InputReadError, compressionOf, describeReadError, openInput, readChunks } from "../../src/sources/open.js";
import { collect, tempDir } from "./fixtures/tmp.js";

const tmp = tempDir("open");
afterAll(() => tmp.remove());

const timetable = "06:02 depart Quillon Street\n06:17 arrive Harbour Loop\n".repeat(3000);

async function read(file: string): Promise<Buffer> {
  return Buffer.concat(await collect(readChunks(await openInput(file))));
}

describe("openInput", () => {
  it("streams a plain file and a .gz file to the same bytes", async () => {
    expect((await read(tmp.put("t.txt", timetable))).toString()).toBe(timetable);
    expect((await read(tmp.put("t.txt.gz", timetable))).toString()).toBe(timetable);
    expect((await read(tmp.put("T.TXT.GZ", timetable))).toString()).toBe(timetable);
  });

  it("refuses xz and bzip2 with a clear error", async () => {
    const file = tmp.put("t.jsonl.xz", "whatever");
    await expect(openInput(file)).rejects.toMatchObject({
      code: "SP_INPUT_FORMAT",
      message: `${file}: xz-compressed input (.xz) is not supported yet; decompress it first or recompress it with gzip or zstd`,
    });
    expect(() => compressionOf("a.csv.bz2")).toThrow(/bzip2-compressed input/);
    expect(compressionOf("a.csv")).toBe("none");
    expect(compressionOf("a.csv.zst")).toBe("zstd");
  });

  it("reports a missing file as SP_INPUT_MISSING", async () => {
    const file = `${tmp.dir}/nope.jsonl`;
    const err = await openInput(file).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(SiftpackError);
    expect(err).toMatchObject({ code: "SP_INPUT_MISSING", message: `cannot open "${file}": no such file or directory` });
  });

  it("turns corrupt gzip into an InputReadError after the good bytes", async () => {
    const gz = zlib.gzipSync(timetable);
    const bad = Buffer.from(gz);
    bad.fill(0x41, 40, 60);
    const file = `${tmp.dir}/bad.txt.gz`;
    fs.writeFileSync(file, bad);
    const err = await read(file).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(InputReadError);
    expect((err as Error).message).toMatch(/^corrupt gzip data: /);
  });

  it("turns an OS error during reading into an InputReadError, with or without gzip", async () => {
    // open() succeeds on a directory on Linux; the first read fails with EISDIR.
    for (const name of ["folder.jsonl", "folder.jsonl.gz"]) {
      fs.mkdirSync(`${tmp.dir}/${name}`);
      const err = await read(`${tmp.dir}/${name}`).catch((e: unknown) => e);
      expect(err).toBeInstanceOf(InputReadError);
      expect((err as Error).message).toBe("read error: is a directory");
    }
  });

  it("describes OS read errors without a stack", () => {
    expect(describeReadError(Object.assign(new Error("EIO: i/o error, read"), { code: "EIO" }))).toBe("read error: input/output error");
    expect(describeReadError(Object.assign(new Error("x"), { code: "EISDIR" }))).toBe("read error: is a directory");
  });
});
