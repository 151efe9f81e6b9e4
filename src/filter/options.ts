// The filter stage's options: length bounds, the rule preset, and one switch per quality rule.
import { field, num, obj, str, type Issue, type Path, type Schema } from "../pipeline/schema.js";
import type { LengthBounds } from "./length.js";
import { GOPHER_WORDS } from "./gopher.js";
import { ruleValue, type Rule } from "./rule.js";
import { alphaWords, meanWordLength, type Range } from "./word-shape.js";
import { symbolRatio } from "./symbols.js";
import { stopWords, type StopWordOptions } from "./stop-words.js";
import { bulletLines, ellipsisLines } from "./line-shape.js";
import { duplicateLines, duplicateParagraphs, type LineLimits, type ParagraphLimits } from "./repetition.js";
import { duplicateNgrams, topNgrams, type NgramLimits } from "./ngrams.js";

/** `none`: only the rules named in the options run. `gopher`: every rule below, with its Gopher default unless set. */
export const PRESETS = ["none", "gopher"] as const;
export type Preset = (typeof PRESETS)[number];

/**
 * The quality rules in the order they are tried (cheap word statistics first, n-gram counting
 * last); a document is dropped for the first rule it fails.
 */
export const RULES: readonly Rule<any>[] = [
  meanWordLength,
  alphaWords,
  symbolRatio,
  stopWords,
  bulletLines,
  ellipsisLines,
  duplicateLines,
  duplicateParagraphs,
  topNgrams,
  duplicateNgrams,
];

/** Resolved options: each rule is `false` (off) or its full set of thresholds. */
export interface FilterOptions extends LengthBounds {
  rules: Preset;
  mean_word_length: false | Range;
  alpha_words: false | { min: number };
  symbol_ratio: false | { max: number };
  stop_words: false | StopWordOptions;
  bullet_lines: false | { max: number };
  ellipsis_lines: false | { max: number };
  duplicate_lines: false | LineLimits;
  duplicate_paragraphs: false | ParagraphLimits;
  top_ngrams: false | NgramLimits;
  duplicate_ngrams: false | NgramLimits;
}

const count = num({ integer: true, min: 0 });
const given = obj({
  rules: field(str({ oneOf: PRESETS }), { default: "none" }),
  min_words: field(count),
  max_words: field(count),
  min_chars: field(count, { default: 1 }),
  max_chars: field(count),
  ...Object.fromEntries(RULES.map((r) => [r.name, field(ruleValue(r))])),
});

/**
 * Checks the options and resolves them: a rule left out is off, or on with its defaults under
 * `rules: gopher`; `true` means on with defaults; a mapping means on, its keys over the defaults.
 * Under `rules: gopher`, min_words and max_words default to Gopher's 50 and 100,000.
 */
export const filterOptions: Schema<FilterOptions> = {
  describe: "a mapping",
  check(value: unknown, path: Path, issues: Issue[]): FilterOptions {
    const before = issues.length;
    const raw = given.check(value, path, issues) as Record<string, unknown>;
    const preset = raw.rules === "gopher";
    const out: Record<string, unknown> = { rules: raw.rules ?? "none" };
    out.min_words = raw.min_words ?? (preset ? GOPHER_WORDS.min : 0);
    if (raw.max_words !== undefined || preset) out.max_words = raw.max_words ?? GOPHER_WORDS.max;
    out.min_chars = raw.min_chars ?? 1;
    if (raw.max_chars !== undefined) out.max_chars = raw.max_chars;
    for (const rule of RULES) {
      const v = raw[rule.name] as boolean | object | undefined;
      if (v === false || (v === undefined && !preset)) {
        out[rule.name] = false;
        continue;
      }
      const merged = { ...structuredClone(rule.defaults), ...(typeof v === "object" ? v : {}) };
      rule.validate?.(merged, [...path, rule.name], issues);
      out[rule.name] = merged;
    }
    const o = out as unknown as FilterOptions;
    if (issues.length === before) {
      if (o.max_words !== undefined && o.max_words < o.min_words)
        issues.push({ path: [...path, "max_words"], message: `max_words (${o.max_words}) is below min_words (${o.min_words})` });
      if (o.max_chars !== undefined && o.max_chars < o.min_chars)
        issues.push({ path: [...path, "max_chars"], message: `max_chars (${o.max_chars}) is below min_chars (${o.min_chars})` });
    }
    return o;
  },
};
