// Stream behaviour: big files are read incrementally, abandoning a reader closes its file, chunk edges are invisible.

import fs from "node:fs";
import path from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { spawnSync } from "node:child_process";
import { pathToFileURL } from "node:url";
import { readerFor, type Format } from "../../src/sources/formats.js";
import type { Row } from "../../src/sources/row.js";
import { collect, tempDir } from "./fixtures/tmp.js";

const tmp = tempDir("stream");
afterAll(() => tmp.remove());

/** Paths this process holds open (Linux: /proc/self/fd links). */
function openPaths(): string[] {
  const out: string[] = [];
  for (const fd of fs.readdirSync("/proc/self/fd")) {
    try {
      out.push(fs.readlinkSync(`/proc/self/fd/${fd}`));
    } catch {
      // the fd used to list the directory is already gone
    }
  }
  return out;
}

async function eventuallyClosed(file: string): Promise<boolean> {
  const real = fs.realpathSync(file);
  for (let i = 0; i < 100; i++) {
    if (!openPaths().includes(real)) return true;
    await new Promise((r) => setTimeout(r, 10));
  }
  return false;
}

const haveProcFd = fs.existsSync("/proc/self/fd");

describe("large input", () => {
  it("reads 200k jsonl lines without holding the file in memory", async () => {
    const file = path.join(tmp.dir, "big.jsonl");
    const out = fs.openSync(file, "w");
    const filler = "Routine check of the overhead line between the depot and the harbour loop. ".repeat(3);
    for (let start = 0; start < 200_000; start += 10_000) {
      let block = "";
      for (let i = start; i < start + 10_000; i++) block += `{"n":${i + 1},"body":"${filler}${i}"}\n`;
      fs.writeSync(out, block);
    }
    fs.closeSync(out);
    const size = fs.statSync(file).size;
    expect(size).toBeGreaterThan(40 * 1024 * 1024);

    // A child process whose heap is capped far below the file's size reads it through: holding the
    // file (as UTF-16 strings, twice its size) would end it with an out-of-memory error. Uses the
    // compiled reader (npm test builds first); measuring the heap in-process was at the mercy of
    // when the collector ran on a loaded machine.
    const reader = pathToFileURL(path.resolve("dist/sources/formats.js")).href;
    const code = `const { readerFor } = await import(${JSON.stringify(reader)});
let count = 0, ordered = true;
for await (const row of readerFor("jsonl")(${JSON.stringify(file)})) {
  count++;
  if (!("fields" in row) || row.fields.n !== count || row.line !== count) ordered = false;
}
console.log(JSON.stringify({ count, ordered }));`;
    const r = spawnSync(process.execPath, ["--max-old-space-size=20", "--max-semi-space-size=2", "--input-type=module", "-e", code], { encoding: "utf8" });
    expect(r.stderr).toBe("");
    expect(JSON.parse(r.stdout)).toEqual({ count: 200_000, ordered: true });
  });
});

describe("abandoning a reader", () => {
  // Compressed files get hard-to-compress padding, so the file is far larger than one read and
  // cannot have been read to its end (and closed) before the consumer breaks out.
  let state = 12345;
  const noise = () => Array.from({ length: 40 }, () => ((state = (state * 1103515245 + 12345) >>> 0) >>> 8).toString(36)).join("");
  const cases: [Format, string, string][] = [
    ["jsonl", "early.jsonl", '{"body":"x"}\n'.repeat(50_000)],
    ["jsonl", "early.jsonl.gz", Array.from({ length: 20_000 }, () => `{"body":"x","pad":"${noise()}"}\n`).join("")],
    ["json", "early.json", `[${'{"body":"x"},'.repeat(50_000)}{"body":"x"}]`],
    ["csv", "early.csv.gz", "id,body,pad\n" + Array.from({ length: 20_000 }, () => `1,x,${noise()}\n`).join("")],
  ];
  for (const [format, name, content] of cases) {
    it.runIf(haveProcFd)(`closes ${name} when the consumer breaks out early`, async () => {
      const file = tmp.put(name, content);
      const real = fs.realpathSync(file);
      let seen = 0;
      let openWhileReading = false;
      for await (const row of readerFor(format)(file)) {
        expect(row).toMatchObject({ fields: { body: "x" } });
        openWhileReading = openPaths().includes(real);
        if (++seen === 3) break;
      }
      expect(openWhileReading).toBe(true);
      expect(await eventuallyClosed(file)).toBe(true);
    });
  }
});

describe("chunk boundaries", () => {
  // Multi-byte characters of every length, repeated past the 64 KiB read size so some straddle chunks.
  const phrase = "Stra\u00dfenbahn \u2192 Depot \u{1f68b} n\u00e4chster Halt, \u00ab\u2009Gleis 2\u2009\u00bb";
  const docs = Array.from({ length: 3000 }, (_, i) => ({ id: String(i + 1), body: `${phrase} ${i}` }));
  const bodies = (rows: Row[]) => rows.map((r) => ("fields" in r ? r.fields.body : r));

  it("is invisible to jsonl, json, csv and text readers", async () => {
    const expected = docs.map((d) => d.body);
    expect(bodies(await collect(readerFor("jsonl")(tmp.put("mb.jsonl", docs.map((d) => JSON.stringify(d)).join("\n")))))).toEqual(expected);
    expect(bodies(await collect(readerFor("json")(tmp.put("mb.json.gz", JSON.stringify(docs)))))).toEqual(expected);
    expect(bodies(await collect(readerFor("csv")(tmp.put("mb.csv", "id,body\n" + docs.map((d) => `${d.id},"${d.body}"`).join("\n")))))).toEqual(expected);
    const text = docs.map((d) => d.body).join("\n");
    expect(await collect(readerFor("text")(tmp.put("mb.txt", text)))).toMatchObject([{ line: 1, fields: { text } }]);
  });
});
