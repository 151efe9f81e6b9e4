// decontaminate: planted protected passages are found in long training documents; 12 shared words are not;
// n-grams shared by many training records (format boilerplate) can be ignored while a planted passage is
// still caught; the result is the same for any cut into units and partitions.
import { beforeAll, describe, expect, it } from "vitest";
import fc from "fast-check";
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import decontaminate, { decontaminateForm, decontaminateOptions } from "../../src/stages/decontaminate.js";
import { loadHasher } from "../../src/lib/hash.js";
import type { DocRecord, StageContext } from "../../src/types.js";
import { optionsOf, runCut, runWhole } from "./keyed-harness.js";

beforeAll(loadHasher);

const PASSAGE_A =
  "When a wheel locks under braking and slides along the rail, the small patch of steel in contact heats and cools so quickly that it hardens into a flat spot on the tread.";
const PASSAGE_B = "Planners know that dwell times at busy stops stretch in wet weather, and that one late car soon gathers a queue of others behind it.";
const wordsA = PASSAGE_A.replace(/[,.]/g, "").split(" ");
const wordsB = PASSAGE_B.replace(/[,.]/g, "").split(" ");

/** A long document of filler words (none of them in the passages) with `planted` inserted in the middle. */
function longDoc(planted: string): string {
  const filler = ["ticket", "closed", "depot", "shunter", "logged", "inspection", "overhead", "isolation", "yard", "crew"];
  const words = Array.from({ length: 2000 }, (_, i) => filler[(i * 7 + (i >> 3)) % filler.length]);
  return [...words.slice(0, 1000), planted, ...words.slice(1000)].join(" ");
}

let base: string;
beforeAll(() => {
  base = mkdtempSync(join(tmpdir(), "siftpack-decon-"));
  mkdirSync(join(base, "protected"));
  // Two passages separated by a blank line (with trailing spaces, still blank), and a short third one.
  writeFileSync(join(base, "protected", "eval.txt"), `${PASSAGE_A}\n   \n${PASSAGE_B}\n\nToo short to match.\n`);
});

interface Run {
  out: DocRecord[];
  drops: { id: string; reason: string; detail: any }[];
  counts: Record<string, number>;
  files: string[];
  warnings: any[];
  workDir: string;
}

async function runStage(records: DocRecord[], options: Record<string, unknown>): Promise<Run> {
  const issues: any[] = [];
  const o = decontaminateOptions.check(options, [], issues);
  expect(issues).toEqual([]);
  const workDir = mkdtempSync(join(tmpdir(), "siftpack-decon-work-"));
  const run: Run = { out: [], drops: [], counts: {}, files: [], warnings: [], workDir };
  const ctx: StageContext = {
    seed: 0,
    drop: (r, reason, detail) => run.drops.push({ id: r.id, reason, detail }),
      log: { info() {}, debug() {}, error() {}, warn: (obj: any, msg?: string) => run.warnings.push(msg === undefined ? obj : { ...obj, msg }) },
    workDir,
    addOutputFile: (f) => run.files.push(f),
    count: (name, n = 1) => (run.counts[name] = (run.counts[name] ?? 0) + n),
  };
  async function* from() {
    // Rows of one file: decisions name a record by its row.
    yield* records.map((r, seq) => ({ ...r, seq }));
  }
  const stage = await decontaminate.create(o, { baseDir: base });
  for await (const r of stage(from(), ctx)) run.out.push(r);
  return run;
}

const rec = (id: string, text: string, split?: string): DocRecord => ({ id, source: "tickets", text, meta: {}, origin: { file: "t.jsonl", line: 1 }, seq: 0, ...(split ? { split } : {}) });

describe("decontaminate", () => {
  it("drops a long training document holding 13 words of a protected passage, whatever their case and punctuation", async () => {
    const planted = "WHEN a Wheel locks — under braking, and slides along the rail; the SMALL";
    const run = await runStage([rec("long", longDoc(planted), "train"), rec("clean", longDoc(""), "train")], { against: "protected/*.txt" });
    expect(run.out.map((r) => r.id)).toEqual(["clean"]);
    expect(run.drops).toEqual([{ id: "long", reason: "decontaminated", detail: { ngram: wordsA.slice(0, 13).join(" ").toLowerCase(), file: "protected/eval.txt" } }]);
  });

  it("keeps a document sharing only 12 consecutive words, or 13 that run across two passages", async () => {
    const twelve = wordsA.slice(5, 17).join(" ");
    const across = [...wordsA.slice(-6), ...wordsB.slice(0, 7)].join(" ");
    const run = await runStage([rec("twelve", longDoc(twelve), "train"), rec("across", longDoc(across), "train")], { against: ["protected/eval.txt"] });
    expect(run.drops).toEqual([]);
    expect(run.out.map((r) => r.id)).toEqual(["twelve", "across"]);
    // The same 12 words and the protected 13th are found: the boundary is exactly at n = 13.
    const thirteen = wordsA.slice(5, 18).join(" ");
    expect((await runStage([rec("thirteen", longDoc(thirteen))], { against: ["protected/eval.txt"] })).drops).toHaveLength(1);
  });

  it("checks training records only (split train or unset); held-out records pass untouched", async () => {
    const text = longDoc(PASSAGE_B);
    const run = await runStage([rec("v", text, "val"), rec("t", text, "test"), rec("u", text), rec("tr", text, "train")], { against: "protected/eval.txt" });
    expect(run.out.map((r) => r.id)).toEqual(["v", "t"]);
    expect(run.drops.map((d) => d.id)).toEqual(["u", "tr"]);
    expect(run.counts).toEqual({ "decontaminate:checked": 2 });
  });

  it("with action mark keeps the record, tags it, counts it and lists it in decontaminate.json", async () => {
    const run = await runStage([rec("m", longDoc(PASSAGE_A), "train"), rec("ok", "nothing to see here", "train")], { against: "protected/eval.txt", action: "mark" });
    expect(run.drops).toEqual([]);
    expect(run.out[0].meta.contaminated).toEqual({ ngram: wordsA.slice(0, 13).join(" ").toLowerCase(), file: "protected/eval.txt" });
    expect(run.out[1].meta.contaminated).toBeUndefined();
    expect(run.counts["decontaminate:marked"]).toBe(1);
    expect(run.files).toEqual(["decontaminate.json"]);
    const report = JSON.parse(readFileSync(join(run.workDir, "decontaminate.json"), "utf8"));
    expect(report).toMatchObject({ ngram: 13, action: "mark", checked: 2, matches: [{ source: "tickets", id: "m", file: "protected/eval.txt" }] });
    expect(report.files).toEqual([expect.objectContaining({ path: "protected/eval.txt", passages: 3, short_passages: 1, ngrams: wordsA.length - 12 + wordsB.length - 12 })]);
    expect(report).toMatchObject({ matched: 1, removed: 1, share: 0.5, warn_share: 0.05 });
    // The short third passage cannot be matched, and the log says so; half of train marked is above warn_share.
    expect(run.warnings).toEqual([
      expect.objectContaining({ file: "protected/eval.txt", short_passages: 1 }),
      expect.objectContaining({ share: 0.5, msg: expect.stringContaining("1 of 2 checked training records marked (50.0 %)") }),
    ]);
  });

  it("names a pattern that matches nothing", async () => {
    const o = decontaminateOptions.check({ against: ["protected/*.txt", "missing/*.txt"] }, [], []);
    await expect(decontaminate.create(o, { baseDir: base })).rejects.toThrow(`decontaminate: no file matches "missing/*.txt" (relative to ${base})`);
  });

  it("validates its options with the pipeline file's messages", () => {
    const issues: any[] = [];
    decontaminateOptions.check({ against: [], ngram: 0, action: "remove", form: "NFKC" }, ["stages", 4, "decontaminate"], issues);
    expect(issues.map((i) => `${i.path.join(".")}: ${i.message}`)).toMatchInlineSnapshot(`
      [
        "stages.4.decontaminate.against: expected a non-empty list",
        "stages.4.decontaminate.ngram: expected an integer from 1 to 64, got number 0",
        "stages.4.decontaminate.action: expected one of drop | mark, got "remove"",
      ]
    `);
    const filled = decontaminateOptions.check({ against: "p.txt" }, [], []);
    expect(filled).toEqual({ against: ["p.txt"], ngram: 13, action: "drop", form: "NFKC", warn_share: 0.05 });
  });

  it("validates warn_share and boilerplate_docs", () => {
    const issues: any[] = [];
    decontaminateOptions.check({ against: "p.txt", warn_share: 1.5, boilerplate_docs: 0 }, ["stages", 4, "decontaminate"], issues);
    expect(issues.map((i) => `${i.path.join(".")}: ${i.message}`)).toMatchInlineSnapshot(`
      [
        "stages.4.decontaminate.boilerplate_docs: expected an integer ≥ 1, got number 0",
        "stages.4.decontaminate.warn_share: expected a number from 0 to 1, got number 1.5",
      ]
    `);
  });
});

// An invented handbook whose every page ends with the same sentence, which the held-out pages in the
// protected file end with too: a 16-word sentence gives four shared 13-grams on every page.
const BOILERPLATE = "This page belongs to the Kestrel Street depot handbook and is reissued whenever the fleet changes.";
const PASSAGE_C = "Before a car leaves the washing plant the fitter checks that both pantograph isolating handles are back in the running position.";
const boilerWords = BOILERPLATE.replace(/\./g, "").toLowerCase().split(" ");
const wordsC = PASSAGE_C.replace(/\./g, "").toLowerCase().split(" ");

/** Page n of the handbook: a sentence of its own, anything planted, the closing boilerplate. */
const page = (n: number, planted = "") => `Car ${4700 + n} had its ${["sander", "horn", "wiper", "door"][n % 4]} looked at on shift ${n}. ${planted} ${BOILERPLATE}`;

let pages: string;
beforeAll(() => {
  pages = join(base, "protected-pages");
  mkdirSync(pages);
  writeFileSync(join(pages, "held-out-pages.txt"), `Car 9001 is stabled on road four overnight. ${BOILERPLATE}\n\n${PASSAGE_C} ${BOILERPLATE}\n`);
});

/** 40 handbook pages (3 of them holding PASSAGE_C) and 10 tickets without the boilerplate, all in train. */
function handbook(): DocRecord[] {
  const out: DocRecord[] = [];
  for (let n = 1; n <= 40; n++) out.push({ ...rec(`page-${n}`, page(n, [7, 19, 33].includes(n) ? PASSAGE_C : ""), "train"), source: "manuals" });
  for (let n = 1; n <= 10; n++) out.push(rec(`ticket-${n}`, longDoc(""), "train"));
  return out.map((r, seq) => ({ ...r, seq }));
}

describe("decontaminate against format boilerplate", () => {
  it("by default drops every page sharing the boilerplate, and says loudly which n-grams did it", async () => {
    const run = await runStage(handbook(), { against: "protected-pages/*.txt" });
    expect(run.drops).toHaveLength(40);
    const report = JSON.parse(readFileSync(join(run.workDir, "decontaminate.json"), "utf8"));
    expect(report).toMatchObject({ checked: 50, matched: 40, removed: 40, share: 0.8, boilerplate_only: 0, ignored_ngrams: [] });
    // The four 13-grams of the 16-word sentence, each in all 40 pages, come first (ties in word order).
    const boiler13 = [0, 1, 2, 3].map((k) => boilerWords.slice(k, k + 13).join(" ")).sort();
    expect(report.top_ngrams.slice(0, 4)).toEqual(boiler13.map((ngram) => ({ ngram, records: 40 })));
    expect(report.top_ngrams[4]).toEqual({ ngram: expect.any(String), records: 3 });
    const loud = run.warnings.filter((w) => w.msg);
    expect(loud).toHaveLength(1);
    expect(loud[0].msg).toContain("decontaminate: 40 of 50 checked training records dropped (80.0 %)");
    expect(loud[0].msg).toContain(`"${boiler13[0]}" (40)`);
    expect(loud[0].msg).toContain("set boilerplate_docs");
  });

  it("with boilerplate_docs ignores the boilerplate but still drops the pages holding a planted passage", async () => {
    const run = await runStage(handbook(), { against: "protected-pages/*.txt", boilerplate_docs: 5 });
    expect(run.drops.map((d) => d.id)).toEqual(["page-7", "page-19", "page-33"]);
    // The n-gram named is the passage's first, not the boilerplate that comes after it.
    expect(run.drops[0].detail).toEqual({ ngram: wordsC.slice(0, 13).join(" "), file: "protected-pages/held-out-pages.txt" });
    expect(run.counts).toEqual({ "decontaminate:checked": 50, "decontaminate:boilerplate_only": 37 });
    const report = JSON.parse(readFileSync(join(run.workDir, "decontaminate.json"), "utf8"));
    expect(report).toMatchObject({ boilerplate_docs: 5, matched: 40, removed: 3, share: 0.06, boilerplate_only: 37 });
    expect(report.ignored_ngrams).toHaveLength(4);
    expect(report.ignored_ngrams.every((g: { records: number }) => g.records === 40)).toBe(true);
    expect(report.top_ngrams[0]).toMatchObject({ records: 40, ignored: true });
    // 3 of 50 is 6 %, still above the default 5 %: said, with the ignored n-grams left out of the list.
    const loud = run.warnings.filter((w) => w.msg);
    expect(loud).toHaveLength(1);
    expect(loud[0].msg).not.toContain(boilerWords.slice(0, 13).join(" "));
    expect(loud[0].msg).toContain("3 of 50 checked training records dropped (6.0 %); most frequent shared n-grams (records): \"");
    expect(loud[0].msg.match(/" \(3\)/g)).toHaveLength(3);
    // Below the threshold nothing is warned.
    expect((await runStage(handbook(), { against: "protected-pages/*.txt", boilerplate_docs: 5, warn_share: 0.1 })).warnings.filter((w) => w.msg)).toEqual([]);
  });

  it("a passage planted in more records than boilerplate_docs is taken for boilerplate too: the limit is a count", async () => {
    const run = await runStage(handbook(), { against: "protected-pages/*.txt", boilerplate_docs: 2 });
    expect(run.drops).toEqual([]);
    expect(run.counts["decontaminate:boilerplate_only"]).toBe(40);
  });

  it("gives the result of one stream for any cut into units and partitions", async () => {
    const kinds = ["page", "planted", "ticket", "held-out", "planted-A"] as const;
    const pattern = join(pages, "*.txt").replace(/\\/g, "/");
    const againstA = join(base, "protected", "eval.txt");
    await fc.assert(
      fc.asyncProperty(
        fc.array(fc.constantFrom(...kinds), { minLength: 1, maxLength: 30 }),
        fc.array(fc.nat({ max: 100 }), { maxLength: 4 }),
        fc.integer({ min: 1, max: 4 }),
        fc.constantFrom(undefined, 1, 3),
        fc.constantFrom("drop", "mark"),
        async (list, points, partitions, boilerplate_docs, action) => {
          const records = list.map((k, i): DocRecord => {
            const text = k === "ticket" ? `Ticket ${i}: the door of car ${4700 + i} sticks.` : k === "planted-A" ? page(i, PASSAGE_A) : page(i, k === "planted" ? PASSAGE_C : "");
            return { ...rec(`r-${i}`, text, k === "held-out" ? "val" : "train"), seq: i };
          });
          const o = optionsOf(decontaminateOptions, { against: [pattern, againstA], action, ...(boilerplate_docs ? { boilerplate_docs } : {}) });
          const whole = await runWhole(decontaminateForm, o, records, 0);
          const cut = await runCut(decontaminateForm, o, records, points.map((c) => Math.round((c * records.length) / 100)), partitions, 0);
          expect(cut.drops).toEqual(whole.drops);
          expect(cut.kept).toEqual(whole.kept);
          expect(cut.counts).toEqual(whole.counts);
          expect(Object.keys(whole.files)).toEqual(["decontaminate.json"]);
          expect(cut.files).toEqual(whole.files);
          const report = JSON.parse(whole.files["decontaminate.json"]);
          expect(report.checked).toBe(list.filter((k) => k !== "held-out").length);
        },
      ),
      { numRuns: 25 },
    );
  }, 120_000);
});

describe("decontaminate without boilerplate_docs (form unit: no extra pass)", () => {
  /** The stage per unit (three files), each unit's summary gathered, as a build's task plan runs it. */
  async function perUnit(records: DocRecord[], options: Record<string, unknown>, cuts: number[]) {
    const o = optionsOf(decontaminateOptions, options);
    const def = decontaminate;
    const form = typeof def.form === "function" ? def.form(o) : def.form;
    if (form?.kind !== "unit") throw new Error("expected the unit form");
    const workDir = mkdtempSync(join(tmpdir(), "siftpack-decon-units-"));
    const summaries: unknown[] = [];
    const files: string[] = [];
    const drops: string[] = [];
    const counts: Record<string, number> = {};
    const count = (name: string, n = 1) => (counts[name] = (counts[name] ?? 0) + n);
    const log = { info() {}, debug() {}, error() {}, warn() {} };
    const stage = await def.create(o, { baseDir: base, perFile: true });
    const bounds = [0, ...cuts, records.length];
    for (let u = 0; u + 1 < bounds.length; u++) {
      async function* from() {
        yield* records.slice(bounds[u], bounds[u + 1]).map((r) => ({ ...r, meta: {} }));
      }
      const ctx: StageContext = { seed: 0, drop: (r) => drops.push(r.id), log, workDir, addOutputFile: (f) => files.push(f), count, summarize: (v) => summaries.push(v) };
      for await (const _ of stage(from(), ctx));
    }
    expect(files).toEqual([]);
    await form.gather(summaries, o, { seed: 0, baseDir: base, log, count, workDir, addOutputFile: (f) => files.push(f) });
    return { drops, counts, files, report: readFileSync(join(workDir, files[0]), "utf8") };
  }

  it("per unit with gather writes the report of one stream, and the keyed steps agree when nothing is ignored", async () => {
    const records = handbook();
    for (const action of ["drop", "mark"]) {
      const whole = await runStage(records, { against: "protected-pages/*.txt", action });
      const cut = await perUnit(records, { against: "protected-pages/*.txt", action }, [7, 30]);
      expect(cut.files).toEqual(whole.files);
      expect(cut.counts).toEqual(whole.counts);
      expect(cut.report).toBe(readFileSync(join(whole.workDir, whole.files[0]), "utf8"));
      if (action === "drop") expect(cut.drops).toEqual(whole.drops.map((d) => d.id));
      // The keyed steps with a limit no n-gram reaches decide the same records and count the same n-grams.
      const keyed = await runStage(records, { against: "protected-pages/*.txt", action, boilerplate_docs: 1000 });
      const a = JSON.parse(cut.report);
      const b = JSON.parse(readFileSync(join(keyed.workDir, "decontaminate.json"), "utf8"));
      expect({ ...b, boilerplate_docs: undefined }).toEqual({ ...a, boilerplate_docs: undefined });
    }
  });
});
