// Runs the filter on one text: length bounds first, then each switched-on quality rule in order.
import { lengthFailure, type LengthBounds } from "./length.js";
import { RULES, type FilterOptions } from "./options.js";
import { Skipped, type Detail } from "./rule.js";
import { DocView } from "./units.js";

export interface Failure {
  /** The option key of the failed rule; the ledger reason is `filter:<rule>`. */
  rule: string;
  detail: Detail;
}

/**
 * The first rule the text fails, or undefined if it passes. Rules missing from `o` count as off,
 * so plain length bounds ({ min_words, max_words, min_chars, max_chars }) work on their own.
 * `language` is the record's language label (meta.language) when known; `skipped` hears of every
 * rule that could not judge the text, as `filter:skipped:<rule>:<why>`.
 */
export function evaluate(text: string, o: LengthBounds & Partial<FilterOptions>, language?: string, skipped?: (name: string) => void): Failure | undefined {
  const doc = new DocView(text, language);
  const short = lengthFailure(text, o, language, () => doc.spaceless);
  if (short) return short;
  for (const rule of RULES) {
    const limits = (o as unknown as Record<string, unknown>)[rule.name];
    if (!limits) continue;
    const detail = rule.check(doc, limits);
    if (detail instanceof Skipped) skipped?.(`filter:skipped:${rule.name}:${detail.why}`);
    else if (detail) return { rule: rule.name, detail };
  }
  return undefined;
}
