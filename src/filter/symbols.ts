// Symbol rule: hash signs and ellipses per word.
import { field, num, obj, type Schema } from "../pipeline/schema.js";
import { round, type Rule } from "./rule.js";

/** Ellipses: the character "…" or a run of three or more full stops, each run counted once. */
const ELLIPSIS = /\u2026|\.{3,}/g;

/** Hash signs ("#", and the fullwidth "＃" in case the text was not NFKC-normalized). */
const HASH = /[#\uFF03]/g;

/**
 * symbol_ratio: the number of hash signs per word, and separately the number of ellipses per
 * word, must each be at most `max`. Gopher drops documents whose symbol-to-word ratio exceeds
 * 0.1 for either the hash symbol or the ellipsis (from memory; see gopher.ts): hashtag lists and truncated
 * teaser text. A document without words counts as one word here, so a lone "#" still fails.
 */
export const symbolRatio: Rule<{ max: number }> = {
  name: "symbol_ratio",
  defaults: { max: 0.1 },
  overrides: obj({ max: field(num({ min: 0 })) }) as Schema<Partial<{ max: number }>>,
  check(doc, o) {
    const words = Math.max(1, doc.words.length);
    const hash = (doc.text.match(HASH)?.length ?? 0) / words;
    if (hash > o.max) return { symbol: "#", ratio: round(hash), max: o.max };
    const ellipsis = (doc.text.match(ELLIPSIS)?.length ?? 0) / words;
    if (ellipsis > o.max) return { symbol: "...", ratio: round(ellipsis), max: o.max };
    return undefined;
  },
};
