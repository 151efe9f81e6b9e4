// Choosing a group key for split.by: a field named like a page, document, thread or author key whose values repeat.
import { afterAll, describe, expect, it } from "vitest";
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { sampleFiles } from "../../src/init/sample.js";
import { chooseFields, groupNoun } from "../../src/init/fields.js";

const dir = mkdtempSync(join(tmpdir(), "siftpack-group-key-"));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function jsonl(name: string, rows: object[]): string {
  writeFileSync(join(dir, name), rows.map((r) => JSON.stringify(r)).join("\n") + "\n");
  return join(dir, name);
}

const PAGES = Array.from({ length: 70 }, (_, i) => `tram-unit-${i}(8)`);
/** Sections of invented manual pages: 3 sections a page, more pages than meta allows (50). */
const sections = (key: string) =>
  Array.from({ length: 210 }, (_, i) => ({ [key]: PAGES[Math.floor(i / 3)], section: ["NAME", "CHECKS", "NOTES"][i % 3], text: `Section ${i % 3} of ${PAGES[Math.floor(i / 3)]}: isolate the unit, check the seals and log the reading.` }));

describe("groupNoun", () => {
  it("reads the field name's words: a group word, then only key-like words", () => {
    expect(["page", "page_name", "pageName", "PageId"].map(groupNoun)).toEqual(["page", "page", "page", "page"]);
    expect(["doc_id", "document", "article-key", "url"].map(groupNoun)).toEqual(["document", "document", "document", "document"]);
    expect(["thread_id", "conversation"].map(groupNoun)).toEqual(["thread", "thread"]);
    expect(["author", "author_id", "user_name"].map(groupNoun)).toEqual(["author", "author", "author"]);
    for (const other of ["depot", "section_title", "page_count_total", "title", "name", "pages_read_today", "homepage"]) expect(groupNoun(other), other).toBeUndefined();
  });
});

describe("chooseFields: group", () => {
  it("proposes a page key with many values (too many for meta) and carries it as meta", async () => {
    const f = chooseFields(await sampleFiles([jsonl("pages.jsonl", sections("page"))], "jsonl", 1000))!;
    expect(f.group).toEqual({ field: "page", noun: "page", values: 70, perValue: 3 });
    expect(f.meta).toContain("page");
    expect(f.meta).toContain("section");
  });

  it("prefers a document key to an author key, and proposes none when every value is its own", async () => {
    const rows = sections("doc_id").map((r, i) => ({ ...r, author: ["A. Fenwick", "R. Millrace"][i % 2] }));
    expect(chooseFields(await sampleFiles([jsonl("docs.jsonl", rows)], "jsonl", 1000))!.group).toMatchObject({ field: "doc_id", noun: "document" });
    const unique = sections("page").map((r, i) => ({ ...r, page: `p-${i}` }));
    expect(chooseFields(await sampleFiles([jsonl("unique.jsonl", unique)], "jsonl", 1000))!.group).toBeUndefined();
    const one = sections("page").map((r) => ({ ...r, page: "all" }));
    expect(chooseFields(await sampleFiles([jsonl("one.jsonl", one)], "jsonl", 1000))!.group).toBeUndefined();
  });
});
