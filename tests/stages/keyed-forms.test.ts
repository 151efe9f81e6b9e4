// Keyed forms give the result of one stream however the input is cut into units and the keys into
// partitions: exact dedup, MinHash (confirm signature or exact, drop or mark) and
// strip_repeated_lines, on random depot notes full of copies, near-copies and boilerplate lines;
// and the same property fails for deliberately broken forms, so it can fail.
import { beforeAll, describe, expect, it } from "vitest";
import fc from "fast-check";
import { exactForm } from "../../src/dedup/exact.js";
import { minhashForm } from "../../src/dedup/minhash.js";
import { dedupOptions, type MinhashOptions } from "../../src/dedup/options.js";
import { stripRepeatedLinesForm, stripRepeatedLinesOptions } from "../../src/stages/strip-repeated-lines.js";
import type { KeyedFiles, KeyedForm, StepOutput } from "../../src/stages/keyed.js";
import { loadHasher } from "../../src/lib/hash.js";
import type { DocRecord } from "../../src/types.js";
import { optionsOf, runCut, runWhole, unitBounds, type KeyedRun } from "./keyed-harness.js";

beforeAll(loadHasher);

// A small vocabulary and a few boilerplate lines, so that equal texts, shared shingles and
// repeated lines are frequent rather than lucky.
const WORDS = ["car", "door", "brake", "bogie", "sander", "horn", "wiper", "pantograph", "coupler", "wheel", "axle", "heater", "cab", "lamp", "points", "shed", "checked", "replaced", "loose", "worn", "cleaned", "stuck", "front", "rear", "night", "fitter"];
const BOILERPLATE = [
  "Kestrel Street tram depot, internal notes",
  "Report every fault to the night foreman before the shift ends.",
  "Checked against the fleet maintenance schedule, sheet 4.",
  "Do not move a car with the sander hatch open.",
  "Signed off by the duty fitter.",
].map((l) => l.split(" "));

/** One record of the input: new lines, a copy of an earlier record, or an earlier record with one or two words changed. */
interface Recipe {
  kind: "fresh" | "copy" | "near";
  lines: string[][];
  of: number;
  edits: { at: number; word: string }[];
  source: "tickets" | "manuals";
}

const wordLine = fc.array(fc.constantFrom(...WORDS), { minLength: 0, maxLength: 9 }); // 0 words: a blank line
const line = fc.oneof({ weight: 3, arbitrary: wordLine }, { weight: 2, arbitrary: fc.constantFrom(...BOILERPLATE) });
const recipe: fc.Arbitrary<Recipe> = fc.record({
  kind: fc.constantFrom<Recipe["kind"]>("fresh", "fresh", "copy", "near", "near"),
  lines: fc.array(line, { minLength: 1, maxLength: 5 }),
  of: fc.nat(),
  edits: fc.array(fc.record({ at: fc.nat(), word: fc.constantFrom(...WORDS) }), { minLength: 1, maxLength: 2 }),
  source: fc.constantFrom<Recipe["source"]>("tickets", "manuals"),
});
// "medium" sizes: most inputs have a dozen records or more, enough to spread over several units.
const recipes = fc.array(recipe, { maxLength: 40, size: "medium" });
/** Up to 5 cut points as percentages of the input, so 1–6 units, some of them empty when points coincide. */
const cutPoints = fc.array(fc.nat({ max: 100 }), { maxLength: 5 });
const partitions = fc.integer({ min: 1, max: 5 });
const seed = fc.nat({ max: 1_000_000 });

/** The records of a list of recipes; `seq` numbers them across the whole input, as rows of one file cut into parts. */
function buildRecords(list: Recipe[]): DocRecord[] {
  const texts: string[][][] = [];
  const records: DocRecord[] = [];
  for (const [i, r] of list.entries()) {
    let lines = r.lines;
    if (r.kind !== "fresh" && i > 0) {
      lines = texts[r.of % i].map((l) => [...l]);
      if (r.kind === "near") {
        const places = lines.flatMap((l, y) => l.map((_, x) => [y, x] as const));
        for (const e of r.edits) {
          if (places.length === 0) break; // blank lines only: nothing to change
          const [y, x] = places[e.at % places.length];
          lines[y][x] = e.word;
        }
      }
    }
    texts.push(lines);
    records.push({ id: `${r.source === "tickets" ? "T" : "M"}-${i + 1}`, source: r.source, text: lines.map((l) => l.join(" ")).join("\n"), meta: {}, origin: { file: "notes.jsonl", line: i + 1 }, seq: i });
  }
  return records;
}

const cutsOf = (n: number, points: number[]) => points.map((c) => Math.round((c * n) / 100));

/** The property: cut into units and partitions, the form gives what one stream through it gives. */
async function sameAsWhole<O>(form: KeyedForm<O>, o: O, records: DocRecord[], cuts: number[], parts: number, s: number, ignore: string[] = []): Promise<{ whole: KeyedRun; cut: KeyedRun }> {
  const whole = await runWhole(form, o, records, s);
  const cut = await runCut(form, o, records, cuts, parts, s);
  expect(cut.kept).toEqual(whole.kept);
  expect(cut.drops).toEqual(whole.drops);
  expect(cut.files).toEqual(whole.files);
  const without = (c: Record<string, number>) => Object.fromEntries(Object.entries(c).filter(([k]) => !ignore.includes(k)));
  expect(without(cut.counts)).toEqual(without(whole.counts));
  return { whole, cut };
}

/** How many runs had more than one non-empty unit and something dropped or marked: the cases where cutting could go wrong. */
function tally() {
  let interesting = 0;
  return {
    note(records: DocRecord[], cuts: number[], r: KeyedRun, changed: number) {
      const b = unitBounds(records.length, cuts);
      const nonEmpty = b.slice(1).filter((end, k) => end > b[k]).length;
      if (nonEmpty > 1 && (r.drops.length > 0 || changed > 0)) interesting++;
    },
    get interesting() {
      return interesting;
    },
  };
}

const RUNS = 40;

describe("keyed forms: cut into units and partitions, the result of one stream", () => {
  it("exact dedup", async () => {
    const t = tally();
    await fc.assert(
      fc.asyncProperty(recipes, cutPoints, partitions, seed, async (list, points, parts, s) => {
        const records = buildRecords(list);
        const cuts = cutsOf(records.length, points);
        const { whole } = await sameAsWhole(exactForm, {}, records, cuts, parts, s);
        t.note(records, cuts, whole, 0);
      }),
      { numRuns: RUNS },
    );
    // The generator must produce duplicates across units, or the property would hold vacuously.
    expect(t.interesting).toBeGreaterThan(RUNS / 4);
  });

  // Word bigrams and a lowish threshold: one changed word in a ten-word line still leaves the
  // texts near-duplicates, so clusters form, and some pairs sit near the threshold.
  const minhash = (extra: Partial<MinhashOptions>) =>
    fc.record({ threshold: fc.constantFrom(0.5, 0.6, 0.75), keep: fc.constantFrom("first", "longest", "source-priority") }).map(({ threshold, keep }) =>
      optionsOf(dedupOptions, { method: "minhash", shingle: "word", ngram: 2, permutations: 64, workers: 1, memory_mb: 1, threshold, keep, ...(keep === "source-priority" ? { sources: ["manuals", "tickets"] } : {}), ...extra }),
    );

  for (const [label, extra] of [
    ["MinHash, confirm signature, action drop", { confirm: "signature", action: "drop" }],
    ["MinHash, confirm signature, action mark", { confirm: "signature", action: "mark" }],
    ["MinHash, confirm exact", { confirm: "exact", action: "drop" }],
  ] as const) {
    it(label, async () => {
      const t = tally();
      let nearRuns = 0;
      await fc.assert(
        fc.asyncProperty(minhash(extra), recipes, cutPoints, partitions, seed, async (o, list, points, parts, s) => {
          const records = buildRecords(list);
          const cuts = cutsOf(records.length, points);
          const { whole } = await sameAsWhole(minhashForm as KeyedForm<unknown>, o, records, cuts, parts, s);
          t.note(records, cuts, whole, whole.kept.filter((r) => r.cluster !== undefined).length);
          const clusters = (whole.files["clusters.jsonl"] ?? "").split("\n").filter(Boolean).map((l) => JSON.parse(l) as { members: { similarity: number }[] });
          expect(clusters.length > 0).toBe(whole.drops.length > 0 || whole.kept.some((r) => r.cluster !== undefined));
          if (clusters.some((c) => c.members.some((m) => m.similarity < 1))) nearRuns++;
        }),
        { numRuns: RUNS },
      );
      expect(t.interesting).toBeGreaterThan(RUNS / 4);
      // Not only exact copies: clusters with members that differ from the kept text occur too.
      expect(nearRuns).toBeGreaterThan(RUNS / 8);
    });
  }

  it("strip_repeated_lines (a budget no unit can fill)", async () => {
    const t = tally();
    await fc.assert(
      fc.asyncProperty(fc.integer({ min: 2, max: 4 }), fc.constantFrom(0, 20), recipes, cutPoints, partitions, seed, async (min_docs, min_chars, list, points, parts, s) => {
        // At most 40 records of at most 5 lines: fewer than 1000 distinct lines in all, so no unit
        // (nor the one stream) ever reaches max_lines. Under a full budget each unit forgets the
        // lines it has seen once, and which lines that is depends on where the units are cut: the
        // counts then legitimately differ (they can only fall short), which is documented, so
        // equality is promised only while nothing is pruned.
        const o = optionsOf(stripRepeatedLinesOptions, { min_docs, min_chars, max_lines: 1000 });
        const records = buildRecords(list);
        const cuts = cutsOf(records.length, points);
        const { whole, cut } = await sameAsWhole(stripRepeatedLinesForm, o, records, cuts, parts, s, ["strip_repeated_lines:budget_prunes"]);
        // Nothing was pruned in either run: the ignored counter is absent, and no budget warning.
        for (const r of [whole, cut]) {
          expect(r.counts["strip_repeated_lines:budget_prunes"]).toBeUndefined();
          expect(r.warnings).toEqual([]);
        }
        t.note(records, cuts, whole, whole.counts["strip_repeated_lines:records_changed"] ?? 0);
      }),
      { numRuns: RUNS },
    );
    expect(t.interesting).toBeGreaterThan(RUNS / 4);
  });
});

// ---- Negative controls: broken forms the same property must catch. ----

/**
 * A form whose partition step forgets everything at every new unit: it runs the real step once per
 * unit, each time over a view of the files holding that unit alone. Correct for one unit, wrong
 * as soon as a key recurs in a later unit.
 */
function forgetsAtEveryUnit<O>(form: KeyedForm<O>): KeyedForm<O> {
  return {
    ...form,
    async partition(o, p, files, out, ctx) {
      for (let u = 0; u < files.units; u++) {
        const one: KeyedFiles = {
          units: 1,
          partitions: files.partitions,
          read: (name, _u, q) => files.read(name, u, q),
          lines: (name, _u, q) => files.lines(name, u, q),
          path: (name, _u, q) => files.path(name, u, q),
          size: (name, _u, q) => files.size(name, u, q),
          shared: (name, q) => files.shared(name, q),
        };
        const mapped: StepOutput = { ...out, decide: (_u, i, d) => out.decide(u, i, d) };
        await form.partition(o, p, one, mapped, ctx);
      }
    },
  };
}

/** A MinHash form whose resolve step joins only partition 0's confirmed pairs. */
function resolvesPartitionZeroOnly<O>(form: KeyedForm<O>): KeyedForm<O> {
  return {
    ...form,
    async resolve(o, files, out, ctx) {
      const view: KeyedFiles = Object.create(files, { shared: { value: (name: string, p?: number) => (p ? Promise.resolve(Buffer.alloc(0)) : files.shared(name, p)) } });
      await form.resolve!(o, view, out, ctx);
    },
  };
}

describe("the property can fail: broken forms are caught", () => {
  // Fixed seeds keep these reproducible; the failures are common, not lucky (most seeds find one
  // in a few runs). No shrinking (endOnFailure): a failure is all these tests need, and shrinking
  // MinHash inputs costs seconds.
  it("exact dedup that forgets the texts of earlier units", async () => {
    const broken = forgetsAtEveryUnit(exactForm);
    const r = await fc.check(
      fc.asyncProperty(recipes, cutPoints, partitions, seed, async (list, points, parts, s) => {
        const records = buildRecords(list);
        await sameAsWhole(broken, {}, records, cutsOf(records.length, points), parts, s);
      }),
      { numRuns: RUNS, seed: 20260101, endOnFailure: true },
    );
    expect(r.failed).toBe(true);
    // It failed on the comparison, not by crashing.
    expect(String((r.errorInstance as Error)?.message)).toMatch(/expected/);
    // The counterexample has a duplicate in a later unit than its first copy: more than one unit.
    const [list, points] = r.counterexample!;
    const records = buildRecords(list);
    expect(records.length).toBeGreaterThanOrEqual(2);
    expect(unitBounds(records.length, cutsOf(records.length, points)).length).toBeGreaterThan(2);
  });

  it("MinHash whose resolve step ignores every partition but the first", async () => {
    const broken = resolvesPartitionZeroOnly(minhashForm as KeyedForm<unknown>);
    const o = optionsOf(dedupOptions, { method: "minhash", shingle: "word", ngram: 2, permutations: 64, workers: 1, memory_mb: 1, threshold: 0.6 });
    const r = await fc.check(
      fc.asyncProperty(recipes, cutPoints, partitions, seed, async (list, points, parts, s) => {
        const records = buildRecords(list);
        await sameAsWhole(broken, o, records, cutsOf(records.length, points), parts, s);
      }),
      { numRuns: RUNS, seed: 20260102, endOnFailure: true },
    );
    expect(r.failed).toBe(true);
    expect(String((r.errorInstance as Error)?.message)).toMatch(/expected/);
    expect(r.counterexample![2]).toBeGreaterThan(1); // needs more than one partition to go wrong
  });
});
