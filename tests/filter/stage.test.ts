// The filter stage: ledger reasons filter:<rule> with the measured values, length bounds under both presets.
import { describe, expect, it } from "vitest";
import filterStage, { filterReason } from "../../src/stages/filter.js";
import { filterOptions } from "../../src/filter/options.js";
import type { DocRecord, StageContext } from "../../src/types.js";
import type { Issue } from "../../src/pipeline/schema.js";
import { distinctWords } from "./docs.js";

const quiet = () => {};
function options(value: unknown) {
  const issues: Issue[] = [];
  const o = filterOptions.check(value, [], issues);
  expect(issues).toEqual([]);
  return o;
}

async function run(value: unknown, texts: string[]) {
  const drops: { id: string; reason: string; detail?: Record<string, unknown> }[] = [];
  const ctx: StageContext = {
    seed: 0,
    drop: (r, reason, detail) => drops.push({ id: r.id, reason, detail }),
    count: quiet,
    log: { info: quiet, warn: quiet, error: quiet, debug: quiet },
    workDir: "/nonexistent",
    addOutputFile: quiet,
  };
  async function* input(): AsyncGenerator<DocRecord> {
    for (const [i, text] of texts.entries()) yield { id: `T-${i}`, source: "tickets", text, meta: {}, origin: { file: "t.jsonl", line: i + 1 }, seq: i };
  }
  const stage = await filterStage.create(options(value), { baseDir: "." } as never);
  const kept: string[] = [];
  for await (const r of stage(input(), ctx)) kept.push(r.id);
  return { kept, drops };
}

/** A prose-like document of n words that passes every Gopher rule: stop words and no repeated phrases. */
function prose(n: number): string {
  const w = distinctWords(n, "t");
  w[0] = "the";
  w[1] = "and";
  return w.join(" ");
}

describe("filter stage", () => {
  it("under rules: gopher, keeps 50 and 100,000 words and drops 49 and 100,001", async () => {
    const big = prose(100000);
    const { kept, drops } = await run({ rules: "gopher" }, [prose(49), prose(50), big, `${big} tramway`]);
    expect(kept).toEqual(["T-1", "T-2"]);
    expect(drops).toEqual([
      { id: "T-0", reason: "filter:min_words", detail: { words: 49, min: 50 } },
      { id: "T-3", reason: "filter:max_words", detail: { words: 100001, max: 100000 } },
    ]);
  });

  it("names the first rule a document fails, with what was measured", async () => {
    const { drops } = await run({ rules: "gopher", min_words: 5 }, [
      "the car and the 4711 4712 4713 4714 4715 4716", // alpha_words before stop words
      "Car 4711 shunted onto road seven overnight for wheel turning", // no stop words
      "the #depot and #car on #road with #tram",
    ]);
    expect(drops.map((d) => d.reason)).toEqual(["filter:alpha_words", "filter:stop_words", "filter:symbol_ratio"]);
    expect(drops[1].detail).toEqual({ found: 0, min: 2, language: "en" });
  });

  it("keeps the plain length bounds working, under their option names", () => {
    const o = { min_words: 3, max_words: 5, min_chars: 1, max_chars: 30 };
    expect(filterReason("", o)).toBe("filter:min_chars");
    expect(filterReason("asdf asdf", o)).toBe("filter:min_words");
    expect(filterReason("one two three four five six", o)).toBe("filter:max_words");
    expect(filterReason("x".repeat(31), { ...o, min_words: 0 })).toBe("filter:max_chars");
    expect(filterReason("door sensor replaced", o)).toBeUndefined();
  });
});
