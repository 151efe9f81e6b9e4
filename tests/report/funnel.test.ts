// The records funnel: drop reasons in pipeline order, counts that add up, reasons mapped to the stage that gives them.
import { describe, expect, it } from "vitest";
import { funnelOf, reasonLabel, stageOfReason } from "../../src/report/funnel.js";
import { defaultStages, manifestFixture } from "./fixture.js";

describe("funnelOf", () => {
  it("orders the reasons by the stage that gives them, reading first and unknown reasons last", () => {
    const f = funnelOf(manifestFixture());
    // filter comes before the minhash dedup, which this pipeline runs before the exact one.
    expect(f.steps.map((s) => s.reason)).toEqual(["quarantined", "filter:min_words", "near-duplicate", "duplicate", "attachment-only"]);
    expect(f.steps.map((s) => s.stage)).toEqual(["read", "filter", "dedup (minhash)", "dedup (exact)", "other"]);
  });

  it("carries the count left from step to step, ending at the records kept", () => {
    const m = manifestFixture();
    const f = funnelOf(m);
    expect(f.steps[0].before).toBe(m.records.read);
    for (let i = 1; i < f.steps.length; i++) expect(f.steps[i].before).toBe(f.steps[i - 1].after);
    for (const s of f.steps) expect(s.before - s.after).toBe(s.count);
    expect(f.steps[f.steps.length - 1].after).toBe(m.records.kept);
    expect(f.splits).toEqual([{ name: "train", records: 40 }, { name: "val", records: 5 }]);
  });

  it("lists the stages that dropped nothing", () => {
    expect(funnelOf(manifestFixture()).idle).toEqual(["normalize", "split", "tokenize", "pack"]);
  });

  it("maps reasons to stages by name, the dedup method, or the prefix before a colon", () => {
    const stages = defaultStages();
    expect(stageOfReason("subsampled", stages)).toBe(-1);
    expect(stageOfReason("filter:top_ngrams", stages)).toBe(1);
    expect(stageOfReason("near-duplicate", stages)).toBe(2);
    expect(stageOfReason("duplicate", stages)).toBe(3);
    expect(stageOfReason("no-tokens", stages)).toBe(5);
    // A reason no stage of this pipeline gives.
    expect(stageOfReason("language:other", stages)).toBe(stages.length);
    expect(stageOfReason("duplicate", stages.filter((s) => s.options.method !== "exact"))).toBe(stages.length - 1);
  });

  it("words the ledger's reasons, keeping unknown ones as written", () => {
    expect(reasonLabel("duplicate")).toBe("exact duplicate");
    expect(reasonLabel("filter:mean_word_length")).toBe("filter rule mean_word_length");
    expect(reasonLabel("attachment-only")).toBe("attachment-only");
  });
});
