// Analysis steps give the one-pass analyzers' figures however the kept records are cut into packing
// groups and the keys into partitions: token statistics, and the overlap figures between splits
// (n-grams, exact copies, near copies, unigram shift) on random depot tickets and manuals full of
// copies, near copies and shared passages; and the same property fails for broken merges.
import { afterEach, beforeAll, describe, expect, it } from "vitest";
import fc from "fast-check";
import { loadHasher } from "../../src/lib/hash.js";
import { ANALYSES } from "../../src/analysis/registry.js";
import { tokenStatsSteps } from "../../src/analysis/token-stats-steps.js";
import { overlapLimits, overlapSteps } from "../../src/analysis/overlap-steps.js";
import type { OverlapFigures } from "../../src/overlap/figures.js";
import type { KeyedFiles } from "../../src/stages/keyed.js";
import type { DocRecord } from "../../src/types.js";
import { contextOf, groupBounds, runOnePass, runSteps, type PipelineKnobs } from "./steps-harness.js";

beforeAll(loadHasher);

const defaults = { ...overlapLimits };
afterEach(() => void Object.assign(overlapLimits, defaults));

// A small vocabulary (with a capital and a number, which the words of the n-grams fold and keep),
// so that shared n-grams, equal texts and near copies between splits are frequent, not lucky.
const WORDS = ["tram", "depot", "pantograph", "bogie", "brake", "sander", "door", "points", "wheel", "axle", "coupler", "horn", "cab", "shed", "replaced", "checked", "worn", "loose", "Route", "7"];

/** One kept record: new words, a copy of an earlier record's text, a near copy, or new words around a run of an earlier record's words. */
interface Recipe {
  kind: "fresh" | "copy" | "near" | "splice";
  words: string[];
  of: number;
  from: number;
  edits: { at: number; word: string }[];
  sep: string;
  split: string | undefined;
  source: "tickets" | "manuals";
  tokens: number[] | undefined;
}

const VOCAB = 260;
const recipe: fc.Arbitrary<Recipe> = fc.record({
  kind: fc.constantFrom<Recipe["kind"]>("fresh", "fresh", "copy", "near", "near", "splice"),
  words: fc.array(fc.constantFrom(...WORDS), { maxLength: 14 }),
  of: fc.nat(),
  from: fc.nat(),
  edits: fc.array(fc.record({ at: fc.nat(), word: fc.constantFrom(...WORDS) }), { minLength: 1, maxLength: 2 }),
  sep: fc.constantFrom(" ", " ", ", ", "\n"),
  // Records without a split are train; "audit" is a split name the order knows nothing about.
  split: fc.oneof({ weight: 6, arbitrary: fc.constantFrom("train", "train", "val", "test") }, { weight: 1, arbitrary: fc.constantFrom(undefined, "audit") }),
  source: fc.constantFrom<Recipe["source"]>("tickets", "manuals"),
  // Ids past the tokenizer's vocabulary too: the unigram arrays grow for them.
  tokens: fc.option(fc.array(fc.nat(VOCAB + 20), { maxLength: 8 }), { nil: undefined, freq: 8 }),
});
const recipes = fc.array(recipe, { maxLength: 40, size: "medium" });
/** Up to 4 cut points as percentages: 1–5 groups, some empty when points coincide. */
const cutPoints = fc.array(fc.nat({ max: 100 }), { maxLength: 4 });
const partitions = fc.integer({ min: 1, max: 4 });
const knobs: fc.Arbitrary<PipelineKnobs> = fc.record({
  seed: fc.nat({ max: 1_000_000 }),
  ngram: fc.integer({ min: 1, max: 3 }),
  nearDuplicates: fc.constantFrom(true, true, true, false),
  permutations: fc.constantFrom(16, 32, 64),
  threshold: fc.constantFrom(0.5, 0.6, 0.75),
  vocab: fc.constant(VOCAB),
});

function buildRecords(list: Recipe[]): DocRecord[] {
  const words: string[][] = [];
  const texts: string[] = [];
  return list.map((r, i) => {
    let w = r.words;
    let text: string | undefined;
    if (i > 0 && r.kind !== "fresh") {
      const of = r.of % i;
      if (r.kind === "copy") {
        w = words[of];
        text = texts[of];
      } else if (r.kind === "near") {
        w = [...words[of]];
        for (const e of r.edits) if (w.length > 0) w[e.at % w.length] = e.word;
      } else {
        const src = words[of];
        const at = src.length ? r.from % src.length : 0;
        w = [...r.words.slice(0, 3), ...src.slice(at, at + 6), ...r.words.slice(3)];
      }
    }
    text ??= w.join(r.sep);
    words.push(w);
    texts.push(text);
    return { id: `${r.source === "tickets" ? "T" : "M"}-${i + 1}`, source: r.source, split: r.split, text, meta: {}, origin: { file: "depot.jsonl", line: i + 1 }, seq: i, tokens: r.tokens && Uint32Array.from(r.tokens) };
  });
}

const cutsOf = (n: number, points: number[]) => points.map((c) => Math.round((c * n) / 100));
const nonEmptyGroups = (n: number, cuts: number[]) => {
  const b = groupBounds(n, cuts);
  return b.slice(1).filter((end, k) => end > b[k]).length;
};

/** Shrinks every buffer so flushes, spills and chunked reads happen on a few dozen records. */
function tinyLimits(): void {
  Object.assign(overlapLimits, { partFlush: 8, trainFlush: 8, readWords: 5, rowCache: 2, distinctBudget: 5 });
}

/** The property: the steps' figures are the one-pass analyzers', byte for byte as JSON (key order included). */
async function sameAsOnePass(k: PipelineKnobs, records: DocRecord[], cuts: number[], parts: number, order: number[]) {
  const ctx = contextOf(k);
  const want = await runOnePass(ctx, records);
  const stats = await runSteps(tokenStatsSteps, ctx, records, cuts, parts);
  expect(stats.figures).toEqual(want.token_stats);
  expect(JSON.stringify(stats.figures)).toBe(JSON.stringify(want.token_stats));
  const overlap = await runSteps(overlapSteps, ctx, records, cuts, parts, { partitionOrder: order });
  expect(overlap.figures).toEqual(want.overlap);
  expect(JSON.stringify(overlap.figures)).toBe(JSON.stringify(want.overlap));
  return want.overlap as OverlapFigures;
}

/** Partition steps are independent tasks: any order, here a rotation. */
const rotation = (parts: number, by: number) => Array.from({ length: parts }, (_, p) => (p + by) % parts);

const RUNS = 60;

describe("analysis steps: cut into groups and partitions, the one-pass figures", () => {
  it("token statistics and overlap figures, with default and with tiny buffers", async () => {
    const seen = { cut: 0, ngrams: 0, exact: 0, nearTrain: 0, nearHeld: 0, short: 0, threeHeld: 0 };
    await fc.assert(
      fc.asyncProperty(knobs, recipes, cutPoints, partitions, fc.nat(), fc.boolean(), async (k, list, points, parts, rot, tiny) => {
        if (tiny) tinyLimits();
        else Object.assign(overlapLimits, defaults);
        const records = buildRecords(list);
        const cuts = cutsOf(records.length, points);
        const f = await sameAsOnePass(k, records, cuts, parts, rotation(parts, rot));
        if (nonEmptyGroups(records.length, cuts) < 2 || parts < 2) return;
        seen.cut++;
        if (f.pairs.some((p) => p.ngrams_seen > 0)) seen.ngrams++;
        if (f.pairs.some((p) => p.exact_duplicates > 0)) seen.exact++;
        if (f.pairs.some((p) => p.reference === "train" && (p.near_duplicate_pairs ?? 0) > 0)) seen.nearTrain++;
        if (f.pairs.some((p) => p.reference !== "train" && (p.near_duplicate_pairs ?? 0) > 0)) seen.nearHeld++;
        if (f.pairs.some((p) => p.short_documents > 0)) seen.short++;
        if (Object.keys(f.unigram.tokens).filter((s) => s !== "train").length >= 3) seen.threeHeld++;
      }),
      { numRuns: RUNS },
    );
    // The generator must make the cases a cut could get wrong, or the property would hold vacuously.
    // About a third of the runs are cut in two or more groups; RUNS / 3 itself failed once by chance (20 of 60).
    expect(seen.cut).toBeGreaterThan(RUNS / 5);
    for (const key of ["ngrams", "exact", "nearTrain", "nearHeld", "short", "threeHeld"] as const) expect(seen[key], key).toBeGreaterThan(RUNS / 20);
  });

  it("a worked example in three groups and two partitions: n = 3, three documents", async () => {
    const ctx = contextOf({ seed: 7, ngram: 3, nearDuplicates: true, permutations: 128, threshold: 0.8, vocab: VOCAB });
    const rec = (split: string, text: string, tokens: number[], i: number): DocRecord => ({ id: `T-${i}`, source: "tickets", split, text, meta: {}, origin: { file: "t", line: i }, seq: i, tokens: Uint32Array.from(tokens) });
    const records = [rec("test", "The brake pad was worn down", [0, 0, 1], 1), rec("train", "The brake pad was worn down", [0, 0, 1], 2), rec("val", "Brake pad was worn, replaced it.", [1, 2], 3)];
    const f = (await runSteps(overlapSteps, ctx, records, [1, 2], 2)).figures as OverlapFigures;
    expect(f.pairs.map((p) => [p.reference, p.held_out, p.ngrams, p.ngrams_seen, p.exact_duplicates, p.near_duplicate_pairs])).toEqual([
      ["train", "val", 4, 2, 0, 0],
      ["train", "test", 4, 4, 1, 1],
      ["val", "test", 4, 2, 0, 0],
    ]);
    // Four trigrams and one text fingerprint, counted exactly (no Bloom filter here, however large train is).
    expect(f.train_set).toEqual({ kind: "exact", keys: 5 });
    expect(f.unigram.tokens).toEqual({ train: 3, val: 2, test: 3 });
  });

  it("apply as the one-pass analyzers did, and come in manifest key order", () => {
    expect(ANALYSES.map((a) => a.key)).toEqual(["token_stats", "overlap"]);
    const on = contextOf({ seed: 1, ngram: 13, nearDuplicates: true, permutations: 128, threshold: 0.8, vocab: VOCAB });
    expect(ANALYSES.map((a) => a.applies(on))).toEqual([true, true]);
    const off = { ...on, config: { ...on.config, overlap: { ...on.config.overlap, enabled: false } } };
    expect(ANALYSES.map((a) => a.applies(off))).toEqual([true, false]);
    const noHoldout = { ...on, config: { ...on.config, stages: on.config.stages.map((s) => (s.name === "split" ? { ...s, options: { ...s.options, holdout: { val: 0, test: 0 } } } : s)) } };
    expect(overlapSteps.applies(noHoldout)).toBe(false);
  });

  it("give the one-pass figures for no records at all, and for groups that are all empty", async () => {
    const ctx = contextOf({ seed: 1, ngram: 2, nearDuplicates: true, permutations: 32, threshold: 0.6, vocab: VOCAB });
    const want = await runOnePass(ctx, []);
    expect((await runSteps(tokenStatsSteps, ctx, [], [0, 0], 3)).figures).toEqual(want.token_stats);
    expect((await runSteps(overlapSteps, ctx, [], [0, 0], 3)).figures).toEqual(want.overlap);
  });
});

// ---- Negative controls: broken merges the same property must catch. ----

describe("the property can fail: broken merges are caught", () => {
  // Fixed seeds keep these reproducible; no shrinking (endOnFailure): a failure is all they need.
  it("overlap figures that read only partition 0's shared results", async () => {
    const r = await fc.check(
      fc.asyncProperty(knobs, recipes, cutPoints, partitions, async (k, list, points, parts) => {
        const ctx = contextOf(k);
        const records = buildRecords(list);
        const want = await runOnePass(ctx, records);
        const broken = await runSteps(overlapSteps, ctx, records, cutsOf(records.length, points), parts, { view: (d) => Object.create(d, { partitions: { value: 1 } }) as KeyedFiles });
        expect(broken.figures).toEqual(want.overlap);
      }),
      { numRuns: RUNS, seed: 20260201, endOnFailure: true },
    );
    expect(r.failed).toBe(true);
    // It failed on the comparison, not by crashing, and needed more than one partition to go wrong.
    expect(String((r.errorInstance as Error)?.message)).toMatch(/expected/);
    expect(r.counterexample![3]).toBeGreaterThan(1);
  });

  it("token statistics that merge only the first group", async () => {
    const r = await fc.check(
      fc.asyncProperty(knobs, recipes, cutPoints, async (k, list, points) => {
        const ctx = contextOf(k);
        const records = buildRecords(list);
        const want = await runOnePass(ctx, records);
        const broken = await runSteps(tokenStatsSteps, ctx, records, cutsOf(records.length, points), 1, { view: (d) => Object.create(d, { units: { value: 1 } }) as KeyedFiles });
        expect(broken.figures).toEqual(want.token_stats);
      }),
      { numRuns: RUNS, seed: 20260202, endOnFailure: true },
    );
    expect(r.failed).toBe(true);
    expect(String((r.errorInstance as Error)?.message)).toMatch(/expected/);
    const [, list, points] = r.counterexample!;
    expect(nonEmptyGroups(list.length, cutsOf(list.length, points))).toBeGreaterThan(1);
  });
});
