// The pieces behind `inspect`: positioned .npy row reads (checked against files NumPy wrote) and the row report.
import { describe, expect, it } from "vitest";
import { writeFileSync } from "node:fs";
import { join } from "node:path";
import { readNpyRow } from "../../src/pack/npy-row.js";
import { encodeValues, npyHeader, type Dtype } from "../../src/output/npy.js";
import { describeRow, rowTable, rowText } from "../../src/pack/row-report.js";
import { python, tempDir } from "../e2e/cli.js";

describe("readNpyRow", () => {
  it("reads single rows of every dtype from our own files", async () => {
    const dir = tempDir("npyrow");
    const values = Uint32Array.from({ length: 5 * 7 }, (_, i) => (i * 37) % 250);
    for (const dtype of ["uint8", "uint16", "uint32", "int32"] as Dtype[]) {
      const path = join(dir, `${dtype}.npy`);
      writeFileSync(path, Buffer.concat([npyHeader(dtype, [5, 7]), encodeValues(values, dtype)]));
      for (const r of [0, 3, 4]) expect([...(await readNpyRow(path, r)).values]).toEqual([...values.subarray(r * 7, r * 7 + 7)]);
      await expect(readNpyRow(path, 5)).rejects.toThrow(/row 5 outside 0–4/);
    }
  });

  it("reads rows of files NumPy wrote (format 1.0 and 2.0 headers)", async () => {
    // Reference: numpy.save / numpy.lib.format.write_array, not siftpack code.
    const dir = tempDir("npyrow-np");
    python(
      `import sys, numpy as np
a = (np.arange(3 * 1000, dtype=np.uint32) * 7919 % 50257).reshape(3, 1000)
np.save(sys.argv[1] + "/u16.npy", a.astype(np.uint16))
np.save(sys.argv[1] + "/u32.npy", a)
with open(sys.argv[1] + "/v2.npy", "wb") as f:
    np.lib.format.write_array(f, a.astype(np.uint16), version=(2, 0))`,
      [dir],
    );
    const expected = (r: number) => Array.from({ length: 1000 }, (_, k) => ((r * 1000 + k) * 7919) % 50257);
    for (const f of ["u16", "u32", "v2"]) {
      const { values, info } = await readNpyRow(join(dir, `${f}.npy`), 2);
      expect(info.shape).toEqual([3, 1000]);
      expect([...values]).toEqual(expected(2));
    }
  });
});

describe("row report", () => {
  // Letters stand in for a tokenizer: id k decodes to the k-th letter, 0 to "<eos>".
  const decode = (ids: ArrayLike<number>) => Array.from(ids, (k) => (k === 0 ? "<eos>" : String.fromCharCode(96 + k))).join("");
  const input = {
    tokens: Uint32Array.from([3, 1, 20, 0, 14, 15, 0, 0]),
    segments: Uint32Array.from([1, 1, 1, 1, 2, 2, 0, 0]),
    decode,
    eosId: 0,
    eosAppended: true,
  };

  it("lists pieces with their token ranges, text and whether they end in end-of-text", () => {
    const r = describeRow({ ...input, tokens: Uint32Array.from([3, 1, 20, 0, 14, 15, 0, 0]) });
    expect(r).toEqual({
      length: 8,
      pieces: [
        { segment: 1, start: 0, end: 4, text: "cat<eos>", ends_with_eos: true },
        { segment: 2, start: 4, end: 6, text: "no", ends_with_eos: false },
        { segment: 0, start: 6, end: 8, text: "" },
      ],
      document_tokens: 6,
      padding: 2,
      targets: 4,
    });
    expect(rowText(r, true)).toBe(
      [
        "┌─ segment 1 · tokens 0–3 (4) · ends with end-of-text",
        "│ cat<eos>",
        "┌─ segment 2 · tokens 4–5 (2) · no end-of-text at its end: the document was cut here and continues in another block",
        "│ no",
        "┌─ padding · tokens 6–7 (2)",
        "",
      ].join("\n"),
    );
  });

  it("prints one line per token with segment, position, target and id", () => {
    expect(rowTable(input).split("\n").slice(0, 6)).toEqual([
      "index  segment  position  target  id  token",
      '0      1        0         -       3   "c"',
      '1      1        1         yes     1   "a"',
      '2      1        2         yes     20  "t"',
      '3      1        3         yes     0   "<eos>"',
      '4      2        0         -       14  "n"',
    ]);
    expect(rowTable(input).split("\n")[7]).toBe('6      pad      -         -       0   "<eos>"');
  });
});
