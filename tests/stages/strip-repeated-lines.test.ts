// strip_repeated_lines: boilerplate lines found in min_docs records go, the spill file is removed, counts never overshoot.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import fc from "fast-check";
import { mkdtempSync, readdirSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import stage, { LineCounts, stripLines, stripRepeatedLinesOptions } from "../../src/stages/strip-repeated-lines.js";
import { loadHasher } from "../../src/lib/hash.js";
import type { DocRecord, StageContext } from "../../src/types.js";
import type { Issue } from "../../src/pipeline/schema.js";

const work = mkdtempSync(join(tmpdir(), "siftpack-strip-"));
afterAll(() => rmSync(work, { recursive: true, force: true }));
beforeAll(loadHasher);

const FOOTER = "Printed from the Harrow Lane maintenance system.";
const HEADER = "Quayside depot - internal";

async function run(options: unknown, texts: string[]) {
  const issues: Issue[] = [];
  const o = stripRepeatedLinesOptions.check(options, [], issues);
  expect(issues).toEqual([]);
  const counts: Record<string, number> = {};
  const drops: { id: string; reason: string; detail?: Record<string, unknown> }[] = [];
  const quiet = () => {};
  const ctx: StageContext = {
    seed: 0,
    drop: (r, reason, detail) => drops.push({ id: r.id, reason, detail }),
    count: (name, n = 1) => (counts[name] = (counts[name] ?? 0) + n),
    log: { info: quiet, warn: quiet, error: quiet, debug: quiet },
    workDir: work,
    addOutputFile: quiet,
  };
  async function* input(): AsyncGenerator<DocRecord> {
    for (const [i, text] of texts.entries()) yield { id: `T-${i}`, source: "tickets", text, meta: { depot: "Northfold", year: 2026 }, origin: { file: "t.jsonl", line: i + 1 }, seq: i };
  }
  const s = await stage.create(o, { baseDir: "." } as never);
  const kept: DocRecord[] = [];
  for await (const r of s(input(), ctx)) kept.push(r);
  return { kept, drops, counts };
}

describe("strip_repeated_lines", () => {
  it("removes lines seen in at least min_docs records and keeps the rest, in order, with their fields", async () => {
    const texts = [
      `${HEADER}\nDoor 3 on car 4711 sticks.\n${FOOTER}`,
      `${HEADER}\nPantograph carbon worn on car 4712.\n\n${FOOTER}`,
      `Wheel flat on car 4713.\n  ${FOOTER}  `, // indentation does not hide a repeat
      `${HEADER}\nSander blocked on car 4714.`,
    ];
    const { kept, drops, counts } = await run({ min_docs: 3 }, texts);
    expect(drops).toEqual([]);
    expect(kept.map((r) => r.text)).toEqual(["Door 3 on car 4711 sticks.", "Pantograph carbon worn on car 4712.", "Wheel flat on car 4713.", "Sander blocked on car 4714."]);
    expect(kept.map((r) => [r.id, r.seq, r.meta, r.origin.line])).toEqual(texts.map((_, i) => [`T-${i}`, i, { depot: "Northfold", year: 2026 }, i + 1]));
    expect(counts).toMatchObject({ "strip_repeated_lines:lines_removed": 6, "strip_repeated_lines:records_changed": 4 });
    expect(readdirSync(work)).toEqual([]); // the spill file is gone
  });

  it("keeps a line found in min_docs - 1 records, and counts a line once per record", async () => {
    const texts = [`${FOOTER}\n${FOOTER}\n${FOOTER}\nBrake test passed.`, `${FOOTER}\nHorn replaced.`, "Mirror adjusted."];
    const { kept } = await run({ min_docs: 3 }, texts);
    expect(kept.map((r) => r.text)).toEqual(texts);
    const { kept: again } = await run({ min_docs: 2 }, texts);
    expect(again.map((r) => r.text)).toEqual(["Brake test passed.", "Horn replaced.", "Mirror adjusted."]);
  });

  it("leaves lines shorter than min_chars alone, however often they repeat", async () => {
    const texts = ["1. Purpose\nTest the doors of car 4711.", "1. Purpose\nTest the horn of car 4712.", `1. Purpose\n${FOOTER}`, FOOTER, `${FOOTER}\nok`];
    const { kept } = await run({ min_docs: 3, min_chars: 11 }, texts); // "1. Purpose" has 10 characters
    expect(kept.map((r) => r.text)).toEqual(["1. Purpose\nTest the doors of car 4711.", "1. Purpose\nTest the horn of car 4712.", "1. Purpose", "ok"]);
  });

  it("drops a record left empty, with a reason", async () => {
    const { kept, drops } = await run({ min_docs: 2 }, [FOOTER, `${FOOTER}\nCab heater fixed.`]);
    expect(kept.map((r) => r.text)).toEqual(["Cab heater fixed."]);
    expect(drops).toEqual([{ id: "T-0", reason: "strip_repeated_lines:empty", detail: { lines_removed: 1 } }]);
  });

  it("leaves no hole: blank lines around a removed line merge", async () => {
    await loadHasher();
    const counts = new LineCounts(10_000);
    for (let i = 0; i < 3; i++) counts.addRecord(FOOTER);
    expect(stripLines(`Step one.\n\n${FOOTER}\n\nStep two.\n`, counts, 3).text).toBe("Step one.\n\nStep two.");
    expect(stripLines(`Step one.\n\nStep two.`, counts, 3)).toEqual({ text: "Step one.\n\nStep two.", removed: 0 });
  });

  it("removes the spill file when the input fails", async () => {
    const quiet = () => {};
    const ctx = { seed: 0, drop: quiet, count: quiet, log: { info: quiet, warn: quiet, error: quiet, debug: quiet }, workDir: work, addOutputFile: quiet } as StageContext;
    async function* broken(): AsyncGenerator<DocRecord> {
      yield { id: "a", source: "s", text: "x", meta: {}, origin: { file: "f", line: 1 }, seq: 0 };
      throw new Error("disk gone");
    }
    const s = await stage.create({ min_docs: 2, max_lines: 1000 }, { baseDir: "." } as never);
    await expect(async () => {
      for await (const _ of s(broken(), ctx));
    }).rejects.toThrow("disk gone");
    expect(readdirSync(work)).toEqual([]);
  });
});

describe("line budget", () => {
  it("never counts a line in more records than it occurs in, whatever the budget", () => {
    fc.assert(
      fc.property(
        fc.array(fc.array(fc.integer({ min: 0, max: 3000 }), { maxLength: 8 }), { maxLength: 400 }),
        fc.integer({ min: 1000, max: 1500 }),
        (docs, budget) => {
          const counts = new LineCounts(budget);
          const truth = new Map<number, number>();
          for (const d of docs) {
            counts.addRecord(d.map((x) => `line ${x}`).join("\n"));
            for (const x of new Set(d)) truth.set(x, (truth.get(x) ?? 0) + 1);
          }
          for (const [x, n] of truth) expect(counts.count(`line ${x}`)).toBeLessThanOrEqual(n);
          expect(counts.size).toBeLessThanOrEqual(budget);
        },
      ),
      { numRuns: 30 },
    );
  });

  it("keeps counting frequent lines after the budget fills, by forgetting lines seen once", () => {
    const counts = new LineCounts(1000);
    for (let i = 0; i < 5000; i++) counts.addRecord(`${FOOTER}\nunique remark ${i}`);
    expect(counts.prunes).toBeGreaterThan(0);
    expect(counts.closed).toBe(false);
    expect(counts.count(FOOTER)).toBe(5000);
  });

  it("needs min_docs of at least 2", () => {
    const issues: Issue[] = [];
    stripRepeatedLinesOptions.check({ min_docs: 1 }, ["strip_repeated_lines"], issues);
    stripRepeatedLinesOptions.check({}, ["strip_repeated_lines"], issues);
    expect(issues.map((i) => i.message)).toEqual(["expected an integer ≥ 2, got number 1", 'missing required key "min_docs" (an integer ≥ 2)']);
    const ok: Issue[] = [];
    expect(stripRepeatedLinesOptions.check({ min_docs: 5 }, [], ok)).toEqual({ min_docs: 5, min_chars: 0, max_lines: 2_000_000 });
  });
});
