// Stop-word rule: natural-language prose uses a few very common function words.
import { field, list, num, obj, str, type Schema } from "../pipeline/schema.js";
import type { Rule } from "./rule.js";

export interface StopWordOptions {
  min: number;
  words: string[];
}

/** Leading and trailing punctuation and symbols, so "the," and "(with" count. */
const EDGE_PUNCT = /^[\p{P}\p{S}]+|[\p{P}\p{S}]+$/gu;

/**
 * stop_words: the document must contain at least `min` different words of the list (compared
 * case-insensitively, punctuation at the word's edges ignored). Gopher's list and minimum (from memory;
 * see gopher.ts): at least two of "the, be, to, of, and, that, have, with". We read "two of the
 * following words" as two different words; a document repeating "the" alone does not pass.
 * The list is English; set `words` for a corpus in another language.
 */
export const stopWords: Rule<StopWordOptions> = {
  name: "stop_words",
  defaults: { min: 2, words: ["the", "be", "to", "of", "and", "that", "have", "with"] },
  overrides: obj({
    min: field(num({ integer: true, min: 0 })),
    words: field(list(str({ nonEmpty: true }), { nonEmpty: true })),
  }) as Schema<Partial<StopWordOptions>>,
  check(doc, o) {
    const wanted = new Set(o.words.map((w) => w.toLowerCase()));
    const found = new Set<string>();
    for (const w of doc.words) {
      const bare = w.replace(EDGE_PUNCT, "").toLowerCase();
      if (wanted.has(bare)) {
        found.add(bare);
        if (found.size >= o.min) return undefined;
      }
    }
    return found.size >= o.min ? undefined : { found: found.size, min: o.min };
  },
};
