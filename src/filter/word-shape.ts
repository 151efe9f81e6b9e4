// Word-shape rules: mean word length, and the share of words that contain a letter.
import { field, num, obj, type Schema } from "../pipeline/schema.js";
import { round, Skipped, type Rule } from "./rule.js";

const LETTER = /\p{L}/u;

export interface Range {
  min: number;
  max: number;
}

/**
 * mean_word_length: the mean length of the words (in code points) must lie in [min, max].
 * Gopher (from memory; see gopher.ts) keeps documents whose mean word length is 3 to 10 characters: shorter
 * means lists of symbols or abbreviations, longer means URLs, hashes or glued-together text.
 * Words are whitespace-separated with punctuation attached; the paper does not say how it split
 * words. A document without words has mean 0 and fails.
 */
export const meanWordLength: Rule<Range> = {
  name: "mean_word_length",
  defaults: { min: 3, max: 10 },
  overrides: obj({ min: field(num({ min: 0 })), max: field(num({ min: 0 })) }) as Schema<Partial<Range>>,
  validate(o, path, issues) {
    if (o.max < o.min) issues.push({ path: [...path, "max"], message: `max (${o.max}) is below min (${o.min})` });
  },
  assumes: "words separated by spaces; skipped (counted) for text written without spaces",
  check(doc, o) {
    // Chinese or Japanese words are one or two characters, and by spaces a whole sentence is one word:
    // neither says anything about quality against a range tuned on English.
    if (doc.spaceless) return new Skipped("no-spaces");
    const lengths = doc.wordChars;
    let chars = 0;
    for (let i = 0; i < lengths.length; i++) chars += lengths[i];
    const mean = lengths.length === 0 ? 0 : chars / lengths.length;
    return mean < o.min || mean > o.max ? { mean: round(mean), min: o.min, max: o.max } : undefined;
  },
};

/**
 * alpha_words: at least `min` of the words must contain an alphabetic character (any letter of
 * any script, \p{L}). Gopher requires 80 % (from memory; see gopher.ts): tables of numbers, symbol runs and
 * markup fail it. A document without words has share 0 and fails.
 */
export const alphaWords: Rule<{ min: number }> = {
  name: "alpha_words",
  defaults: { min: 0.8 },
  overrides: obj({ min: field(num({ min: 0, max: 1 })) }) as Schema<Partial<{ min: number }>>,
  check(doc, o) {
    const words = doc.words;
    let alpha = 0;
    for (const w of words) if (LETTER.test(w)) alpha++;
    const share = words.length === 0 ? 0 : alpha / words.length;
    return share < o.min ? { share: round(share), min: o.min } : undefined;
  },
};
