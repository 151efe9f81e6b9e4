// The mixture's rules in the pipeline file: names that exist, each source covered once, shares that
// sum to 1, no weight beside it, no corpus-wide stage after tokenize; each told at its key.
import { describe, expect, it } from "vitest";
import { parsePipeline } from "../../src/pipeline/load.js";
import { SiftpackError } from "../../src/errors.js";

const pipeline = (mixture: string, opts: { weight?: string; stages?: string } = {}) => `siftpack: 1
sources:
  - { name: tickets, files: t/*.jsonl, format: jsonl${opts.weight ?? ""} }
  - { name: manuals, files: m/*.txt, format: text }
  - { name: notes, files: n/*.csv, format: csv }
mixture: ${mixture}
stages:
${opts.stages ?? "  - tokenize: { encoding: gpt2 }\n"}  - pack: { length: 64 }
output: { dir: out }
`;

function details(text: string): string[] {
  try {
    parsePipeline(text, "p.yaml");
  } catch (e) {
    if (e instanceof SiftpackError) return e.details.length ? e.details : [e.message];
    throw e;
  }
  return [];
}

describe("mixture rules", () => {
  it("accepts shares per source and per group, and fills in max_epochs", () => {
    const c = parsePipeline(pipeline("{ train_tokens: 1000, shares: { tickets: 0.5, docs: 0.5 }, groups: { docs: [manuals, notes] } }"), "p.yaml");
    expect(c.mixture).toEqual({ train_tokens: 1000, shares: { tickets: 0.5, docs: 0.5 }, groups: { docs: ["manuals", "notes"] }, max_epochs: 16 });
  });

  it("leaves a pipeline without a mixture as it was (no key, no default)", () => {
    const c = parsePipeline(pipeline("{ shares: { tickets: 1, manuals: 0, notes: 0 } }").replace(/^mixture:.*\n/m, ""), "p.yaml");
    expect("mixture" in c).toBe(false);
  });

  it("names a misspelt source with a close match, and the sources", () => {
    expect(details(pipeline("{ shares: { tikets: 0.5, manuals: 0.3, notes: 0.2 } }"))).toEqual([
      'p.yaml:6:22: mixture.shares.tikets: mixture.shares names source "tikets", which is not a source (did you mean "tickets"?); the sources are "tickets", "manuals", "notes"',
      'p.yaml:6:20: mixture.shares: mixture.shares gives no share to "tickets"; give every source (or a group holding it) a share, 0 to leave it out of train',
    ]);
  });

  it("refuses shares that do not sum to 1, a weight beside a mixture, and a source given two shares", () => {
    expect(details(pipeline("{ shares: { tickets: 0.5, manuals: 0.3, notes: 0.3 } }"))).toEqual(["p.yaml:6:20: mixture.shares: mixture.shares sum to 1.1, not 1; the shares are fractions of the train tokens"]);
    expect(details(pipeline("{ shares: { tickets: 0.5, manuals: 0.3, notes: 0.2 } }", { weight: ", weight: 2" }))).toEqual([
      'p.yaml:3:55: sources[0].weight: source "tickets" has a weight and the pipeline has a mixture; use one: the mixture\'s shares, or weights without a mixture',
    ]);
    expect(details(pipeline("{ shares: { tickets: 0.5, manuals: 0.3, docs: 0.2 }, groups: { docs: [manuals, notes] } }"))).toEqual([
      'p.yaml:6:36: mixture.shares.manuals: source "manuals" has a share of its own and is in group "docs"; give it one or the other',
    ]);
  });

  it("refuses a group naming a source that is not there, a source in two groups, and a group without a share", () => {
    expect(details(pipeline("{ shares: { tickets: 0.5, a: 0.5 }, groups: { a: [manuals, nots], b: [manuals, notes] } }"))).toEqual([
      'p.yaml:6:69: mixture.groups.a[1]: group "a" names source "nots", which is not a source (did you mean "notes"?); the sources are "tickets", "manuals", "notes"',
      'p.yaml:6:80: mixture.groups.b[0]: source "manuals" is in two groups ("a" and "b"); a source belongs to one group at most',
      'p.yaml:6:76: mixture.groups.b: group "b" has no share in mixture.shares',
    ]);
  });

  it("refuses a stage that decides over the whole corpus after tokenize", () => {
    expect(details(pipeline("{ shares: { tickets: 0.5, manuals: 0.3, notes: 0.2 } }", { stages: "  - tokenize: { encoding: gpt2 }\n  - dedup: { method: exact }\n" }))).toEqual([
      'p.yaml:9:5: stages[1].dedup: with a mixture, "dedup" must come before "tokenize": the shares are planned from the tokens of the records that reach packing',
    ]);
  });
});
