// Default ids name a record by its file below the folder its source's pattern starts from, and its
// line: the same ids whether the pattern is relative or absolute and wherever the pipeline file is.
import { afterAll, describe, expect, it } from "vitest";
import path from "node:path";
import { defaultId, idFileOf, readSource, type SourceSpec } from "../../src/sources/source.js";
import { collect, tempDir } from "./fixtures/tmp.js";

const tmp = tempDir("default-ids");
afterAll(() => tmp.remove());

const spec = (files: string, format: SourceSpec["format"] = "jsonl"): SourceSpec => ({ name: "notes", files, format, text: "body", meta: [], weight: 1 });

describe("idFileOf", () => {
  it("takes the path below the pattern's fixed folders (a plain path: its file name)", () => {
    const base = "/depot/pipelines";
    expect(idFileOf(spec("../data/notes/*.jsonl"), base, "../data/notes/a.jsonl")).toBe("a.jsonl");
    expect(idFileOf(spec("/depot/data/notes/*.jsonl"), base, "../data/notes/a.jsonl")).toBe("a.jsonl");
    expect(idFileOf(spec("../data/{2025,2026}/*.jsonl"), base, "../data/2026/a.jsonl")).toBe("2026/a.jsonl");
    expect(idFileOf(spec("../data/notes/**/*.jsonl"), base, "../data/notes/yard/b.jsonl")).toBe("yard/b.jsonl");
    expect(idFileOf(spec("../data/notes.jsonl"), base, "../data/notes.jsonl")).toBe("notes.jsonl");
    expect(idFileOf(spec("*.jsonl"), base, "c.jsonl")).toBe("c.jsonl");
    // An escaped glob character in a folder name is that character.
    expect(idFileOf(spec("shift\\(a\\)/*.jsonl"), base, "shift(a)/d.jsonl")).toBe("d.jsonl");
  });

  it("gives a text file's record its file alone, other formats file and line", () => {
    expect(defaultId({ name: "pages", format: "text" }, "brakes/pads.txt", 1)).toBe("pages:brakes/pads.txt");
    expect(defaultId({ name: "notes", format: "csv" }, "notes.csv", 7)).toBe("notes:notes.csv:7");
  });
});

describe("readSource", () => {
  it("names records the same from a pipeline file in another folder and from an absolute pattern", async () => {
    tmp.put("data/notes/a.jsonl", '{"body":"Sander on car 4711 refilled."}\n{"body":"Horn of car 4712 tested."}\n');
    const ids = async (files: string, baseDir: string) => (await collect(readSource(spec(files), baseDir))).map((i) => (i.kind === "record" ? i.id : "bad"));
    const expected = ["notes:a.jsonl:1", "notes:a.jsonl:2"];
    expect(await ids("data/notes/*.jsonl", tmp.dir)).toEqual(expected);
    expect(await ids("../data/notes/*.jsonl", path.join(tmp.dir, "pipelines"))).toEqual(expected);
    expect(await ids(path.join(tmp.dir, "data/notes/*.jsonl"), path.join(tmp.dir, "elsewhere/deeper"))).toEqual(expected);
  });
});
