// The line limit of line-based readers: a source's max_line_mb (default 64 MiB) is validated, reaches the
// jsonl, csv and text readers, and a longer line is quarantined with its file and line; a whole build too.
import { readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { parsePipeline, loadPipeline } from "../../src/pipeline/load.js";
import { SiftpackError } from "../../src/errors.js";
import { readSourceFile, RecordMapper, type SourceSpec } from "../../src/sources/source.js";
import { lineLimitBytes } from "../../src/sources/lines.js";
import { collect, tempDir } from "./fixtures/tmp.js";
import { siftpack } from "../e2e/cli.js";

const tmp = tempDir("line-limit");
afterAll(() => tmp.remove());

const pipeline = (source: string, extra = "") => `siftpack: 1
max_bad_fraction: 0.5
sources:
  - { name: shifts, files: "shifts.*", format: jsonl, text: note${source} }
stages:
  - tokenize: { encoding: gpt2 }
  - pack: { length: 64 }
output: { dir: out }
${extra}`;

function problems(text: string): string[] {
  try {
    parsePipeline(text, "p.yaml");
  } catch (e) {
    if (e instanceof SiftpackError) return e.details;
    throw e;
  }
  return [];
}

/** A shift note of about `size` bytes: the runaway line of a depot's export. */
const longNote = (size: number) => JSON.stringify({ note: "Depot Harrowgate night shift: " + "brake pads checked on car 12. ".repeat(Math.ceil(size / 30)) });
const spec = (format: SourceSpec["format"], max_line_mb?: number): SourceSpec => ({ name: "shifts", files: "*", format, text: "note", meta: [], weight: 1, max_line_mb });
const read = async (s: SourceSpec, file: string) => collect(readSourceFile(s, tmp.dir, file, new RecordMapper(s)));

describe("max_line_mb in the pipeline file", () => {
  it("is optional: unset, the resolved source has no such key (hash and manifest as before)", () => {
    const c = parsePipeline(pipeline(""), "p.yaml");
    expect("max_line_mb" in c.sources[0]).toBe(false);
    expect(parsePipeline(pipeline(", max_line_mb: 0.5"), "p.yaml").sources[0].max_line_mb).toBe(0.5);
  });

  it("must be a number from 0.001 to 256, and only on formats whose readers hold a line", () => {
    expect(problems(pipeline(", max_line_mb: 0"))).toEqual([expect.stringMatching(/sources\[0\]\.max_line_mb: expected a number from 0\.001 to 256, got number 0$/)]);
    expect(problems(pipeline(", max_line_mb: 1000"))).toEqual([expect.stringMatching(/max_line_mb: expected a number from 0\.001 to 256, got number 1000$/)]);
    expect(problems(pipeline(", max_line_mb: big"))).toEqual([expect.stringMatching(/max_line_mb: expected a number from 0\.001 to 256, got "big"$/)]);
    const json = pipeline(", max_line_mb: 8").replace("format: jsonl", "format: json");
    expect(problems(json)).toEqual([expect.stringMatching(/sources\[0\]\.max_line_mb: max_line_mb applies to formats jsonl, csv, tsv, text only \(format is json\)$/)]);
  });

  it("is MiB, rounded down to whole bytes", () => {
    expect(lineLimitBytes(undefined)).toBeUndefined();
    expect(lineLimitBytes(64)).toBe(64 * 1024 * 1024);
    expect(lineLimitBytes(0.001)).toBe(1048);
  });
});

describe("a source's limit reaches its reader", () => {
  it("jsonl: a longer line is quarantined naming file and line; its neighbours are read; the default reads it", async () => {
    const file = "shifts.jsonl";
    tmp.put(file, [JSON.stringify({ note: "Car 3 washed." }), longNote(3000), JSON.stringify({ note: "Car 4 washed." })].join("\n") + "\n");
    const items = await read(spec("jsonl", 0.002), file);
    expect(items.map((i) => i.kind)).toEqual(["record", "bad", "record"]);
    expect(items[1]).toEqual({ kind: "bad", entry: { source: "shifts", file, line: 2, error: "line longer than 2097 bytes" } });
    expect((await read(spec("jsonl"), file)).map((i) => i.kind)).toEqual(["record", "record", "record"]);
  });

  it("csv: a longer record; text: a longer file", async () => {
    tmp.put("shifts.csv", `note\n"Car 5 washed."\n"${"Wheel flats measured on car 9. ".repeat(100)}"\n`);
    const csv = await read(spec("csv", 0.001), "shifts.csv");
    expect(csv.map((i) => i.kind)).toEqual(["record", "bad"]);
    expect(csv[1]).toMatchObject({ entry: { file: "shifts.csv", line: 2, error: "record longer than 1048 bytes (file line 3)" } });
    tmp.put("manual.txt", "Pantograph inspection, step by step. ".repeat(60));
    expect(await read(spec("text", 0.001), "manual.txt")).toEqual([{ kind: "bad", entry: { source: "shifts", file: "manual.txt", line: 1, error: "file longer than 1048 bytes" } }]);
    expect((await read(spec("text", 0.01), "manual.txt"))[0].kind).toBe("record");
  });
});

describe("a build with max_line_mb", () => {
  it("quarantines the long line with file and line, and plan prints the setting", async () => {
    const dir = tempDir("line-limit-build");
    try {
      writeFileSync(join(dir.dir, "shifts.jsonl"), [JSON.stringify({ note: "Car 3 washed and parked on track 2." }), longNote(3000), JSON.stringify({ note: "Car 4 washed and parked on track 5." })].join("\n") + "\n");
      const file = join(dir.dir, "p.yaml");
      writeFileSync(file, pipeline(", max_line_mb: 0.002"));
      expect((await loadPipeline(file)).config.sources[0].max_line_mb).toBe(0.002);
      const plan = siftpack(["plan", file]);
      expect(plan.code, plan.stderr).toBe(0);
      expect(plan.stdout).toMatch(/^ {4}max_line_mb: 0\.002$/m);
      const run = siftpack(["run", file, "--quiet"]);
      expect(run.code, run.stderr).toBe(0);
      const q = readFileSync(join(dir.dir, "out/quarantine.jsonl"), "utf8").trim().split("\n").map((l) => JSON.parse(l));
      expect(q).toEqual([{ source: "shifts", file: "shifts.jsonl", line: 2, error: "line longer than 2097 bytes" }]);
      // Without the key the same line is read (64 MiB), and the build differs.
      writeFileSync(file, pipeline(""));
      expect(siftpack(["run", file, "--quiet"]).code).toBe(0);
      expect(readFileSync(join(dir.dir, "out/quarantine.jsonl"), "utf8")).toBe("");
    } finally {
      dir.remove();
    }
  });
});
