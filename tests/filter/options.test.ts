// The filter's options: the gopher preset, per-rule switches and overrides, and messages for mistakes.
import { describe, expect, it } from "vitest";
import { filterOptions } from "../../src/filter/options.js";
import { parsePipeline } from "../../src/pipeline/load.js";
import { SiftpackError } from "../../src/errors.js";
import type { Issue } from "../../src/pipeline/schema.js";

function resolve(value: unknown) {
  const issues: Issue[] = [];
  const o = filterOptions.check(value, ["filter"], issues);
  return { o, messages: issues.map((i) => `${i.path.join(".")}: ${i.message}`) };
}

describe("filter options", () => {
  it("keeps the length bounds alone and every rule off by default", () => {
    const { o, messages } = resolve({ min_words: 5 });
    expect(messages).toEqual([]);
    expect(o).toMatchObject({ rules: "none", min_words: 5, min_chars: 1, mean_word_length: false, stop_words: false, duplicate_ngrams: false });
    expect(o.max_words).toBeUndefined();
  });

  it("rules: gopher switches every rule on with the paper's thresholds, 50 to 100,000 words", () => {
    const { o, messages } = resolve({ rules: "gopher" });
    expect(messages).toEqual([]);
    expect(o).toEqual({
      rules: "gopher",
      min_words: 50,
      max_words: 100000,
      min_chars: 1,
      mean_word_length: { min: 3, max: 10 },
      alpha_words: { min: 0.8 },
      symbol_ratio: { max: 0.1 },
      stop_words: { min: 2, language: "auto" },
      bullet_lines: { max: 0.9 },
      ellipsis_lines: { max: 0.3 },
      duplicate_lines: { max_lines: 0.3, max_chars: 0.2 },
      duplicate_paragraphs: { max_paragraphs: 0.3, max_chars: 0.2 },
      top_ngrams: { "2": 0.2, "3": 0.18, "4": 0.16 },
      duplicate_ngrams: { "5": 0.15, "6": 0.14, "7": 0.13, "8": 0.12, "9": 0.11, "10": 0.1 },
    });
  });

  it("lets a rule be switched off, or given its own thresholds over the defaults", () => {
    const { o } = resolve({ rules: "gopher", min_words: 5, stop_words: false, top_ngrams: { 2: 0.3 }, mean_word_length: { max: 12 } });
    expect(o.min_words).toBe(5);
    expect(o.stop_words).toBe(false);
    expect(o.top_ngrams).toEqual({ "2": 0.3, "3": 0.18, "4": 0.16 });
    expect(o.mean_word_length).toEqual({ min: 3, max: 12 });
  });

  it("switches single rules on without the preset", () => {
    const { o } = resolve({ alpha_words: true, symbol_ratio: { max: 0.2 } });
    expect(o).toMatchObject({ min_words: 0, alpha_words: { min: 0.8 }, symbol_ratio: { max: 0.2 }, bullet_lines: false });
  });

  it("is stable: the resolved options check to themselves", () => {
    const { o } = resolve({ rules: "gopher", min_words: 5, stop_words: { min: 1 } });
    const again = resolve(o);
    expect(again.messages).toEqual([]);
    expect(again.o).toEqual(o);
  });

  it("names every mistake with its key", () => {
    const { messages } = resolve({
      rules: "gopeher",
      mean_word_lenght: true,
      alpha_words: "yes",
      top_ngrams: { two: 0.2, 3: 2 },
      stop_words: { min: -1 },
      max_chars: 0,
    });
    expect(messages).toEqual([
      'filter.mean_word_lenght: unknown key "mean_word_lenght" (did you mean "mean_word_length"?); allowed: rules, min_words, max_words, min_chars, max_chars, mean_word_length, alpha_words, symbol_ratio, stop_words, bullet_lines, ellipsis_lines, duplicate_lines, duplicate_paragraphs, top_ngrams, duplicate_ngrams',
      'filter.rules: expected one of none | gopher, got "gopeher" (did you mean "gopher"?)',
      'filter.alpha_words: expected true, false or a mapping of thresholds (min), got "yes"',
      "filter.stop_words.min: expected an integer ≥ 0, got number -1",
      'filter.top_ngrams.3: expected a share from 0 to 1, got 2',
      'filter.top_ngrams.two: "two" is not an n-gram size (an integer from 1 to 50)',
    ]);
  });

  it("checks bounds against each other once the values are valid", () => {
    expect(resolve({ rules: "gopher", max_words: 40 }).messages).toEqual(["filter.max_words: max_words (40) is below min_words (50)"]);
    expect(resolve({ mean_word_length: { min: 5, max: 4 } }).messages).toEqual(["filter.mean_word_length.max: max (4) is below min (5)"]);
  });

  it("is accepted in a pipeline file, and errors point at the line", () => {
    const pipeline = (filter: string) =>
      `siftpack: 1\nsources: [{ name: t, files: "*.jsonl", format: jsonl }]\nstages:\n  - filter: ${filter}\n  - tokenize: {}\n  - pack: {}\noutput: { dir: out }\n`;
    expect(parsePipeline(pipeline("{ rules: gopher, min_words: 5 }"), "p.yaml").stages[0].options.min_words).toBe(5);
    try {
      parsePipeline(pipeline("{ rules: gopher, bullet_lines: { max: 1.5 } }"), "p.yaml");
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(SiftpackError);
      expect((e as SiftpackError).details).toEqual(["p.yaml:4:51: stages[0].filter.bullet_lines.max: expected a number from 0 to 1, got number 1.5"]);
    }
  });
});
