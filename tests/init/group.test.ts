// Grouping files into sources: one per folder and kind, named after the folder or the file, with a glob matching exactly the files.
import { afterAll, describe, expect, it } from "vitest";
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { glob } from "tinyglobby";
import { globEscape, groupFiles } from "../../src/init/group.js";
import type { Sniffed } from "../../src/init/sniff.js";

const root = mkdtempSync(join(tmpdir(), "siftpack-group-"));
afterAll(() => rmSync(root, { recursive: true, force: true }));
const jsonl: Sniffed = { format: "jsonl", compression: "gzip", suffix: ".jsonl.gz", by: "name" };
const csv: Sniffed = { format: "csv", compression: "none", suffix: ".csv", by: "name" };

function files(sub: string, names: string[]): string[] {
  mkdirSync(join(root, sub), { recursive: true });
  return names.map((n) => {
    writeFileSync(join(root, sub, n), "x");
    return join(root, sub, n);
  });
}

/** What the build's glob would match, as absolute paths. */
async function matches(pattern: string): Promise<string[]> {
  return (await glob(pattern, { cwd: root, absolute: true, expandDirectories: false })).sort();
}

describe("groupFiles", () => {
  it("names a folder's files after the folder and globs them all when they are all given", async () => {
    const t = files("tickets", ["t-2026.jsonl.gz", "t-2025.jsonl.gz"]);
    const [g] = await groupFiles(t.map((path) => ({ path, sniffed: jsonl })), root);
    expect(g).toMatchObject({ name: "tickets", glob: "tickets/*.jsonl.gz" });
    expect(g.files).toEqual([...t].sort());
    expect(await matches(g.glob)).toEqual(g.files);
  });

  it("lists the files when only some of a folder's are given, and keeps kinds apart", async () => {
    const all = files("mixed", ["a.csv", "b.csv", "c (copy).csv", "d.jsonl.gz"]);
    const groups = await groupFiles([{ path: all[0], sniffed: csv }, { path: all[2], sniffed: csv }, { path: all[3], sniffed: jsonl }], root);
    expect(groups.map((g) => g.name)).toEqual(["mixed", "d"]);
    expect(groups[0].glob).toBe("mixed/{a.csv,c \\(copy\\).csv}");
    expect(await matches(groups[0].glob)).toEqual([all[0], all[2]]);
    expect(await matches(groups[1].glob)).toEqual([all[3]]);
  });

  it("keeps source names unique", async () => {
    const a = files("x/notes", ["n.csv"]);
    const b = files("y/notes", ["n.csv"]);
    const groups = await groupFiles([...a, ...b].map((path) => ({ path, sniffed: csv })), root);
    expect(groups.map((g) => g.name)).toEqual(["n", "n-2"]);
  });

  it("escapes glob syntax in names", () => {
    expect(globEscape("a[1]*{b}?.csv")).toBe("a\\[1\\]\\*\\{b\\}\\?.csv");
  });
});
