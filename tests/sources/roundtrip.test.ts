// Property tests: whatever objects are written as jsonl, json or csv come back unchanged from the reader.

import fc from "fast-check";
import { writeToString } from "fast-csv";
import { afterAll, describe, expect, it } from "vitest";
import { readCsv } from "../../src/sources/csv.js";
import { readJson } from "../../src/sources/json.js";
import { readJsonl } from "../../src/sources/jsonl.js";
import { collect, tempDir } from "./fixtures/tmp.js";

const tmp = tempDir("roundtrip");
afterAll(() => tmp.remove());

let fileNo = 0;
const nextName = (ext: string) => `case-${++fileNo}${ext}`;

const record = fc.dictionary(fc.string({ unit: "binary", maxLength: 8 }), fc.jsonValue({ maxDepth: 2 }), { maxKeys: 5 });
const gz = fc.boolean();

describe("round trips", () => {
  it("jsonl: objects, blank lines and CRLF come back with their line numbers", async () => {
    await fc.assert(
      fc.asyncProperty(
        fc.array(fc.record({ value: record, blanksBefore: fc.nat(2), crlf: fc.boolean() }), { maxLength: 15 }),
        gz,
        async (items, zip) => {
          let text = "";
          let line = 0;
          const expected: { line: number; fields: unknown }[] = [];
          for (const { value, blanksBefore, crlf } of items) {
            text += "\n".repeat(blanksBefore);
            line += blanksBefore + 1;
            text += JSON.stringify(value) + (crlf ? "\r\n" : "\n");
            expected.push({ line, fields: JSON.parse(JSON.stringify(value)) });
          }
          const rows = await collect(readJsonl(tmp.put(nextName(zip ? ".jsonl.gz" : ".jsonl"), text)));
          expect(rows).toEqual(expected.length ? expected : [{ line: 0, error: "empty file" }]);
        },
      ),
      { numRuns: 150 },
    );
  });

  it("json: an array of objects comes back element by element", async () => {
    await fc.assert(
      fc.asyncProperty(fc.array(record, { maxLength: 15 }), fc.constantFrom(undefined, 2), gz, async (values, indent, zip) => {
        const rows = await collect(readJson(tmp.put(nextName(zip ? ".json.gz" : ".json"), JSON.stringify(values, null, indent))));
        expect(rows).toEqual(values.map((v, k) => ({ line: k + 1, fields: JSON.parse(JSON.stringify(v)) })));
      }),
      { numRuns: 150 },
    );
  });

  it("csv: rows written by fast-csv (quotes, delimiters, CR/LF inside values) come back", async () => {
    const columns = fc.uniqueArray(fc.string({ unit: "grapheme", minLength: 1, maxLength: 6 }), { minLength: 1, maxLength: 4 });
    const cell = fc.oneof(fc.string({ unit: "grapheme", maxLength: 10 }), fc.constantFrom('"', ",", "\t", "\n", "\r\n", "\r", ' "x" ', ""));
    await fc.assert(
      fc.asyncProperty(
        columns.chain((cols) => fc.tuple(fc.constant(cols), fc.array(fc.array(cell, { minLength: cols.length, maxLength: cols.length }), { maxLength: 10 }))),
        fc.constantFrom(",", "\t"),
        fc.constantFrom("\n", "\r\n"),
        gz,
        async ([cols, cells], delimiter, rowDelimiter, zip) => {
          // Quoting everything keeps an all-empty one-column row from turning into a blank line.
          const csv = await writeToString([cols, ...cells], { delimiter, rowDelimiter, quoteColumns: true, quoteHeaders: true });
          const rows = await collect(readCsv(tmp.put(nextName(zip ? ".csv.gz" : ".csv"), csv), { delimiter }));
          expect(rows).toEqual(cells.map((values, k) => ({ line: k + 1, fields: Object.fromEntries(cols.map((c, j) => [c, values[j]])) })));
        },
      ),
      { numRuns: 150 },
    );
  });
});
