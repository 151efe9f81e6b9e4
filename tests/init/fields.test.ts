// Choosing the text, id and metadata fields from a sample of rows.
import { afterAll, describe, expect, it } from "vitest";
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { sampleFiles } from "../../src/init/sample.js";
import { chooseFields } from "../../src/init/fields.js";
import { scalar } from "../../src/init/pipeline-text.js";

const dir = mkdtempSync(join(tmpdir(), "siftpack-fields-"));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const DEPOTS = ["Harrow Lane", "Quayside", "Northfold"];
function jsonl(name: string, rows: object[]): string {
  writeFileSync(join(dir, name), rows.map((r) => JSON.stringify(r)).join("\n") + "\n");
  return join(dir, name);
}

describe("chooseFields", () => {
  it("takes the longest string field on average as the text, an identifier-named unique field as the id, short repeating fields as meta", async () => {
    const rows = Array.from({ length: 60 }, (_, i) => ({
      ref: `R${i}`,
      title: `Door fault ${i}`,
      body: `Car ${4700 + i} reported the rear door slow to close; the drive belt was adjusted and tested ${i % 5} times.`,
      depot: DEPOTS[i % 3],
      year: 2025 + (i % 2),
      ticket_id: `T-2026-${String(i).padStart(4, "0")}`,
      // long but rare: must not win against the body
      attachment_text: i === 0 ? "x".repeat(5000) : null,
    }));
    const s = await sampleFiles([jsonl("a.jsonl", rows)], "jsonl", 1000);
    const f = chooseFields(s)!;
    expect(f.text).toBe("body");
    expect(f.id).toBe("ticket_id");
    expect(f.meta).toEqual(["depot", "year"]);
    expect(f.metaValues).toEqual({ depot: 3, year: 2 });
    expect(s.complete).toBe(true);
  });

  it("falls back to a unique field of numbers for the id, and to none when only prose is unique", async () => {
    const numbered = Array.from({ length: 20 }, (_, i) => ({ n: 100 + i, note: `Shift note ${i}: all trams stabled by midnight.`, shift: i % 2 ? "late" : "early" }));
    expect(chooseFields(await sampleFiles([jsonl("b.jsonl", numbered)], "jsonl", 1000))).toMatchObject({ text: "note", id: "n", meta: ["shift"] });
    const prose = Array.from({ length: 20 }, (_, i) => ({ subject: `Sander check ${i}`, body: `The sand hoppers of car ${i} were filled and the nozzles blown through.` }));
    const f = chooseFields(await sampleFiles([jsonl("c.jsonl", prose)], "jsonl", 1000))!;
    expect(f.text).toBe("body");
    expect(f.id).toBeUndefined();
  });

  it("rejects a duplicated id and stops at the sample size", async () => {
    const rows = Array.from({ length: 30 }, (_, i) => ({ id: `T-${i % 29}`, body: `ticket text number ${i}` }));
    const s = await sampleFiles([jsonl("d.jsonl", rows)], "jsonl", 1000);
    expect(chooseFields(s)!.id).toBeUndefined();
    const head = await sampleFiles([jsonl("e.jsonl", rows)], "jsonl", 10);
    expect(head.rows).toBe(10);
    expect(head.complete).toBe(false);
  });

  it("finds no text when no field holds strings", async () => {
    expect(chooseFields(await sampleFiles([jsonl("f.jsonl", [{ a: 1 }, { a: 2 }])], "jsonl", 10))).toBeUndefined();
  });
});

describe("scalar", () => {
  it("quotes what YAML would read as something else", () => {
    expect(scalar("body")).toBe("body");
    expect(scalar("ticket-id")).toBe("ticket-id");
    for (const s of ["yes", "null", "true", "1e3", "2025", "a b", "*x", "x: y", "#c", ""]) expect(scalar(s)).toBe(JSON.stringify(s));
  });
});
