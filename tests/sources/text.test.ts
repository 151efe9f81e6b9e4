// Plain-text reader: one document per file.

import { afterAll, describe, expect, it } from "vitest";
import { readText } from "../../src/sources/text.js";
import { bytes, collect, tempDir } from "./fixtures/tmp.js";

const tmp = tempDir("text");
afterAll(() => tmp.remove());

const memo = "Depot memo\n\nFrom Monday, trams leaving the Quillon Street yard use track 2.\r\nKeep the gate closed.\n";

describe("readText", () => {
  it("yields the whole file as one row with its path", async () => {
    const file = tmp.put("memo.txt", memo);
    expect(await collect(readText(file))).toEqual([{ line: 1, fields: { text: memo, path: file } }]);
  });

  it("decompresses .gz and drops only a leading BOM", async () => {
    const file = tmp.put("memo.txt.gz", `\ufeff${memo}\ufeff`);
    expect(await collect(readText(file))).toEqual([{ line: 1, fields: { text: `${memo}\ufeff`, path: file } }]);
  });

  it("reports invalid UTF-8 at line 1 with the byte offset", async () => {
    const file = tmp.put("latin1.txt", bytes("Fahrplan f", [0xfc], "r Linie 4"));
    expect(await collect(readText(file))).toEqual([{ line: 1, error: "invalid UTF-8 at byte offset 10" }]);
  });

  it("reports an empty or whitespace-only file", async () => {
    expect(await collect(readText(tmp.put("empty.txt", "")))).toEqual([{ line: 0, error: "empty file" }]);
    expect(await collect(readText(tmp.put("spaces.txt", " \n\r\n\t")))).toEqual([{ line: 0, error: "empty file" }]);
  });

  it("refuses a file over the size limit", async () => {
    const file = tmp.put("huge.txt", "z".repeat(3000));
    expect(await collect(readText(file, { maxRecordBytes: 2048 }))).toEqual([{ line: 1, error: "file longer than 2 KiB" }]);
  });
});
